package photometry

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// FFPrime is the radial velocity that the spots seen in a light curve
// predict, by the FF' method of Aigrain, Pont & Zucker (2012, MNRAS 419,
// 3147): with Ψ the flux, Ψ0 its maximum (the least spotted star) and
// F = 1 − Ψ/Ψ0,
//
//	ΔRV_rot(t) ∝ −(Ψ'(t)/Ψ0)(1 − Ψ(t)/Ψ0) = F(t) F'(t)   (dark spots on the rotating disc)
//	ΔRV_c(t)   ∝ F(t)²                                  (suppressed convective blueshift)
//
// The sign follows from the geometry (and matches the simulator's disk): a
// spot entering on the approaching limb dims the star (F' > 0) while it
// hides blueshifted light (a positive RV).
//
// The scale factors depend on the star and the spots; they are fitted to
// the RVs (FitFFPrime), as Haywood et al. (2014) did. See docs/methods.md
// §14.1.
type FFPrime struct {
	// Time are the times asked for; Covered says which the light curve
	// covers (points on both sides within the smoothing window).
	Time    []float64
	Covered []bool
	// F and DF are F and dF/dt (per day) at Time; Rot = F·F' and
	// Conv = F², the two regressors. NaN where not covered.
	F, DF, Rot, Conv []float64
	// Psi0 is the maximum of the smoothed light curve; Window the half
	// width (days) of the local fits.
	Psi0, Window float64
}

// NCovered returns the number of covered times.
func (p *FFPrime) NCovered() int {
	n := 0
	for _, c := range p.Covered {
		if c {
			n++
		}
	}
	return n
}

// PredictFFPrime evaluates the FF' regressors at times t. The flux and its
// derivative at each time come from a weighted local quadratic fit to the
// light curve within ±window days (Gaussian weights of standard deviation
// window/2; common practice for smoothing and differentiating a sampled
// curve); window should be a small fraction of the rotation period (a
// tenth is a good choice). A time is covered when the light curve has at
// least three points on each side of it within the window.
func PredictFFPrime(lc *LightCurve, t []float64, window float64) (*FFPrime, error) {
	if err := lc.Validate(); err != nil {
		return nil, err
	}
	if !(window > 0) || math.IsInf(window, 0) {
		return nil, fmt.Errorf("%w: %s: FF' smoothing window %g d", ErrBadLightCurve, lc.Name, window)
	}
	n := len(t)
	p := &FFPrime{Time: append([]float64(nil), t...), Covered: make([]bool, n), F: nanSlice(n), DF: nanSlice(n), Rot: nanSlice(n), Conv: nanSlice(n), Window: window}
	// Ψ0: the maximum of the smoothed light curve on a grid of half-window
	// steps.
	p.Psi0 = math.Inf(-1)
	for tg := lc.Time[0]; tg <= lc.Time[lc.Len()-1]; tg += window / 2 {
		if v, _, ok := localFit(lc, tg, window); ok {
			p.Psi0 = math.Max(p.Psi0, v)
		}
	}
	if math.IsInf(p.Psi0, -1) {
		return nil, fmt.Errorf("%w: %s: no stretch of the light curve is dense enough for a window of %g d", ErrBadLightCurve, lc.Name, window)
	}
	any := false
	for i, ti := range t {
		v, d, ok := localFit(lc, ti, window)
		if !ok {
			continue
		}
		any = true
		p.Covered[i] = true
		p.F[i] = 1 - v/p.Psi0
		p.DF[i] = -d / p.Psi0
		p.Rot[i] = p.F[i] * p.DF[i]
		p.Conv[i] = p.F[i] * p.F[i]
	}
	if !any && n > 0 {
		return p, fmt.Errorf("%w: %s covers %.6g to %.6g d, the RVs %.6g to %.6g d", ErrNoOverlap, lc.Name, lc.Time[0], lc.Time[lc.Len()-1], minOf(t), maxOf(t))
	}
	return p, nil
}

// localFit fits a + b(t−t0) + c(t−t0)² to the points within ±h of t0 and
// returns a and b.
func localFit(lc *LightCurve, t0, h float64) (val, slope float64, ok bool) {
	lo := sort.SearchFloat64s(lc.Time, t0-h)
	hi := sort.SearchFloat64s(lc.Time, t0+h)
	var left, right int
	var s [5]float64 // Σw x^k, k = 0..4
	var r [3]float64 // Σw y x^k
	for i := lo; i < hi; i++ {
		x := lc.Time[i] - t0
		if x < 0 {
			left++
		} else if x > 0 {
			right++
		}
		u := x / (h / 2)
		w := math.Exp(-0.5*u*u) / (lc.Err[i] * lc.Err[i])
		xk := w
		for k := 0; k < 5; k++ {
			s[k] += xk
			if k < 3 {
				r[k] += xk * lc.Flux[i]
			}
			xk *= x
		}
	}
	if left < 3 || right < 3 {
		return 0, 0, false
	}
	a := mat.NewDense(3, 3, []float64{s[0], s[1], s[2], s[1], s[2], s[3], s[2], s[3], s[4]})
	b := mat.NewVecDense(3, r[:])
	var x mat.VecDense
	if err := x.SolveVec(a, b); err != nil {
		return 0, 0, false
	}
	return x.AtVec(0), x.AtVec(1), true
}

// FFPrimeFit is the FF' model fitted to RVs by weighted linear least
// squares, with one offset per instrument:
//
//	RV = offsets + A·F F' + B·F² [+ a cos 2πft + b sin 2πft]
type FFPrimeFit struct {
	// N is the number of RV epochs the light curve covers (those used).
	N int
	// A and B with their one-sigma errors, from the fit without the
	// sinusoid.
	A, AErr, B, BErr float64
	// DeltaBIC is the BIC of offsets plus the FF' terms less that of the
	// offsets alone (Schwarz 1978): negative when the FF' prediction
	// explains part of the RVs.
	DeltaBIC float64
	// K0 ± K0Err is the semi-amplitude of the sinusoid at the frequency
	// fitted with the offsets only, K1 ± K1Err with the FF' terms too; NaN
	// when no frequency was given.
	K0, K0Err, K1, K1Err float64
}

// FitFFPrime fits the FF' regressors of pred (at the RV times) to the RVs
// rv ± sigma of instruments inst (labels 0 … k−1), and, when freq > 0,
// measures how much of a sinusoid at freq (c/d) they explain.
func FitFFPrime(pred *FFPrime, rv, sigma []float64, inst []int, freq float64) (*FFPrimeFit, error) {
	if len(rv) != len(pred.Time) || len(sigma) != len(rv) || len(inst) != len(rv) {
		return nil, fmt.Errorf("%w: %d times, %d RVs, %d errors, %d instrument labels", ErrBadLightCurve, len(pred.Time), len(rv), len(sigma), len(inst))
	}
	var idx []int
	for i, c := range pred.Covered {
		if c && sigma[i] > 0 {
			idx = append(idx, i)
		}
	}
	// Instruments present among the covered epochs.
	seen := map[int]int{}
	for _, i := range idx {
		if _, ok := seen[inst[i]]; !ok {
			seen[inst[i]] = len(seen)
		}
	}
	nOff := len(seen)
	out := &FFPrimeFit{N: len(idx), K0: math.NaN(), K0Err: math.NaN(), K1: math.NaN(), K1Err: math.NaN(),
		A: math.NaN(), AErr: math.NaN(), B: math.NaN(), BErr: math.NaN(), DeltaBIC: math.NaN()}
	if len(idx) < nOff+5 {
		return out, fmt.Errorf("%w: %d RV epochs within the light curve, too few for the FF' fit", ErrNoOverlap, len(idx))
	}
	t0 := pred.Time[idx[0]]
	col := func(kind string) []float64 {
		c := make([]float64, len(idx))
		for j, i := range idx {
			switch kind {
			case "rot":
				c[j] = pred.Rot[i]
			case "conv":
				c[j] = pred.Conv[i]
			case "cos":
				c[j] = math.Cos(2 * math.Pi * freq * (pred.Time[i] - t0))
			case "sin":
				c[j] = math.Sin(2 * math.Pi * freq * (pred.Time[i] - t0))
			}
		}
		return c
	}
	offs := make([][]float64, nOff)
	for k := range offs {
		offs[k] = make([]float64, len(idx))
	}
	y := make([]float64, len(idx))
	s := make([]float64, len(idx))
	for j, i := range idx {
		offs[seen[inst[i]]][j] = 1
		y[j], s[j] = rv[i], sigma[i]
	}
	rot, conv := col("rot"), col("conv")
	base, err := wls(offs, y, s)
	if err != nil {
		return out, err
	}
	ff, err := wls(append(append([][]float64{}, offs...), rot, conv), y, s)
	if err != nil {
		return out, err
	}
	n := float64(len(idx))
	out.DeltaBIC = ff.chi2 - base.chi2 + 2*math.Log(n)
	out.A, out.AErr = ff.beta[nOff], math.Sqrt(ff.cov.At(nOff, nOff))
	out.B, out.BErr = ff.beta[nOff+1], math.Sqrt(ff.cov.At(nOff+1, nOff+1))
	if freq > 0 {
		cs, sn := col("cos"), col("sin")
		k0, err := wls(append(append([][]float64{}, offs...), cs, sn), y, s)
		if err != nil {
			return out, err
		}
		k1, err := wls(append(append([][]float64{}, offs...), rot, conv, cs, sn), y, s)
		if err != nil {
			return out, err
		}
		out.K0, out.K0Err = k0.amplitude(nOff)
		out.K1, out.K1Err = k1.amplitude(nOff + 2)
	}
	return out, nil
}

// lsq is a weighted least-squares solution.
type lsq struct {
	beta []float64
	cov  *mat.SymDense
	chi2 float64
}

// amplitude returns the semi-amplitude of the cosine and sine
// coefficients at k, k+1 and its error (first-order propagation).
func (l *lsq) amplitude(k int) (float64, float64) {
	a, b := l.beta[k], l.beta[k+1]
	K := math.Hypot(a, b)
	if K == 0 {
		return 0, math.NaN()
	}
	v := (a*a*l.cov.At(k, k) + b*b*l.cov.At(k+1, k+1) + 2*a*b*l.cov.At(k, k+1)) / (K * K)
	return K, math.Sqrt(math.Max(0, v))
}

// wls solves y ≈ Σ β_j cols_j with weights 1/σ².
func wls(cols [][]float64, y, sigma []float64) (*lsq, error) {
	n, p := len(y), len(cols)
	X := mat.NewDense(n, p, nil)
	yw := mat.NewVecDense(n, nil)
	for i := 0; i < n; i++ {
		for j := range cols {
			X.Set(i, j, cols[j][i]/sigma[i])
		}
		yw.SetVec(i, y[i]/sigma[i])
	}
	var xtx mat.SymDense
	xtx.SymOuterK(1, X.T())
	var ch mat.Cholesky
	if !ch.Factorize(&xtx) {
		return nil, fmt.Errorf("%w: the FF' regressors are degenerate with the offsets or the sinusoid", ErrBadLightCurve)
	}
	var xty mat.VecDense
	xty.MulVec(X.T(), yw)
	var beta mat.VecDense
	if err := ch.SolveVecTo(&beta, &xty); err != nil {
		return nil, err
	}
	var cov mat.SymDense
	if err := ch.InverseTo(&cov); err != nil {
		return nil, err
	}
	var fit mat.VecDense
	fit.MulVec(X, &beta)
	chi2 := 0.0
	for i := 0; i < n; i++ {
		d := yw.AtVec(i) - fit.AtVec(i)
		chi2 += d * d
	}
	return &lsq{beta: beta.RawVector().Data, cov: &cov, chi2: chi2}, nil
}

func nanSlice(n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = math.NaN()
	}
	return v
}

func minOf(v []float64) float64 {
	m := math.Inf(1)
	for _, x := range v {
		m = math.Min(m, x)
	}
	return m
}

func maxOf(v []float64) float64 {
	m := math.Inf(-1)
	for _, x := range v {
		m = math.Max(m, x)
	}
	return m
}
