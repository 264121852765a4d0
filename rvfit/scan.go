package rvfit

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	"spotsift/internal/worker"
)

// Alias frequencies of ground-based sampling in c/d (docs/methods.md §6
// [common practice]; sidereal-to-solar ratio 1.0027379 [memory]).
const (
	SiderealDayFreq = 1.0027379
	SolarDayFreq    = 1.0
	YearFreq        = 1 / JulianYear
	LunarMonthFreq  = 1 / 29.530589
)

// ScanOptions controls Scan. The zero value (or nil) gives the defaults.
type ScanOptions struct {
	// Grid sets up the frequency grid; nil means NewGrid's defaults.
	Grid *GridOptions
	// Fast selects the NUFFT periodogram engine (see GLSOptions.Fast).
	Fast bool
	// Workers is the number of goroutines; zero means GOMAXPROCS. Results
	// do not depend on it.
	Workers int
	// NPeaks is the number of peaks listed per periodogram; zero means 5.
	NPeaks int
	// NWindowPeaks is the number of strongest window peaks used as alias
	// sources besides the day, sidereal day, year and lunar month; zero
	// means 3.
	NWindowPeaks int
	// Bootstrap is the number of bootstrap resamplings for an empirical
	// FAP of the RV peaks; zero means none.
	Bootstrap int
	// Seed seeds the bootstrap (one PCG stream per resampling).
	Seed uint64
	// MaxSignals caps iterative prewhitening of the RV; zero means 4, a
	// negative value disables it.
	MaxSignals int
	// PrewhitenFAP is the Baluev FAP below which the highest RV peak is
	// fitted and removed before the next periodogram; zero means 1e-3.
	PrewhitenFAP float64
	// SkipIndicators skips the periodograms of the indicator columns.
	SkipIndicators bool
}

// Peak is one periodogram peak.
type Peak struct {
	// Freq is the peak frequency in c/d, refined between grid points by a
	// golden-section search on the exact power; Period = 1/Freq in days.
	Freq   float64 `json:"freq"`
	Period float64 `json:"period"`
	// Power is the GLS power at Freq.
	Power float64 `json:"power"`
	// FAP is the Baluev 2008 false-alarm probability for the whole grid.
	FAP float64 `json:"fap"`
	// BootstrapFAP is the empirical FAP, (1 + #{max power ≥ Power})/(1 + B);
	// nil when no bootstrap was asked for.
	BootstrapFAP *float64 `json:"bootstrap_fap,omitempty"`
	// Amplitude is the semi-amplitude of the fitted sinusoid (data units).
	Amplitude float64 `json:"amplitude"`
	// AliasOf is the index (in the same list) of a stronger peak of which
	// this one is an alias, −1 if none; AliasVia names the sampling
	// frequency that links them.
	AliasOf  int    `json:"alias_of"`
	AliasVia string `json:"alias_via,omitempty"`
	// Aliases lists where this peak's own aliases fall on the grid.
	Aliases []Alias `json:"aliases"`
}

// Alias is an expected alias f' = |f ± f_s| of a peak at f.
type Alias struct {
	// Via names the sampling frequency f_s ("1 sidereal day", "1 day",
	// "1 year", "1 lunar month", "window peak 2.34 d").
	Via string `json:"via"`
	// Freq and Period locate the alias (c/d, d); Power is the periodogram's
	// power at the nearest grid frequency.
	Freq   float64 `json:"freq"`
	Period float64 `json:"period"`
	Power  float64 `json:"power"`
}

// WindowPeak is a peak of the spectral window.
type WindowPeak struct {
	Freq   float64 `json:"freq"`
	Period float64 `json:"period"`
	Power  float64 `json:"power"`
}

// SeriesPeriodogram is the periodogram of one column with its peaks.
type SeriesPeriodogram struct {
	// Name is "rv" or the indicator's name; for prewhitening steps
	// "rv-residual-N".
	Name string `json:"name"`
	*Periodogram
	Peaks []Peak `json:"peaks"`
	// Removed is the sinusoid fitted and removed before this periodogram
	// (prewhitening steps only).
	Removed *SineFit `json:"removed,omitempty"`
}

// ScanResult is the outcome of Scan. All periodograms share Grid.
type ScanResult struct {
	Grid Grid `json:"grid"`
	// RV is the periodogram of the velocities.
	RV SeriesPeriodogram `json:"rv"`
	// Window is the spectral window (unit weights) and WindowPeaks its
	// strongest peaks above the resolution 1/T.
	Window      []float64    `json:"window"`
	WindowPeaks []WindowPeak `json:"window_peaks"`
	// Prewhitening holds the periodograms of the RV residuals after each
	// removed signal, in order.
	Prewhitening []SeriesPeriodogram `json:"prewhitening"`
	// Indicators holds one periodogram per indicator column with enough
	// valid epochs, in table order.
	Indicators []SeriesPeriodogram `json:"indicators"`
	// Skipped names the indicator columns left out, with the reason.
	Skipped []string `json:"skipped,omitempty"`
}

// Scan computes, on one frequency grid, the GLS periodogram of the RVs
// (with per-instrument offsets), its peaks with Baluev FAPs (and bootstrap
// FAPs on request) and labelled aliases, the spectral window and its
// peaks, iterative prewhitening of the RVs, and the periodogram of every
// indicator column. It is the library side of "spotsift scan".
//
// Errors: the Series' validation errors (see GLS), ErrTooFewEpochs,
// ErrGridOutOfReach and ErrBadGrid from the grid, ErrBadOption for bad
// option values.
func Scan(s *Series, opts *ScanOptions) (*ScanResult, error) {
	var o ScanOptions
	if opts != nil {
		o = *opts
	}
	if s == nil || s.Len() == 0 {
		return nil, ErrNoObservations
	}
	if o.NPeaks == 0 {
		o.NPeaks = 5
	}
	if o.NWindowPeaks == 0 {
		o.NWindowPeaks = 3
	}
	if o.MaxSignals == 0 {
		o.MaxSignals = 4
	}
	if o.PrewhitenFAP == 0 {
		o.PrewhitenFAP = 1e-3
	}
	if o.NPeaks < 0 || o.Bootstrap < 0 || o.NWindowPeaks < 0 || !(o.PrewhitenFAP > 0 && o.PrewhitenFAP < 1) {
		return nil, fmt.Errorf("%w: npeaks %d, bootstrap %d, window peaks %d, prewhitening FAP %g", ErrBadOption, o.NPeaks, o.Bootstrap, o.NWindowPeaks, o.PrewhitenFAP)
	}
	nw := workers(o.Workers)
	g, err := NewGrid(s.Time, o.Grid)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", s.Name, err)
	}
	d, err := newGLSData(s.Time, s.RV, s.RVErr, s.Instrument)
	if err != nil {
		return nil, fmt.Errorf("%s: rv: %w", s.Name, err)
	}
	res := &ScanResult{Grid: g}
	res.Window, err = Window(s.Time, nil, g, &GLSOptions{Fast: o.Fast, Workers: nw})
	if err != nil {
		return nil, err
	}
	T := s.Baseline()
	res.WindowPeaks = windowPeaks(res.Window, g, T, o.NWindowPeaks)
	sources := aliasSources(res.WindowPeaks)

	rvp := d.periodogram(g, o.Fast, nw)
	res.RV = SeriesPeriodogram{Name: "rv", Periodogram: rvp, Peaks: d.peaks(rvp, T, o.NPeaks, sources)}
	if o.Bootstrap > 0 {
		maxima := d.bootstrapMaxima(g, o.Bootstrap, o.Seed, nw)
		for i := range res.RV.Peaks {
			v := bootstrapFAP(maxima, res.RV.Peaks[i].Power)
			res.RV.Peaks[i].BootstrapFAP = &v
		}
	}

	// Iterative prewhitening: fit the top peak's sinusoid, remove it,
	// recompute.
	if o.MaxSignals > 0 && len(res.RV.Peaks) > 0 {
		cur := res.RV
		resid := &glsData{tref: d.tref, t: d.t, y: append([]float64(nil), d.y...), w: d.w, inst: d.inst, nInst: d.nInst, names: d.names}
		for step := 1; step <= o.MaxSignals; step++ {
			if len(cur.Peaks) == 0 || cur.Peaks[0].FAP >= o.PrewhitenFAP || len(resid.t) < resid.nInst+3+2*step {
				break
			}
			fit := resid.fitSine(cur.Peaks[0].Freq)
			fit.RefTime = d.tref
			for i, ti := range resid.t {
				resid.y[i] -= fit.Eval(ti + d.tref)
			}
			pg := resid.periodogram(g, o.Fast, nw)
			cur = SeriesPeriodogram{Name: fmt.Sprintf("rv-residual-%d", step), Periodogram: pg, Peaks: resid.peaks(pg, T, o.NPeaks, sources), Removed: fit}
			res.Prewhitening = append(res.Prewhitening, cur)
		}
	}

	if !o.SkipIndicators {
		for i := range s.Indicators {
			ind := &s.Indicators[i]
			var idx []int
			for k := range ind.Value {
				if ind.Valid(k) && (ind.Err == nil || ind.Err[k] > 0) {
					idx = append(idx, k)
				}
			}
			var tt, yy, ee []float64
			var ins []string
			for _, k := range idx {
				tt = append(tt, s.Time[k])
				yy = append(yy, ind.Value[k])
				e := 1.0
				if ind.Err != nil {
					e = ind.Err[k]
				}
				ee = append(ee, e)
				if s.Instrument != nil {
					ins = append(ins, s.Instrument[k])
				}
			}
			di, err := newGLSData(tt, yy, ee, ins)
			if err != nil {
				res.Skipped = append(res.Skipped, fmt.Sprintf("%s: %v", ind.Name, err))
				continue
			}
			pg := di.periodogram(g, o.Fast, nw)
			res.Indicators = append(res.Indicators, SeriesPeriodogram{Name: ind.Name, Periodogram: pg, Peaks: di.peaks(pg, T, o.NPeaks, sources)})
		}
	}
	return res, nil
}

type aliasSource struct {
	name string
	f    float64
}

func aliasSources(wp []WindowPeak) []aliasSource {
	src := []aliasSource{
		{"1 sidereal day", SiderealDayFreq},
		{"1 day", SolarDayFreq},
		{"1 year", YearFreq},
		{"1 lunar month", LunarMonthFreq},
	}
	for _, p := range wp {
		dup := false
		for _, s := range src {
			if math.Abs(s.f-p.Freq) < 0.002*s.f+1e-4 {
				dup = true
			}
		}
		if !dup {
			src = append(src, aliasSource{fmt.Sprintf("window peak %.4g d", p.Period), p.Freq})
		}
	}
	return src
}

// LocalMaxima returns the indices of local maxima of p on the grid g, strongest first,
// keeping only maxima at least sep frequency apart from a stronger one, at
// most n of them.
func LocalMaxima(p []float64, g Grid, sep float64, n int) []int {
	var cand []int
	for k := range p {
		left := k == 0 || p[k] > p[k-1]
		right := k == len(p)-1 || p[k] >= p[k+1]
		if left && right && p[k] > 0 {
			cand = append(cand, k)
		}
	}
	sort.SliceStable(cand, func(a, b int) bool { return p[cand[a]] > p[cand[b]] })
	var out []int
	for _, k := range cand {
		ok := true
		for _, j := range out {
			if math.Abs(g.Freq(k)-g.Freq(j)) < sep {
				ok = false
				break
			}
		}
		if ok {
			out = append(out, k)
			if len(out) == n {
				break
			}
		}
	}
	return out
}

func windowPeaks(w []float64, g Grid, T float64, n int) []WindowPeak {
	// Exclude the central lobe around f = 0 (within 2/T).
	masked := append([]float64(nil), w...)
	for k := range masked {
		if g.Freq(k) < 2/T {
			masked[k] = 0
		}
	}
	var out []WindowPeak
	for _, k := range LocalMaxima(masked, g, 1/T, n) {
		out = append(out, WindowPeak{Freq: g.Freq(k), Period: 1 / g.Freq(k), Power: w[k]})
	}
	return out
}

// powerAt returns the exact GLS power of d at frequency f.
func (d *glsData) powerAt(f float64) float64 {
	s := newGLSSums(d.nInst, 1)
	d.exactBlock(s, Grid{FMin: f, DF: 1, N: 1}, 0, 1)
	p := make([]float64, 1)
	d.power(s, p)
	return p[0]
}

// refine maximises the exact power over [f − df, f + df] by golden-section
// search.
func (d *glsData) refine(f, df float64) (float64, float64) {
	a, b := math.Max(f-df, 1e-12), f+df
	const r = 0.6180339887498949
	c, e := b-r*(b-a), a+r*(b-a)
	pc, pe := d.powerAt(c), d.powerAt(e)
	for i := 0; i < 40 && b-a > 1e-12*f; i++ {
		if pc > pe {
			b, e, pe = e, c, pc
			c = b - r*(b-a)
			pc = d.powerAt(c)
		} else {
			a, c, pc = c, e, pe
			e = a + r*(b-a)
			pe = d.powerAt(e)
		}
	}
	fb, pb := c, pc
	if pe > pc {
		fb, pb = e, pe
	}
	if p0 := d.powerAt(f); p0 > pb {
		return f, p0
	}
	return fb, pb
}

func (d *glsData) peaks(pg *Periodogram, T float64, n int, sources []aliasSource) []Peak {
	g := pg.Grid
	idx := LocalMaxima(pg.Power, g, 1/T, n)
	out := make([]Peak, 0, len(idx))
	for _, k := range idx {
		f, p := d.refine(g.Freq(k), g.DF)
		fit := d.fitSine(f)
		pk := Peak{Freq: f, Period: 1 / f, Power: p, Amplitude: fit.Amplitude(), AliasOf: -1,
			FAP: BaluevFAP(p, pg.NObs, pg.NOffsets, g.FMax(), pg.TEff)}
		for _, s := range sources {
			for _, fa := range []float64{f + s.f, math.Abs(f - s.f)} {
				if fa < g.FMin || fa > g.FMax() {
					continue
				}
				pk.Aliases = append(pk.Aliases, Alias{Via: s.name, Freq: fa, Period: 1 / fa, Power: pg.Power[g.Index(fa)]})
			}
		}
		// Is this peak an alias of a stronger one? Match within one
		// resolution element 1/T.
		for j := range out {
			for _, s := range sources {
				if math.Abs(f-(out[j].Freq+s.f)) < 1/T || math.Abs(f-math.Abs(out[j].Freq-s.f)) < 1/T {
					pk.AliasOf, pk.AliasVia = j, s.name
					break
				}
			}
			if pk.AliasOf >= 0 {
				break
			}
		}
		out = append(out, pk)
	}
	return out
}

// bootstrapMaxima returns the highest power of each of nb periodograms of
// the data with the (value, weight) pairs resampled with replacement
// within each instrument over the fixed epochs. Replicate b uses PCG(seed, b), so the
// result does not depend on the number of workers.
func (d *glsData) bootstrapMaxima(g Grid, nb int, seed uint64, nw int) []float64 {
	out := make([]float64, nb)
	// Resample within each instrument so offsets stay meaningful.
	byInst := make([][]int, d.nInst)
	for i, j := range d.inst {
		byInst[j] = append(byInst[j], i)
	}
	var wg worker.Group
	jobs := make(chan int)
	for w := 0; w < nw; w++ {
		wg.Go(func() {
			for b := range jobs {
				rng := rand.New(rand.NewPCG(seed, uint64(b)))
				r := &glsData{tref: d.tref, t: d.t, y: make([]float64, len(d.t)), w: make([]float64, len(d.t)), inst: make([]int, len(d.t)), nInst: d.nInst, names: d.names}
				for i := range r.t {
					pool := byInst[d.inst[i]]
					j := pool[rng.IntN(len(pool))]
					r.y[i], r.w[i], r.inst[i] = d.y[j], d.w[j], d.inst[i]
				}
				pg := r.periodogram(g, true, 1)
				m := 0.0
				for _, p := range pg.Power {
					m = math.Max(m, p)
				}
				out[b] = m
			}
		})
	}
	wg.Feed(jobs, nb)
	wg.Rethrow()
	return out
}

func bootstrapFAP(maxima []float64, p float64) float64 {
	n := 0
	for _, m := range maxima {
		if m >= p {
			n++
		}
	}
	return float64(n+1) / float64(len(maxima)+1)
}
