package rvfit

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"sync/atomic"

	"spotsift/internal/worker"
)

// GLSOptions controls GLS. The zero value (or a nil pointer) gives the
// defaults.
type GLSOptions struct {
	// Instrument labels each epoch; epochs with the same label share one
	// free offset, fitted at every frequency together with the sinusoid.
	// Nil means one instrument (the floating mean of Zechmeister & Kürster).
	Instrument []string
	// Fast selects the non-uniform FFT engine (Gaussian gridding), accurate
	// to about 1e-9 in power, instead of the exact trigonometric
	// recurrences. False means exact.
	Fast bool
	// Workers is the number of goroutines; zero means runtime.GOMAXPROCS(0).
	// The result does not depend on it.
	Workers int
	// Context, when not nil, stops the computation soon after it is
	// cancelled (between blocks of frequencies); the function then returns
	// the context's error. Nil: never cancelled.
	Context context.Context
}

// Periodogram is a generalised Lomb–Scargle periodogram on a uniform grid.
type Periodogram struct {
	// Grid holds the frequencies (c/d).
	Grid Grid `json:"grid"`
	// Power holds p(f_k) in [0, 1], the fraction of χ² (about the offsets)
	// removed by the best-fitting sinusoid at f_k.
	Power []float64 `json:"power"`
	// NObs is the number of epochs used.
	NObs int `json:"n_obs"`
	// NOffsets is the number of free offsets (instruments).
	NOffsets int `json:"n_offsets"`
	// ChiSq0 is the weighted χ² about the offsets alone.
	ChiSq0 float64 `json:"chi2_0"`
	// TEff is the effective time span sqrt(4π Var_w(t)) of Baluev 2008, in
	// days, with weights 1/σ².
	TEff float64 `json:"t_eff"`
}

// glsData is validated input: times relative to a reference epoch, weights
// w = 1/σ², instrument indices.
type glsData struct {
	tref  float64
	t     []float64
	y     []float64
	w     []float64
	inst  []int
	nInst int
	names []string
	ctx   context.Context // when not nil, exactSums stops once it is cancelled
}

func newGLSData(t, y, sigma []float64, instrument []string) (*glsData, error) {
	return newGLSDataMin(t, y, sigma, instrument, -1)
}

// newGLSDataMin validates like newGLSData but requires only minN epochs
// (−1 means the periodogram's 3 + number of instruments).
func newGLSDataMin(t, y, sigma []float64, instrument []string, minN int) (*glsData, error) {
	n := len(t)
	if len(y) != n || len(sigma) != n || (instrument != nil && len(instrument) != n) {
		return nil, fmt.Errorf("%w: %d times, %d values, %d errors, %d instruments", ErrMismatch, n, len(y), len(sigma), len(instrument))
	}
	if n == 0 {
		return nil, ErrNoObservations
	}
	d := &glsData{t: make([]float64, n), y: make([]float64, n), w: make([]float64, n), inst: make([]int, n)}
	zero := 0
	for i := 0; i < n; i++ {
		if !isFinite(t[i]) || !isFinite(y[i]) || math.IsNaN(sigma[i]) || math.IsInf(sigma[i], 0) {
			return nil, fmt.Errorf("%w: epoch %d (t = %g, value %g, error %g)", ErrNotFinite, i, t[i], y[i], sigma[i])
		}
		if sigma[i] == 0 {
			zero++
		} else if sigma[i] < 0 {
			return nil, fmt.Errorf("%w: epoch %d (t = %g): error %g", ErrBadUncertainty, i, t[i], sigma[i])
		}
	}
	if zero == n {
		return nil, fmt.Errorf("%w: weights 1/σ² are undefined", ErrZeroErrors)
	}
	if zero > 0 {
		for i := 0; i < n; i++ {
			if sigma[i] == 0 {
				return nil, fmt.Errorf("%w: epoch %d (t = %g): error 0", ErrBadUncertainty, i, t[i])
			}
		}
	}
	lo, hi := t[0], t[0]
	for _, x := range t {
		lo, hi = math.Min(lo, x), math.Max(hi, x)
	}
	// Phases are computed from times relative to the middle of the
	// baseline: BJD ≈ 2.46e6 would otherwise cost seven digits of phase.
	d.tref = 0.5 * (lo + hi)
	idx := map[string]int{}
	for i := 0; i < n; i++ {
		d.t[i] = t[i] - d.tref
		d.y[i] = y[i]
		d.w[i] = 1 / (sigma[i] * sigma[i])
		lab := ""
		if instrument != nil {
			lab = instrument[i]
		}
		j, ok := idx[lab]
		if !ok {
			j = len(d.names)
			idx[lab] = j
			d.names = append(d.names, lab)
		}
		d.inst[i] = j
	}
	d.nInst = len(d.names)
	if minN < 0 && n < d.nInst+3 {
		return nil, fmt.Errorf("%w: a periodogram with %d offsets needs at least %d epochs, have %d", ErrTooFewEpochs, d.nInst, d.nInst+3, n)
	}
	return d, nil
}

// glsSums holds, per frequency, the raw weighted sums
//
//	C_j = Σ_{i∈j} w cos ωt, S_j = Σ_{i∈j} w sin ωt (per instrument j),
//	YC = Σ w y cos ωt, YS = Σ w y sin ωt, CC = Σ w cos² ωt, CS = Σ w cos ωt sin ωt.
type glsSums struct {
	C, S           [][]float64
	YC, YS, CC, CS []float64
}

func newGLSSums(nInst, n int) *glsSums {
	s := &glsSums{YC: make([]float64, n), YS: make([]float64, n), CC: make([]float64, n), CS: make([]float64, n)}
	s.C = make([][]float64, nInst)
	s.S = make([][]float64, nInst)
	for j := range s.C {
		s.C[j] = make([]float64, n)
		s.S[j] = make([]float64, n)
	}
	return s
}

func workers(n int) int {
	if n <= 0 {
		return runtime.GOMAXPROCS(0)
	}
	return n
}

// exactSums fills sums for grid frequencies by trigonometric recurrences
// (one complex rotation per epoch and frequency, re-seeded with an exact
// sincos every 256 steps), in blocks of frequencies spread over workers.
func (d *glsData) exactSums(g Grid, nw int) *glsSums {
	s := newGLSSums(d.nInst, g.N)
	const block = 2048
	nb := (g.N + block - 1) / block
	var next atomic.Int64
	var wg worker.Group
	for w := 0; w < min(nw, nb); w++ {
		wg.Go(func() {
			for {
				b := int(next.Add(1) - 1)
				if b >= nb || d.ctx != nil && d.ctx.Err() != nil {
					return
				}
				k0 := b * block
				d.exactBlock(s, g, k0, min(g.N, k0+block))
			}
		})
	}
	wg.Rethrow()
	return s
}

func (d *glsData) exactBlock(s *glsSums, g Grid, k0, k1 int) {
	n := k1 - k0
	YC, YS, CC, CS := s.YC[k0:k1], s.YS[k0:k1], s.CC[k0:k1], s.CS[k0:k1]
	const reseed = 256
	for i, ti := range d.t {
		w := d.w[i]
		wy := w * d.y[i]
		C, S := s.C[d.inst[i]][k0:k1], s.S[d.inst[i]][k0:k1]
		ds, dc := math.Sincos(2 * math.Pi * g.DF * ti)
		for m0 := 0; m0 < n; m0 += reseed {
			m1 := min(n, m0+reseed)
			sn, cs := math.Sincos(2 * math.Pi * g.Freq(k0+m0) * ti)
			c, yc, ys, cc, csv := C[m0:m1], YC[m0:m1:m1], YS[m0:m1], CC[m0:m1], CS[m0:m1]
			sv := S[m0:m1]
			_, _, _, _, _ = yc[len(c)-1], ys[len(c)-1], cc[len(c)-1], csv[len(c)-1], sv[len(c)-1]
			for k := range c {
				wc, ws := w*cs, w*sn
				c[k] += wc
				sv[k] += ws
				yc[k] += wy * cs
				ys[k] += wy * sn
				cc[k] += wc * cs
				csv[k] += wc * sn
				cs, sn = cs*dc-sn*ds, sn*dc+cs*ds
			}
		}
	}
}

// power turns the sums into GLS powers with per-instrument offsets:
// every sum is projected orthogonally to the offsets (for one instrument
// this is Zechmeister & Kürster's subtraction of the weighted means).
func (d *glsData) power(s *glsSums, dst []float64) (chi2 float64) {
	W := make([]float64, d.nInst)
	Y := make([]float64, d.nInst)
	yy := 0.0
	for i, w := range d.w {
		W[d.inst[i]] += w
		Y[d.inst[i]] += w * d.y[i]
		yy += w * d.y[i] * d.y[i]
	}
	Wt := 0.0
	for j := range W {
		yy -= Y[j] * Y[j] / W[j]
		Wt += W[j]
	}
	for k := range dst {
		yc, ys, cc, cs := s.YC[k], s.YS[k], s.CC[k], s.CS[k]
		ss := Wt - cc
		for j := range W {
			cj, sj := s.C[j][k], s.S[j][k]
			iw := 1 / W[j]
			yc -= Y[j] * cj * iw
			ys -= Y[j] * sj * iw
			cc -= cj * cj * iw
			ss -= sj * sj * iw
			cs -= cj * sj * iw
		}
		D := cc*ss - cs*cs
		p := (ss*yc*yc + cc*ys*ys - 2*cs*yc*ys) / (yy * D)
		if !(D > 0) || !(yy > 0) {
			p = 0
		}
		dst[k] = math.Max(0, math.Min(1, p))
	}
	return yy
}

// GLS returns the generalised Lomb–Scargle periodogram of the values y
// with one-sigma errors sigma at times t (days) on the frequency grid g:
//
//	p(f) = (χ²₀ − χ²(f)) / χ²₀
//
// where χ²₀ is the weighted (1/σ²) χ² about the per-instrument offsets and
// χ²(f) that of the best fit a cos 2πft + b sin 2πft + offsets. For one
// instrument this is the periodogram of Zechmeister & Kürster (2009, A&A
// 496, 577; formulas in docs/methods.md §6) with a floating mean:
//
//	p = (SS·YC² + CC·YS² − 2·CS·YC·YS) / (YY·D),  D = CC·SS − CS²
//
// With several instruments every weighted sum is projected orthogonally to
// the instrument offsets, which fits all offsets jointly with the sinusoid
// at each frequency.
//
// The exact engine evaluates the sums by trigonometric recurrences on the
// uniform grid; Fast uses a type-1 non-uniform FFT with Gaussian gridding
// (Greengard & Lee 2004, SIAM Rev. 46, 443, from memory) with errors of
// order 1e-9 in power.
//
// Errors: mismatched lengths (ErrMismatch), NaN/Inf (ErrNotFinite), all
// errors zero (ErrZeroErrors), a zero or negative error
// (ErrBadUncertainty), fewer than 3 + number of instruments epochs
// (ErrTooFewEpochs), a bad grid (ErrBadGrid).
func GLS(t, y, sigma []float64, g Grid, opts *GLSOptions) (*Periodogram, error) {
	var o GLSOptions
	if opts != nil {
		o = *opts
	}
	if err := g.validate(); err != nil {
		return nil, err
	}
	d, err := newGLSData(t, y, sigma, o.Instrument)
	if err != nil {
		return nil, err
	}
	d.ctx = o.Context
	p := d.periodogram(g, o.Fast, workers(o.Workers))
	if o.Context != nil && o.Context.Err() != nil {
		return nil, o.Context.Err()
	}
	return p, nil
}

func (d *glsData) periodogram(g Grid, fast bool, nw int) *Periodogram {
	var s *glsSums
	if fast {
		s = d.fastSums(g, nw)
	} else {
		s = d.exactSums(g, nw)
	}
	p := &Periodogram{Grid: g, Power: make([]float64, g.N), NObs: len(d.t), NOffsets: d.nInst}
	p.ChiSq0 = d.power(s, p.Power)
	p.TEff = effectiveSpan(d.t, d.w)
	return p
}

// effectiveSpan returns sqrt(4π Var_w(t)) with weights w.
func effectiveSpan(t, w []float64) float64 {
	sw, st := 0.0, 0.0
	for i := range t {
		sw += w[i]
		st += w[i] * t[i]
	}
	mean := st / sw
	v := 0.0
	for i := range t {
		v += w[i] * (t[i] - mean) * (t[i] - mean)
	}
	return math.Sqrt(4 * math.Pi * v / sw)
}

// SineFit is the best-fitting sinusoid plus offsets at one frequency.
type SineFit struct {
	// Freq is the frequency in c/d.
	Freq float64 `json:"freq"`
	// A and B are the cosine and sine amplitudes in the units of y, for
	// phases measured from RefTime: y ≈ A cos 2πf(t−RefTime) + B sin … .
	A float64 `json:"a"`
	B float64 `json:"b"`
	// RefTime is the phase reference in days.
	RefTime float64 `json:"ref_time"`
	// Offsets holds one offset per instrument, in order of Instruments.
	Offsets []float64 `json:"offsets"`
	// Instruments holds the instrument labels ("" when none were given).
	Instruments []string `json:"instruments"`
	// Power is the GLS power at Freq.
	Power float64 `json:"power"`
}

// Amplitude returns the semi-amplitude sqrt(A² + B²).
func (f *SineFit) Amplitude() float64 { return math.Hypot(f.A, f.B) }

// Eval returns the fitted sinusoid (without offsets) at time t.
func (f *SineFit) Eval(t float64) float64 {
	s, c := math.Sincos(2 * math.Pi * f.Freq * (t - f.RefTime))
	return f.A*c + f.B*s
}

// FitSine returns the weighted least-squares fit of a sinusoid at frequency
// f (c/d) plus one offset per instrument to y(t) with errors sigma, the
// model behind GLS (Zechmeister & Kürster 2009):
//
//	a = (YC·SS − YS·CS)/D,  b = (YS·CC − YC·CS)/D,
//	offset_j = Ȳ_j − a C̄_j − b S̄_j
//
// instrument may be nil (one offset). Errors as for GLS.
func FitSine(t, y, sigma []float64, instrument []string, f float64) (*SineFit, error) {
	if !(f > 0) || math.IsInf(f, 0) {
		return nil, fmt.Errorf("%w: frequency %g c/d", ErrBadGrid, f)
	}
	d, err := newGLSData(t, y, sigma, instrument)
	if err != nil {
		return nil, err
	}
	return d.fitSine(f), nil
}

func (d *glsData) fitSine(f float64) *SineFit {
	s := newGLSSums(d.nInst, 1)
	d.exactBlock(s, Grid{FMin: f, DF: 1, N: 1}, 0, 1)
	pw := make([]float64, 1)
	d.power(s, pw)
	W := make([]float64, d.nInst)
	Y := make([]float64, d.nInst)
	for i, w := range d.w {
		W[d.inst[i]] += w
		Y[d.inst[i]] += w * d.y[i]
	}
	yc, ys, cc, cs := s.YC[0], s.YS[0], s.CC[0], s.CS[0]
	Wt := 0.0
	for j := range W {
		Wt += W[j]
	}
	ss := Wt - cc
	for j := range W {
		cj, sj := s.C[0+j][0], s.S[j][0]
		iw := 1 / W[j]
		yc -= Y[j] * cj * iw
		ys -= Y[j] * sj * iw
		cc -= cj * cj * iw
		ss -= sj * sj * iw
		cs -= cj * sj * iw
	}
	D := cc*ss - cs*cs
	a := (yc*ss - ys*cs) / D
	b := (ys*cc - yc*cs) / D
	out := &SineFit{Freq: f, A: a, B: b, RefTime: d.tref, Power: pw[0], Instruments: append([]string(nil), d.names...)}
	for j := range W {
		out.Offsets = append(out.Offsets, (Y[j]-a*s.C[j][0]-b*s.S[j][0])/W[j])
	}
	return out
}
