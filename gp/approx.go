package gp

import (
	"fmt"
	"math"
	"spotsift/mapfit"
)

// Misfit summarises how well one autocorrelation function approximates
// another over lags 0..MaxLag, relative to the target's variance k(0):
//
//	RMS    = sqrt(mean_τ (k_a(τ) − k_b(τ))²) / k_b(0)
//	MaxAbs = max_τ |k_a(τ) − k_b(τ)| / k_b(0)
type Misfit struct {
	RMS, MaxAbs float64
	MaxLag      float64 // days
	Lags        int     // number of lags compared, evenly spaced
}

// CompareKernels returns the misfit of kernel a against target b on n ≥ 2
// evenly spaced lags in [0, maxLag] (days).
func CompareKernels(a, b Kernel, maxLag float64, n int) Misfit {
	n = max(n, 2)
	k0 := b.Cov(0)
	var ss, mx float64
	for i := 0; i < n; i++ {
		tau := maxLag * float64(i) / float64(n-1)
		d := a.Cov(tau) - b.Cov(tau)
		ss += d * d
		mx = math.Max(mx, math.Abs(d))
	}
	return Misfit{RMS: math.Sqrt(ss/float64(n)) / k0, MaxAbs: mx / k0, MaxLag: maxLag, Lags: n}
}

// approxLags is the number of lags used to fit approximations.
const approxLags = 400

// ApproximateQP returns the two-oscillator RotationSHO whose
// autocorrelation best matches the QuasiPeriodic kernel q over lags
// 0..maxLag (least squares on 400 even lags; maxLag ≤ 0 means three
// periods), and its misfit. This maps a QP model onto one the
// semiseparable solver can handle; the misfit says how much is lost. The
// two oscillators at P and P/2 reproduce the first harmonic but not the
// higher ones of a QP kernel with small Eta4, nor its Gaussian (rather than
// exponential) decay, so the misfit grows as Eta4 falls.
//
// Reference: the rotation term as an approximation of the quasi-periodic
// kernel, Foreman-Mackey et al. 2017, AJ 154, 220 (from memory).
func ApproximateQP(q QuasiPeriodic, maxLag float64) (RotationSHO, Misfit, error) {
	if err := q.Validate(); err != nil {
		return RotationSHO{}, Misfit{}, err
	}
	if maxLag <= 0 {
		maxLag = 3 * q.Eta3
	}
	// Starts: σ = η1, period η3, a primary coherence time 2Q1/ω1 ≈ Q1 P/π
	// near η2, and a grid over the secondary mode (the misfit surface has
	// local minima, so the best of several starts is kept).
	q1 := math.Max(math.Pi*q.Eta2/q.Eta3, 0.6)
	var starts [][]float64
	for _, q0 := range []float64{0.3, 2, q1 / 2} {
		for _, dq := range []float64{0.5, q1} {
			for _, f := range []float64{0.2, 1} {
				starts = append(starts, []float64{q.Eta1, q.Eta3, q0, dq, f})
			}
		}
	}
	build := func(p []float64) RotationSHO { return RotationSHO{p[0], p[1], p[2], p[3], p[4]} }
	p, err := fitAutocorrelation(q, starts, maxLag, func(p []float64) Kernel { return build(p) })
	if err != nil {
		return RotationSHO{}, Misfit{}, err
	}
	k := build(p)
	return k, CompareKernels(k, q, maxLag, approxLags), nil
}

// ApproximateQPTerm is ApproximateQP for the single-period RotationTerm
// (B, C, L, P) of Foreman-Mackey et al. (2017).
func ApproximateQPTerm(q QuasiPeriodic, maxLag float64) (RotationTerm, Misfit, error) {
	if err := q.Validate(); err != nil {
		return RotationTerm{}, Misfit{}, err
	}
	if maxLag <= 0 {
		maxLag = 3 * q.Eta3
	}
	var starts [][]float64
	for _, c := range []float64{0.1, 1, 5} {
		for _, l := range []float64{0.5, 1, 2} {
			starts = append(starts, []float64{q.Eta1 * q.Eta1, c, l * q.Eta2, q.Eta3})
		}
	}
	build := func(p []float64) RotationTerm { return RotationTerm{p[0], p[1], p[2], p[3]} }
	p, err := fitAutocorrelation(q, starts, maxLag, func(p []float64) Kernel { return build(p) })
	if err != nil {
		return RotationTerm{}, Misfit{}, err
	}
	k := build(p)
	return k, CompareKernels(k, q, maxLag, approxLags), nil
}

// fitAutocorrelation minimises the squared difference between the
// autocorrelations of build(p) and target over [0, maxLag], with all
// parameters positive (fitted as logarithms), from each start in turn,
// keeping the best.
func fitAutocorrelation(target Kernel, starts [][]float64, maxLag float64, build func([]float64) Kernel) ([]float64, error) {
	ref := make([]float64, approxLags)
	lags := make([]float64, approxLags)
	for i := range ref {
		lags[i] = maxLag * float64(i) / float64(approxLags-1)
		ref[i] = target.Cov(lags[i])
	}
	k0 := target.Cov(0)
	obj := func(x []float64) float64 {
		p := make([]float64, len(x))
		for i, v := range x {
			p[i] = math.Exp(v)
		}
		k := build(p)
		if err := validate(k); err != nil {
			return math.Inf(1)
		}
		var ss float64
		for i, tau := range lags {
			d := (k.Cov(tau) - ref[i]) / k0
			ss += d * d
		}
		if math.IsNaN(ss) {
			return math.Inf(1)
		}
		return ss
	}
	// Least squares through the fitting layer: ln "posterior" −ss/2ε² with
	// ε = 1e-3 of k(0), every parameter positive.
	sp := make(mapfit.Space, len(starts[0]))
	for i := range sp {
		sp[i] = mapfit.Param{Name: fmt.Sprintf("p%d", i), Kind: mapfit.Positive}
	}
	lp := func(q []float64) float64 {
		x := make([]float64, len(q))
		for i, v := range q {
			x[i] = math.Log(v)
		}
		return -obj(x) / 2e-6
	}
	var ok [][]float64
	for _, st := range starts {
		if !math.IsInf(lp(st), -1) {
			ok = append(ok, st)
		}
	}
	if len(ok) == 0 {
		return nil, fmt.Errorf("%w: approximation not defined at any start", ErrFit)
	}
	res, err := mapfit.Fit(&mapfit.Problem{Space: sp, LogPost: lp, Starts: ok}, &mapfit.Settings{MaxEvaluations: 5000, Workers: 1, NoLaplace: true})
	if err != nil {
		return nil, fmt.Errorf("%w: %v", ErrFit, err)
	}
	return res.X, nil
}
