package activity

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"strings"

	"spotsift/rvfit"
)

// ErrPeriodOutOfReach is wrapped by Diagnose when a period to judge lies
// outside what the data can constrain.
var ErrPeriodOutOfReach = errors.New("activity: period outside the data's reach")

// MinEpochs is the fewest epochs Diagnose works with.
const MinEpochs = 12

// Options controls Diagnose. A nil *Options gives the defaults.
type Options struct {
	// Periods are the signals to judge, in days. Nil means the significant
	// peaks of the RV periodogram, found by iterative prewhitening.
	Periods []float64
	// FAPThreshold is the false-alarm probability below which a periodogram
	// peak is a signal, and above which a signal's verdict is inconclusive.
	// Zero means 1e-3 (common practice: 0.1 %).
	FAPThreshold float64
	// MaxSignals caps the number of signals found by prewhitening. Zero
	// means 4.
	MaxSignals int
	// PMin and PMax bound the periods searched, in days. Zero means 1.05 d
	// (just above the 1-day alias region) and the baseline.
	PMin, PMax float64
	// Oversampling of the frequency grid (points per 1/T); zero means 10.
	Oversampling float64
	// Star holds what is known of the star; nil means nothing.
	Star *Star
	// Seed seeds every random draw (permutation tests, simulations).
	Seed uint64
	// Permutations is the number of draws of the Monte Carlo tests; zero
	// means 200.
	Permutations int
	// SkipModels leaves out the Gaussian-process fits (rotation from a GP,
	// the model comparison); they are the slow part.
	SkipModels bool
}

func (o *Options) withDefaults() Options {
	var d Options
	if o != nil {
		d = *o
	}
	if d.FAPThreshold == 0 {
		d.FAPThreshold = 1e-3
	}
	if d.MaxSignals == 0 {
		d.MaxSignals = 4
	}
	if d.PMin == 0 {
		d.PMin = 1.05
	}
	if d.Oversampling == 0 {
		d.Oversampling = 10
	}
	if d.Permutations == 0 {
		d.Permutations = 200
	}
	return d
}

// chromaticColumn is the indicator that holds the chromatic RV slope.
const chromaticColumn = "chromatic_slope"

// data is a series prepared for the tests.
type data struct {
	s     *rvfit.Series
	t     []float64
	rv    []float64
	err   []float64
	inst  []int
	ninst int
	t0    float64
	T     float64
	grid  rvfit.Grid
	opts  Options
}

// Diagnose judges every signal of a star's time series: does it track the
// star's activity, or does it look planetary? It returns the verdict of
// each signal with every piece of evidence behind it.
//
// The signals are opts.Periods, or else the periodogram peaks with a
// false-alarm probability below opts.FAPThreshold, found one after the
// other by iterative prewhitening. For each it runs the tests of METHODS.md
// §12 (see the Evidence names), scores them with the weights of Weights
// and turns the score into a verdict (see Score). Tests that cannot run on
// these data (no indicator columns, too few epochs per season...) are
// listed as skipped and pull the score toward zero.
//
// Errors: too few epochs (ErrTooFewEpochs from rvfit), a period outside the
// data's reach (ErrPeriodOutOfReach), bad options.
func Diagnose(s *rvfit.Series, opts *Options) (*Diagnosis, error) {
	o := opts.withDefaults()
	if err := s.Require(MinEpochs, "the diagnosis"); err != nil {
		return nil, err
	}
	if !(o.FAPThreshold > 0 && o.FAPThreshold < 1) {
		return nil, fmt.Errorf("activity: false-alarm threshold %g must lie in (0, 1)", o.FAPThreshold)
	}
	d := &data{s: s, t: s.Time, rv: s.RV, err: s.RVErr, t0: s.Time[0], T: s.Baseline(), opts: o}
	d.inst, d.ninst = groupIndex(s.Instrument)
	pmax := o.PMax
	if pmax == 0 {
		pmax = d.T
	}
	if !(o.PMin > 0) || !(pmax > o.PMin) {
		return nil, fmt.Errorf("activity: period range [%g, %g] d is empty", o.PMin, pmax)
	}
	var err error
	d.grid, err = rvfit.NewGrid(s.Time, &rvfit.GridOptions{Oversampling: o.Oversampling, PMin: o.PMin, PMax: pmax})
	if err != nil {
		return nil, fmt.Errorf("activity: frequency grid: %w", err)
	}
	for _, p := range o.Periods {
		if !(p > 0) || math.IsInf(p, 0) {
			return nil, fmt.Errorf("%w: %g d is not a period", ErrPeriodOutOfReach, p)
		}
		if p > 2*d.T {
			return nil, fmt.Errorf("%w: %g d is more than twice the baseline of %.4g d", ErrPeriodOutOfReach, p, d.T)
		}
		if p < 0.2 {
			return nil, fmt.Errorf("%w: %g d is shorter than 0.2 d, below what nightly data sample", ErrPeriodOutOfReach, p)
		}
	}
	rng := rand.New(rand.NewPCG(o.Seed, 0x5eed))

	diag := &Diagnosis{NEpochs: s.Len(), Baseline: Num(d.T), Caution: Caution, details: &details{grid: d.grid}}
	if o.Star != nil {
		diag.Star = o.Star.Name
	}
	diag.Rotation = d.estimateRotation(rng)

	sigs, err := d.findSignals()
	if err != nil {
		return nil, err
	}
	if len(sigs) == 0 {
		diag.Notes = append(diag.Notes, fmt.Sprintf("no periodogram peak has a false-alarm probability below %g: no signal to judge", o.FAPThreshold))
	}
	freqs := make([]float64, len(sigs))
	for k := range sigs {
		freqs[k] = sigs[k].freq
	}
	var all *sineFit
	if len(freqs) > 0 {
		all, err = fitSines(d.t, d.rv, d.err, d.inst, d.ninst, freqs, d.t0)
		if err != nil {
			return nil, fmt.Errorf("activity: joint fit of %d sinusoids: %w", len(freqs), err)
		}
	}
	for k, sg := range sigs {
		// The signal's own data: the RVs less the offsets and every other
		// signal's sinusoid.
		own := make([]float64, len(d.t))
		comp := make([]float64, len(d.t))
		for i, ti := range d.t {
			own[i] = d.rv[i] - all.Offset[d.inst[i]]
			for j := range freqs {
				if j != k {
					own[i] -= all.component(j, ti)
				}
			}
			comp[i] = all.component(k, ti)
		}
		amp, ampErr := all.amplitude(k)
		sig := Signal{Period: Num(1 / sg.freq), Freq: Num(sg.freq), Source: sg.source, Power: Num(sg.power), FAP: Num(sg.fap),
			Amplitude: Num(amp), AmplitudeErr: Num(ampErr)}
		tr := &trial{d: d, f: sg.freq, own: own, comp: comp, amp: amp, ampErr: ampErr, rot: diag.Rotation, rng: rand.New(rand.NewPCG(o.Seed, uint64(k+1)))}
		tr.run(&sig)
		Score(&sig, o.FAPThreshold)
		diag.Signals = append(diag.Signals, sig)
		tr.det.freq, tr.det.own, tr.det.comp = sg.freq, own, comp
		diag.details.signals = append(diag.details.signals, tr.det)
	}
	return diag, nil
}

// found is one signal to judge.
type found struct {
	freq, power, fap float64
	source           string
}

// findSignals returns the given periods, or the significant peaks by
// iterative prewhitening.
func (d *data) findSignals() ([]found, error) {
	o := d.opts
	if len(o.Periods) > 0 {
		var out []found
		for _, p := range o.Periods {
			f := 1 / p
			fit, err := fitSines(d.t, d.rv, d.err, d.inst, d.ninst, []float64{f}, d.t0)
			if err != nil {
				return nil, fmt.Errorf("activity: fit at %g d: %w", p, err)
			}
			pow := powerOf(fit.ChiSq, d.chi2Offsets(d.rv))
			out = append(out, found{freq: f, power: pow, fap: rvfit.FAPSingle(pow, len(d.t), d.ninst), source: "given"})
		}
		return out, nil
	}
	var out []found
	resid := append([]float64(nil), d.rv...)
	var freqs []float64
	for len(out) < o.MaxSignals {
		pg, err := rvfit.GLS(d.t, resid, d.err, d.grid, &rvfit.GLSOptions{Instrument: d.s.Instrument})
		if err != nil {
			return nil, fmt.Errorf("activity: RV periodogram: %w", err)
		}
		k := argmax(pg.Power)
		fap := rvfit.BaluevFAP(pg.Power[k], pg.NObs, pg.NOffsets, d.grid.FMax(), pg.TEff)
		if fap > o.FAPThreshold {
			break
		}
		f := refinePeak(pg, k)
		freqs = append(freqs, f)
		out = append(out, found{freq: f, power: pg.Power[k], fap: fap, source: "periodogram"})
		fit, err := fitSines(d.t, d.rv, d.err, d.inst, d.ninst, freqs, d.t0)
		if err != nil {
			break
		}
		for i, ti := range d.t {
			resid[i] = d.rv[i] - fit.model(i, ti)
		}
	}
	return out, nil
}

// chi2Offsets returns the χ² of y about per-instrument weighted means.
func (d *data) chi2Offsets(y []float64) float64 {
	sw := make([]float64, d.ninst)
	swy := make([]float64, d.ninst)
	for i := range y {
		w := 1 / (d.err[i] * d.err[i])
		sw[d.inst[i]] += w
		swy[d.inst[i]] += w * y[i]
	}
	c := 0.0
	for i := range y {
		r := (y[i] - swy[d.inst[i]]/sw[d.inst[i]]) / d.err[i]
		c += r * r
	}
	return c
}

// powerOf is the GLS power of a fit: the fraction of χ² it removes.
func powerOf(chi2, chi20 float64) float64 {
	if !(chi20 > 0) {
		return 0
	}
	return math.Max(0, 1-chi2/chi20)
}

func argmax(v []float64) int {
	k := 0
	for i, x := range v {
		if x > v[k] {
			k = i
		}
	}
	return k
}

// refinePeak returns the frequency of a periodogram peak refined by a
// parabola through the peak and its neighbours.
func refinePeak(pg *rvfit.Periodogram, k int) float64 {
	f := pg.Grid.Freq(k)
	if k == 0 || k == len(pg.Power)-1 {
		return f
	}
	a, b, c := pg.Power[k-1], pg.Power[k], pg.Power[k+1]
	den := a - 2*b + c
	if den >= 0 {
		return f
	}
	return f + 0.5*(a-c)/den*pg.Grid.DF
}

// harmonicsOf lists the rotation period's harmonics and their aliases:
// frequencies n/P (n = 1 … 4), and each shifted by ±1 sidereal day and
// ±1 year (METHODS.md §6, common practice). When the period was estimated
// from the data rather than known (estimated), twice the period is added:
// a star with spots on opposite hemispheres shows its strongest indicator
// signal at P_rot/2, so the estimate may itself be a harmonic.
func harmonicsOf(prot float64, estimated bool) []harmonic {
	const sidereal = 1.0027379 // c/d, METHODS.md §0 [memory]
	const year = 1 / 365.25    // c/d
	var out []harmonic
	ns := []float64{1, 2, 3, 4}
	if estimated {
		ns = append(ns, 0.5)
	}
	for _, n := range ns {
		name := "the rotation period"
		switch {
		case n == 0.5:
			name = "2 P_rot (the estimate may be a harmonic)"
		case n > 1:
			name = fmt.Sprintf("P_rot/%d", int(n))
		}
		f := n / prot
		out = append(out, harmonic{name, f, n, false})
		for _, a := range []struct {
			label string
			df    float64
		}{{"1-day alias", sidereal}, {"1-year alias", year}} {
			for _, sgn := range []float64{-1, 1} {
				if g := math.Abs(f + sgn*a.df); g > 0 {
					out = append(out, harmonic{fmt.Sprintf("%s of %s", a.label, name), g, n, true})
				}
			}
		}
	}
	return out
}

type harmonic struct {
	label string
	freq  float64
	n     float64
	alias bool
}

// strong reports whether h is P_rot or P_rot/2 itself (not an alias).
func (h harmonic) strong() bool { return !h.alias && (h.n == 1 || h.n == 2) }

// trial holds one signal under test.
type trial struct {
	d      *data
	f      float64
	own    []float64 // the signal's own data (offsets and other signals removed)
	comp   []float64 // the fitted sinusoid at each epoch
	amp    float64
	ampErr float64
	rot    Rotation
	rng    *rand.Rand
	// strongRotation reports whether the period sits at P_rot or P_rot/2.
	strongRotation bool
	// det collects what the report draws.
	det  signalDetails
	ev   []Evidence
	skip []Skipped
}

func (tr *trial) add(e Evidence) { tr.ev = append(tr.ev, e) }

func (tr *trial) skipped(name, why string) { tr.skip = append(tr.skip, Skipped{name, why}) }

// run performs every test on the signal and stores the evidence in sig.
func (tr *trial) run(sig *Signal) {
	tr.significance(sig)
	tr.rotationMatch()
	tr.indicatorTests()
	tr.seasonCoherence()
	tr.stackedGrowth()
	tr.chromaticity()
	if tr.d.opts.SkipModels {
		tr.skipped("model_comparison", "Gaussian-process fits were switched off")
	} else {
		tr.modelComparison()
	}
	sig.Evidence = tr.ev
	sig.Skipped = tr.skip
}

// significance is test 1: the RV signal's false-alarm probability. It
// gates the verdict and adds no weight.
func (tr *trial) significance(sig *Signal) {
	thr := tr.d.opts.FAPThreshold
	e := Evidence{Name: "significance", Value: sig.FAP, Threshold: Num(thr), Points: TowardNeither}
	how := "Baluev (2008) false-alarm probability of the periodogram peak"
	if sig.Source == "given" {
		how = "false-alarm probability at the given period"
	}
	if float64(sig.FAP) <= thr {
		e.Reason = fmt.Sprintf("%s is %.2g, below %g: the signal is significant", how, float64(sig.FAP), thr)
	} else {
		e.Reason = fmt.Sprintf("%s is %.2g, above %g: the signal is not significant", how, float64(sig.FAP), thr)
	}
	tr.add(e)
}

// rotationMatch is test 2: is the period near the rotation period, its
// harmonics or their aliases, within the frequency resolution and the
// rotation period's uncertainty?
func (tr *trial) rotationMatch() {
	prot, perr := float64(tr.rot.Period), float64(tr.rot.Err)
	if !(prot > 0) {
		tr.skipped("rotation_match", "no rotation period could be estimated")
		return
	}
	res := 1 / tr.d.T
	best, bestD := harmonic{}, math.Inf(1)
	for _, h := range harmonicsOf(prot, tr.rot.Source != "star file") {
		// Uncertainty of the harmonic's frequency n/P from that of P.
		df := h.n * perr / (prot * prot)
		tol := math.Hypot(res, df)
		if dist := math.Abs(tr.f-h.freq) / tol; dist < bestD {
			best, bestD = h, dist
		}
	}
	e := Evidence{Name: "rotation_match", Value: Num(bestD), Threshold: 1}
	switch {
	case bestD <= 1 && best.strong():
		e.Points, e.Weight = TowardActivity, Weights.RotationMatch
		e.Reason = fmt.Sprintf("the period %.4g d sits at %s (%.4g d; P_rot = %.4g ± %.2g d), %.2f tolerance widths away", 1/tr.f, best.label, 1/best.freq, prot, perr, bestD)
	case bestD <= 1:
		// A higher harmonic or an alias is a weaker match: such frequencies
		// cover much of the frequency axis between them.
		e.Points, e.Weight = TowardActivity, Weights.RotationMatchWeak
		e.Reason = fmt.Sprintf("the period %.4g d sits at the %s (%.4g d; P_rot = %.4g ± %.2g d), %.2f tolerance widths away: a weaker match than P_rot or P_rot/2", 1/tr.f, best.label, 1/best.freq, prot, perr, bestD)
	default:
		e.Points, e.Weight = TowardPlanet, -Weights.RotationMismatch
		e.Reason = fmt.Sprintf("the period %.4g d is %.1f tolerance widths from the nearest rotation harmonic or alias (%s, %.4g d)", 1/tr.f, bestD, best.label, 1/best.freq)
	}
	tr.strongRotation = bestD <= 1 && best.strong()
	tr.add(e)
}

// indicatorTests are tests 3 and 4: power at the signal's frequency in each
// indicator, correlation of each indicator with the fitted signal, and the
// lagged correlation with the signal's own data.
func (tr *trial) indicatorTests() {
	d := tr.d
	type res struct {
		name          string
		fap           float64
		amp, snr      float64
		corr          Correlation
		lag           LaggedCorrelation
		raw           Correlation
		ok            bool
		why           string
		nvalid, nlagP int
	}
	var rs []res
	for _, ind := range d.s.Indicators {
		if ind.Name == chromaticColumn {
			continue
		}
		r := res{name: ind.Name}
		sigma := indicatorErrors(&ind)
		n := ind.Count()
		r.nvalid = n
		if n < MinEpochs {
			r.why = fmt.Sprintf("only %d epochs have a value (need %d)", n, MinEpochs)
			rs = append(rs, r)
			continue
		}
		fit, err := fitSines(d.t, ind.Value, sigma, d.inst, d.ninst, []float64{tr.f}, d.t0)
		if err != nil {
			r.why = "the sinusoid fit is singular on its epochs"
			rs = append(rs, r)
			continue
		}
		beta := fitBeta(d.t, ind.Value, sigma, fit, 1/tr.f)
		r.fap = waldFAP(fit, beta)
		a, ae := fit.amplitude(0)
		r.amp, r.snr = a, a/(ae*beta)
		vals := make([]float64, len(ind.Value))
		for i := range vals {
			vals[i] = math.NaN()
			if ind.Valid(i) {
				vals[i] = ind.Value[i] - fit.Offset[d.inst[i]]
			}
		}
		r.corr = Pearson(tr.comp, vals)
		r.raw = Pearson(tr.own, vals)
		period := 1 / tr.f
		bin := math.Max(period/20, 0.5)
		r.lag = DiscreteCorrelation(d.t, tr.own, vals, period/2, bin, max(10, n/10), d.opts.Permutations, tr.rng)
		r.ok = true
		rs = append(rs, r)
	}
	if len(rs) == 0 {
		tr.skipped("indicator_power", "the table has no indicator columns")
		tr.skipped("indicator_correlation", "the table has no indicator columns")
		tr.skipped("lagged_correlation", "the table has no indicator columns")
		return
	}
	var faps, cps []float64
	for _, r := range rs {
		if r.ok {
			faps = append(faps, r.fap)
			cps = append(cps, r.corr.P)
		} else {
			tr.skipped("indicator_power:"+r.name, r.why)
		}
	}
	if len(faps) == 0 {
		return
	}
	// Holm's correction over the indicators, per family of tests. The
	// level is 0.001: indicators carry correlated activity noise at every
	// period, and the calibration showed 1% letting that noise through
	// (see Weights).
	hf, hc := Holm(faps), Holm(cps)
	const alpha = IndicatorAlpha
	group := func(name string, adj []float64, w Weight, item func(k int, r res, p float64, sig bool) Evidence) {
		nsig := 0
		for _, p := range adj {
			if p < alpha {
				nsig++
			}
		}
		k := 0
		for _, r := range rs {
			if !r.ok {
				continue
			}
			p := adj[k]
			e := item(k, r, p, p < alpha)
			e.Name = name + ":" + r.name
			e.Value, e.Threshold = Num(p), alpha
			switch {
			case nsig > 0 && p < alpha:
				e.Points, e.Weight = TowardActivity, w.Activity/float64(nsig)
			case nsig > 0:
				e.Points = TowardNeither
			default:
				e.Points, e.Weight = TowardPlanet, -w.Planet/float64(len(adj))
			}
			tr.add(e)
			k++
		}
	}
	group("indicator_power", hf, Weights.IndicatorPower, func(k int, r res, p float64, sig bool) Evidence {
		if sig {
			return Evidence{Reason: fmt.Sprintf("%s varies at the signal's period (amplitude %.3g, %.1fσ; Holm-corrected false-alarm probability %.2g)", r.name, r.amp, r.snr, p)}
		}
		return Evidence{Reason: fmt.Sprintf("%s shows no significant power at the signal's period (Holm-corrected false-alarm probability %.2g)", r.name, p)}
	})
	group("indicator_correlation", hc, Weights.IndicatorCorrelation, func(k int, r res, p float64, sig bool) Evidence {
		return Evidence{Reason: fmt.Sprintf("%s against the fitted signal: r = %.2f (Holm-corrected p = %.2g, %d epochs; against the signal's own RVs r = %.2f)", r.name, r.corr.R, p, r.corr.N, r.raw.R)}
	})
	// The lagged correlation uses the signal's own RVs, which keep whatever
	// activity the other sinusoids did not remove, so it is not specific to
	// the signal: it is shown, with no weight.
	for _, r := range rs {
		if !r.ok {
			continue
		}
		tr.add(Evidence{Name: "lagged_correlation:" + r.name, Value: Num(r.lag.P), Threshold: 0.01, Points: TowardNeither,
			Reason: fmt.Sprintf("for information: strongest discrete correlation of %s with the signal's RVs is %.2f at a lag of %.3g d (permutation p = %.2g before correction)", r.name, r.lag.DCF, r.lag.Lag, r.lag.P)})
	}

}

// indicatorErrors returns an indicator's errors, or, without an error
// column, its scatter about the mean for every epoch (unweighted fits).
func indicatorErrors(ind *rvfit.Indicator) []float64 {
	n := len(ind.Value)
	out := make([]float64, n)
	if ind.Err != nil {
		copy(out, ind.Err)
		return out
	}
	var vs []float64
	for i := range ind.Value {
		if ind.Valid(i) {
			vs = append(vs, ind.Value[i])
		}
	}
	sd := stddev(vs)
	if !(sd > 0) {
		sd = 1
	}
	for i := range out {
		out[i] = sd
	}
	return out
}

// chi2About is the χ² of y (NaN skipped) about per-group weighted means.
func chi2About(y, sigma []float64, group []int, ng int) float64 {
	sw := make([]float64, ng)
	swy := make([]float64, ng)
	for i := range y {
		if !isFinite(y[i]) {
			continue
		}
		w := 1 / (sigma[i] * sigma[i])
		sw[group[i]] += w
		swy[group[i]] += w * y[i]
	}
	c := 0.0
	for i := range y {
		if !isFinite(y[i]) {
			continue
		}
		r := (y[i] - swy[group[i]]/sw[group[i]]) / sigma[i]
		c += r * r
	}
	return c
}

func stddev(v []float64) float64 {
	if len(v) < 2 {
		return 0
	}
	m := 0.0
	for _, x := range v {
		m += x
	}
	m /= float64(len(v))
	s := 0.0
	for _, x := range v {
		s += (x - m) * (x - m)
	}
	return math.Sqrt(s / float64(len(v)-1))
}

// seasons splits the epochs (sorted by time) into observing seasons at gaps
// longer than 60 days (common practice for ground-based visibility), or,
// with fewer than two seasons of at least minPer epochs, into two halves.
// It returns the season index of every epoch, the number of seasons and
// how they were made.
func seasons(t []float64, minPer int) ([]int, int, string) {
	idx := make([]int, len(t))
	k := 0
	for i := 1; i < len(t); i++ {
		if t[i]-t[i-1] > 60 {
			k++
		}
		idx[i] = k
	}
	counts := make([]int, k+1)
	for _, s := range idx {
		counts[s]++
	}
	good := 0
	for _, c := range counts {
		if c >= minPer {
			good++
		}
	}
	if good >= 2 {
		// Merge seasons too small to fit into their predecessor.
		remap := make([]int, k+1)
		cur := -1
		for s, c := range counts {
			if c >= minPer || cur < 0 {
				cur++
			}
			remap[s] = cur
		}
		// A small first season merged forward keeps index 0.
		for i := range idx {
			idx[i] = remap[idx[i]]
		}
		n := cur + 1
		// A trailing small season merged backwards may leave the last one
		// small; it is still fitted with its neighbour's epochs.
		return idx, n, "observing seasons"
	}
	half := len(t) / 2
	for i := range idx {
		idx[i] = 0
		if i >= half {
			idx[i] = 1
		}
	}
	return idx, 2, "halves"
}

// seasonCoherence is test 5a: the signal's amplitude and phase fitted
// season by season (or in halves), and a χ² test of their constancy.
func (tr *trial) seasonCoherence() {
	d := tr.d
	minPer := max(10, 2*(2+d.ninst)+2)
	if len(d.t) < 2*minPer {
		tr.skipped("season_coherence", fmt.Sprintf("%d epochs are too few to fit the signal in two parts (need %d)", len(d.t), 2*minPer))
		return
	}
	sidx, ns, how := seasons(d.t, minPer)
	resid := make([]float64, len(d.t))
	for i := range resid {
		resid[i] = tr.own[i] - tr.comp[i]
	}
	beta := redNoiseBeta(d.t, resid, d.err, 1/tr.f)
	type part struct {
		v   [2]float64
		inv [2][2]float64
		snr float64
	}
	var parts []part
	for s := 0; s < ns; s++ {
		var ts, ys, es []float64
		var gs []string
		for i := range d.t {
			if sidx[i] == s {
				ts, ys, es = append(ts, d.t[i]), append(ys, tr.own[i]), append(es, d.err[i])
				gs = append(gs, d.s.Instrument[i])
			}
		}
		if len(ts) < minPer {
			continue
		}
		g, ng := groupIndex(gs)
		fit, err := fitSines(ts, ys, es, g, ng, []float64{tr.f}, d.t0)
		if err != nil {
			continue
		}
		c := fit.CovAB[0]
		for a := 0; a < 2; a++ {
			for b := 0; b < 2; b++ {
				c[a][b] *= beta * beta
			}
		}
		fit.CovAB[0] = c
		det := c[0][0]*c[1][1] - c[0][1]*c[1][0]
		if !(det > 0) {
			continue
		}
		a, ae := fit.amplitude(0)
		parts = append(parts, part{v: [2]float64{fit.A[0], fit.B[0]}, inv: [2][2]float64{{c[1][1] / det, -c[0][1] / det}, {-c[1][0] / det, c[0][0] / det}}, snr: a / ae})
		ph := math.Atan2(fit.B[0], fit.A[0])
		phErr := math.NaN()
		if a > 0 {
			// First-order error of atan2(B, A).
			phErr = math.Sqrt(math.Max(0, fit.B[0]*fit.B[0]*c[0][0]+fit.A[0]*fit.A[0]*c[1][1]-2*fit.A[0]*fit.B[0]*c[0][1])) / (a * a)
		}
		tr.det.seasons = append(tr.det.seasons, seasonPoint{tMid: 0.5 * (ts[0] + ts[len(ts)-1]), amp: a, ampErr: ae, phase: ph, phaseErr: phErr, n: len(ts)})
	}
	if len(parts) < 2 {
		tr.skipped("season_coherence", "fewer than two parts of the data could be fitted")
		return
	}
	// Weighted mean of the (A, B) vectors and the χ² about it.
	var sinv [2][2]float64
	var sv [2]float64
	for _, p := range parts {
		for a := 0; a < 2; a++ {
			for b := 0; b < 2; b++ {
				sinv[a][b] += p.inv[a][b]
				sv[a] += p.inv[a][b] * p.v[b]
			}
		}
	}
	det := sinv[0][0]*sinv[1][1] - sinv[0][1]*sinv[1][0]
	mean := [2]float64{(sinv[1][1]*sv[0] - sinv[0][1]*sv[1]) / det, (-sinv[1][0]*sv[0] + sinv[0][0]*sv[1]) / det}
	chi2 := 0.0
	minSNR := math.Inf(1)
	for _, p := range parts {
		r := [2]float64{p.v[0] - mean[0], p.v[1] - mean[1]}
		chi2 += r[0]*(p.inv[0][0]*r[0]+p.inv[0][1]*r[1]) + r[1]*(p.inv[1][0]*r[0]+p.inv[1][1]*r[1])
		minSNR = math.Min(minSNR, p.snr)
	}
	dof := 2 * (len(parts) - 1)
	pval := chi2Survival(chi2, dof)
	const alpha = 0.01
	e := Evidence{Name: "season_coherence", Value: Num(pval), Threshold: alpha}
	switch {
	case pval < alpha:
		e.Points, e.Weight = TowardActivity, Weights.SeasonCoherence.Activity
		e.Reason = fmt.Sprintf("amplitude and phase change between %d %s (χ² = %.1f for %d dof, p = %.2g; errors scaled by a red-noise factor %.2f)", len(parts), how, chi2, dof, pval, beta)
	case minSNR >= 3:
		e.Points, e.Weight = TowardPlanet, -Weights.SeasonCoherence.Planet
		e.Reason = fmt.Sprintf("amplitude and phase agree across %d %s (χ² = %.1f for %d dof, p = %.2g; each part at ≥ %.1fσ)", len(parts), how, chi2, dof, pval, minSNR)
	default:
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("amplitude and phase agree across %d %s (p = %.2g), but the signal is only %.1fσ in the weakest part: a weak test", len(parts), how, pval, minSNR)
	}
	tr.add(e)
}

// stackedGrowth is test 5b: the growth of the signal's power as epochs are
// added in time order (the stacked periodogram of Mortier & Collier Cameron
// 2017, A&A 601, A110, with GLS power), compared with simulations of a
// strictly periodic signal of the fitted amplitude on the same epochs, with
// the data's own residuals as noise.
func (tr *trial) stackedGrowth() {
	d := tr.d
	n := len(d.t)
	n0 := max(MinEpochs, n/5)
	if n-n0 < 10 {
		tr.skipped("stacked_growth", fmt.Sprintf("%d epochs are too few to follow the power's growth", n))
		return
	}
	// The simulations add to the fitted sinusoid the residuals about it,
	// shifted cyclically in time order: they keep the residuals' own
	// correlated (activity) noise, which white noise would not (the
	// "prayer-bead" resampling of transit work; common practice).
	resid := make([]float64, n)
	for i := range resid {
		resid[i] = tr.own[i] - tr.comp[i]
	}
	obs := stackedPower(d.t, tr.own, d.err, tr.f, n0)
	nsim := min(d.opts.Permutations, n-1)
	sims := make([][]float64, nsim)
	y := make([]float64, n)
	for k := range sims {
		shift := 1 + k*(n-1)/nsim
		for i := range y {
			y[i] = tr.comp[i] + resid[(i+shift)%n]
		}
		sims[k] = stackedPower(d.t, y, d.err, tr.f, n0)
	}
	// Distance of a curve from the simulations' median, in units of their
	// spread, averaged over n.
	m := len(obs)
	med, spread := make([]float64, m), make([]float64, m)
	col := make([]float64, nsim)
	for j := 0; j < m; j++ {
		for k := range sims {
			col[k] = sims[k][j]
		}
		sort.Float64s(col)
		med[j] = col[nsim/2]
		spread[j] = math.Max((col[nsim*84/100]-col[nsim*16/100])/2, 1e-6)
	}
	dist := func(c []float64) float64 {
		s := 0.0
		for j := range c {
			z := (c[j] - med[j]) / spread[j]
			s += z * z
		}
		return s / float64(len(c))
	}
	sc := &stackedCurve{n0: n0, obs: obs, med: med, lo: make([]float64, m), hi: make([]float64, m)}
	for j := 0; j < m; j++ {
		for k := range sims {
			col[k] = sims[k][j]
		}
		sort.Float64s(col)
		sc.lo[j], sc.hi[j] = col[nsim*16/100], col[nsim*84/100]
	}
	tr.det.stacked = sc
	dobs := dist(obs)
	exceed := 0
	for _, c := range sims {
		if dist(c) >= dobs {
			exceed++
		}
	}
	pval := float64(exceed+1) / float64(nsim+1)
	const alpha = 0.01
	e := Evidence{Name: "stacked_growth", Value: Num(pval), Threshold: alpha}
	snr := tr.amp / tr.ampErr
	switch {
	case pval < alpha:
		e.Points, e.Weight = TowardActivity, Weights.StackedGrowth.Activity
		e.Reason = fmt.Sprintf("the power grows unlike a strictly periodic signal as epochs are added (Monte Carlo p = %.2g)", pval)
	case snr >= 5:
		e.Points, e.Weight = TowardPlanet, -Weights.StackedGrowth.Planet
		e.Reason = fmt.Sprintf("the power grows as a strictly periodic signal's would as epochs are added (Monte Carlo p = %.2g)", pval)
	default:
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("the power's growth is consistent with a periodic signal (p = %.2g), but at %.1fσ the test is weak", pval, snr)
	}
	tr.add(e)
}

// stackedPower returns the GLS power (one floating mean) at frequency f of
// the first n epochs, for n = n0 … len(t), updating weighted sums as each
// epoch is added (O(N) in all).
func stackedPower(t, y, sigma []float64, f float64, n0 int) []float64 {
	var W, Y, C, S, YY, YC, YS, CC, SS, CS float64
	out := make([]float64, 0, len(t)-n0+1)
	for i := range t {
		w := 1 / (sigma[i] * sigma[i])
		s, c := math.Sincos(2 * math.Pi * f * (t[i] - t[0]))
		W += w
		Y += w * y[i]
		C += w * c
		S += w * s
		YY += w * y[i] * y[i]
		YC += w * y[i] * c
		YS += w * y[i] * s
		CC += w * c * c
		SS += w * s * s
		CS += w * c * s
		if i+1 < n0 {
			continue
		}
		// Zechmeister & Kürster (2009) sums, normalised by W.
		y0, c0, s0 := Y/W, C/W, S/W
		yy := YY/W - y0*y0
		yc := YC/W - y0*c0
		ys := YS/W - y0*s0
		cc := CC/W - c0*c0
		ss := SS/W - s0*s0
		cs := CS/W - c0*s0
		den := cc*ss - cs*cs
		p := 0.0
		if den > 0 && yy > 0 {
			p = (ss*yc*yc + cc*ys*ys - 2*cs*yc*ys) / (yy * den)
		}
		out = append(out, p)
	}
	return out
}

// redNoiseBeta returns the factor by which correlated noise inflates the
// error of a mean over time scales near period: residuals are averaged in
// bins of width period/4, period/2 and period, and the scatter of the bin
// means is compared with the white-noise expectation (the β factor of
// Pont, Zucker & Queloz 2006, MNRAS 373, 231; from memory). It is at least 1.
func redNoiseBeta(t, resid, sigma []float64, period float64) float64 {
	sd := stddev(resid)
	if !(sd > 0) || len(t) < 8 {
		return 1
	}
	var betas []float64
	for _, w := range []float64{period / 4, period / 2, period} {
		var means []float64
		var counts []int
		for i := 0; i < len(t); {
			j := i
			s := 0.0
			for j < len(t) && t[j]-t[i] < w {
				s += resid[j]
				j++
			}
			means = append(means, s/float64(j-i))
			counts = append(counts, j-i)
			i = j
		}
		m := len(means)
		if m < 4 {
			continue
		}
		nbar := float64(len(t)) / float64(m)
		if nbar < 2 {
			continue
		}
		want := sd / math.Sqrt(nbar) * math.Sqrt(float64(m)/float64(m-1))
		betas = append(betas, stddev(means)/want)
	}
	if len(betas) == 0 {
		return 1
	}
	sort.Float64s(betas)
	return math.Max(1, betas[len(betas)/2])
}

// fitBeta is redNoiseBeta for the residuals of a sinusoid fit to y (NaN
// values skipped).
func fitBeta(t, y, sigma []float64, fit *sineFit, period float64) float64 {
	var ts, rs, es []float64
	for i := range t {
		if isFinite(y[i]) {
			ts = append(ts, t[i])
			rs = append(rs, y[i]-fit.model(i, t[i]))
			es = append(es, sigma[i])
		}
	}
	return redNoiseBeta(ts, rs, es, period)
}

// waldFAP returns the false-alarm probability of the first sinusoid of a
// fit at a frequency chosen in advance, by the Wald test of (A, B) = 0:
//
//	z = ½ vᵀ C⁻¹ v,  FAP = e^(−z)
//
// (χ² with 2 degrees of freedom; common practice), with v = (A, B) and C
// their covariance (already scaled by the reduced χ²) times β² for
// correlated noise.
func waldFAP(fit *sineFit, beta float64) float64 {
	c := fit.CovAB[0]
	b2 := beta * beta
	det := (c[0][0]*c[1][1] - c[0][1]*c[1][0]) * b2 * b2
	if !(det > 0) {
		return 1
	}
	a, b := fit.A[0], fit.B[0]
	z := 0.5 * (a*a*c[1][1] - 2*a*b*c[0][1] + b*b*c[0][0]) * b2 / det
	return math.Exp(-z)
}

func mean(v []float64) float64 {
	s := 0.0
	for _, x := range v {
		s += x
	}
	return s / float64(len(v))
}

// chromaticity is test 7: does the chromatic RV slope vary at the signal's
// period? Planets are achromatic (Zechmeister et al. 2018, A&A 609, A12).
func (tr *trial) chromaticity() {
	d := tr.d
	ind := d.s.Indicator(chromaticColumn)
	if ind == nil {
		tr.skipped("chromaticity", "no per-order RVs: the table has no chromatic_slope column")
		return
	}
	n := ind.Count()
	if n < MinEpochs {
		tr.skipped("chromaticity", fmt.Sprintf("only %d epochs have a chromatic slope", n))
		return
	}
	sigma := indicatorErrors(ind)
	fit, err := fitSines(d.t, ind.Value, sigma, d.inst, d.ninst, []float64{tr.f}, d.t0)
	if err != nil {
		tr.skipped("chromaticity", "the sinusoid fit to the chromatic slope is singular")
		return
	}
	fap := waldFAP(fit, fitBeta(d.t, ind.Value, sigma, fit, 1/tr.f))
	a, ae := fit.amplitude(0)
	const alpha = 0.01
	e := Evidence{Name: "chromaticity", Value: Num(fap), Threshold: alpha}
	if fap < alpha {
		e.Points, e.Weight = TowardActivity, Weights.Chromaticity.Activity
		e.Reason = fmt.Sprintf("the chromatic slope varies at the signal's period (amplitude %.3g m/s per unit ln λ, %.1fσ; false-alarm probability %.2g): the signal depends on wavelength", a, a/ae, fap)
	} else {
		e.Points, e.Weight = TowardPlanet, -Weights.Chromaticity.Planet
		e.Reason = fmt.Sprintf("the chromatic slope shows no power at the signal's period (false-alarm probability %.2g): the signal looks achromatic", fap)
	}
	tr.add(e)
}

// summaryOf joins the reasons of the two items with the largest weights
// on the side of the verdict (either side for an inconclusive one).
func summaryOf(sig *Signal) string {
	ev := append([]Evidence(nil), sig.Evidence...)
	sort.SliceStable(ev, func(a, b int) bool { return math.Abs(ev[a].Weight) > math.Abs(ev[b].Weight) })
	side := ""
	switch sig.Verdict {
	case PlanetLike:
		side = TowardPlanet
	case ActivityLike:
		side = TowardActivity
	}
	var parts []string
	for _, e := range ev {
		if e.Weight == 0 || len(parts) == 2 || (side != "" && e.Points != side) {
			continue
		}
		parts = append(parts, e.Reason)
	}
	return strings.Join(parts, "; ")
}
