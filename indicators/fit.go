package indicators

import (
	"math"
)

// profileModel evaluates a line-profile model at x for parameters th and
// writes ∂f/∂θ into grad (len(th)).
type profileModel func(x float64, th, grad []float64) float64

// fitResult is the outcome of a weighted least-squares profile fit.
type fitResult struct {
	theta []float64
	// dtheta[p][k] = ∂θ_p/∂y_k at the optimum, (JᵀWJ)⁻¹JᵀW: the linear
	// response of each parameter to the data, used to propagate photon
	// noise exactly (the term with second derivatives of the model is left
	// out, as in Gauss–Newton).
	dtheta [][]float64
	chi2   float64
	iter   int
}

// lmFit minimises Σ w_k (y_k − f(x_k; θ))² by Levenberg–Marquardt from the
// start θ0 (Levenberg 1944, Q. Appl. Math. 2, 164; Marquardt 1963, J. SIAM
// 11, 431; from memory). ok is false when the iteration does not converge
// or the normal matrix is singular.
func lmFit(x, y, w []float64, theta0 []float64, f profileModel, maxIter int) (fitResult, bool) {
	np := len(theta0)
	th := append([]float64(nil), theta0...)
	trial := make([]float64, np)
	grad := make([]float64, np)
	jtj := make([]float64, np*np)
	jtr := make([]float64, np)
	a := make([]float64, np*np)
	step := make([]float64, np)
	chi2 := func(t []float64) float64 {
		var s float64
		for k := range x {
			r := y[k] - f(x[k], t, grad)
			s += w[k] * r * r
		}
		return s
	}
	cur := chi2(th)
	lambda := 1e-3
	converged := false
	it := 0
	for it = 0; it < maxIter; it++ {
		clear(jtj)
		clear(jtr)
		for k := range x {
			r := y[k] - f(x[k], th, grad)
			for i := 0; i < np; i++ {
				gi := w[k] * grad[i]
				jtr[i] += gi * r
				for j := 0; j <= i; j++ {
					jtj[i*np+j] += gi * grad[j]
				}
			}
		}
		for i := 0; i < np; i++ {
			for j := 0; j < i; j++ {
				jtj[j*np+i] = jtj[i*np+j]
			}
		}
		improved := false
		for tries := 0; tries < 30; tries++ {
			copy(a, jtj)
			for i := 0; i < np; i++ {
				a[i*np+i] *= 1 + lambda
			}
			copy(step, jtr)
			if !solveSym(a, step, np) {
				lambda *= 10
				continue
			}
			for i := range th {
				trial[i] = th[i] + step[i]
			}
			c := chi2(trial)
			if c <= cur && !math.IsNaN(c) {
				rel := (cur - c) / math.Max(cur, 1e-300)
				copy(th, trial)
				cur = c
				lambda = math.Max(lambda/10, 1e-12)
				improved = true
				small := true
				for i := range step {
					if math.Abs(step[i]) > 1e-10*math.Max(math.Abs(th[i]), 1e-6) {
						small = false
					}
				}
				if small || rel < 1e-15 {
					converged = true
				}
				break
			}
			lambda *= 10
		}
		if !improved {
			// No step lowers χ²: we are at the minimum to machine precision.
			converged = true
		}
		if converged {
			break
		}
	}
	if !converged {
		return fitResult{}, false
	}
	// Response matrix at the optimum.
	clear(jtj)
	jk := make([][]float64, len(x))
	for k := range x {
		f(x[k], th, grad)
		jk[k] = append([]float64(nil), grad...)
		for i := 0; i < np; i++ {
			for j := 0; j < np; j++ {
				jtj[i*np+j] += w[k] * grad[i] * grad[j]
			}
		}
	}
	inv, ok := invertSym(jtj, np)
	if !ok {
		return fitResult{}, false
	}
	d := make([][]float64, np)
	for p := 0; p < np; p++ {
		d[p] = make([]float64, len(x))
		for k := range x {
			var s float64
			for j := 0; j < np; j++ {
				s += inv[p*np+j] * jk[k][j]
			}
			d[p][k] = s * w[k]
		}
	}
	for _, v := range th {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return fitResult{}, false
		}
	}
	return fitResult{theta: th, dtheta: d, chi2: cur, iter: it}, true
}

// solveSym solves a·x = b in place (b becomes x) by Gaussian elimination
// with partial pivoting; a (n×n, row-major) is destroyed.
func solveSym(a, b []float64, n int) bool {
	for c := 0; c < n; c++ {
		p := c
		for r := c + 1; r < n; r++ {
			if math.Abs(a[r*n+c]) > math.Abs(a[p*n+c]) {
				p = r
			}
		}
		if a[p*n+c] == 0 || math.IsNaN(a[p*n+c]) {
			return false
		}
		if p != c {
			for j := 0; j < n; j++ {
				a[c*n+j], a[p*n+j] = a[p*n+j], a[c*n+j]
			}
			b[c], b[p] = b[p], b[c]
		}
		for r := c + 1; r < n; r++ {
			f := a[r*n+c] / a[c*n+c]
			for j := c; j < n; j++ {
				a[r*n+j] -= f * a[c*n+j]
			}
			b[r] -= f * b[c]
		}
	}
	for r := n - 1; r >= 0; r-- {
		s := b[r]
		for j := r + 1; j < n; j++ {
			s -= a[r*n+j] * b[j]
		}
		b[r] = s / a[r*n+r]
	}
	return true
}

// invertSym returns the inverse of the n×n matrix a (row-major).
func invertSym(a []float64, n int) ([]float64, bool) {
	inv := make([]float64, n*n)
	col := make([]float64, n)
	tmp := make([]float64, n*n)
	for j := 0; j < n; j++ {
		copy(tmp, a)
		clear(col)
		col[j] = 1
		if !solveSym(tmp, col, n) {
			return nil, false
		}
		for i := 0; i < n; i++ {
			inv[i*n+j] = col[i]
		}
	}
	return inv, true
}

// gaussModel is C0 − A·exp(−(v − v0)²/(2σ²)), θ = (C0, A, v0, σ).
func gaussModel(v float64, th, g []float64) float64 {
	c0, a, v0, s := th[0], th[1], th[2], th[3]
	u := (v - v0) / s
	e := math.Exp(-0.5 * u * u)
	g[0] = 1
	g[1] = -e
	g[2] = -a * e * u / s
	g[3] = -a * e * u * u / s
	return c0 - a*e
}

// biGaussModel is C0 − A·exp(−(v − v0)²/(2σ²)) with σ = σ_L for v < v0
// and σ_R for v ≥ v0; θ = (C0, A, v0, σ_L, σ_R).
func biGaussModel(v float64, th, g []float64) float64 {
	c0, a, v0, sl, sr := th[0], th[1], th[2], th[3], th[4]
	s := sr
	if v < v0 {
		s = sl
	}
	u := (v - v0) / s
	e := math.Exp(-0.5 * u * u)
	g[0] = 1
	g[1] = -e
	g[2] = -a * e * u / s
	g[3], g[4] = 0, 0
	if v < v0 {
		g[3] = -a * e * u * u / s
	} else {
		g[4] = -a * e * u * u / s
	}
	return c0 - a*e
}

// GaussianFit is the fit of an inverted Gaussian with a constant continuum
// to a cross-correlation function,
//
//	CCF(v) = C0 − A·exp(−(v − V0)²/(2σ²)).
type GaussianFit struct {
	// C0 is the continuum and A the depth, in CCF units.
	C0, A float64
	// V0 is the centre and Sigma the width, in m/s.
	V0, Sigma float64
}

// FWHM returns the full width at half maximum, 2·sqrt(2 ln 2)·σ, in m/s.
func (g GaussianFit) FWHM() float64 { return 2 * math.Sqrt(2*math.Ln2) * g.Sigma }

// Contrast returns the relative depth A/C0.
func (g GaussianFit) Contrast() float64 { return g.A / g.C0 }

// FitGaussian fits GaussianFit to the points (v, y) with weights w (1/σ²;
// nil means equal weights) by Levenberg–Marquardt, starting from the
// lowest point. It returns an error wrapping ErrNoLine when the data hold
// no dip and ErrFitFailed when the fit does not converge.
func FitGaussian(v, y, w []float64) (GaussianFit, error) {
	res, err := fitGaussian(v, y, w)
	if err != nil {
		return GaussianFit{}, err
	}
	return GaussianFit{C0: res.theta[0], A: res.theta[1], V0: res.theta[2], Sigma: res.theta[3]}, nil
}

func fitGaussian(v, y, w []float64) (fitResult, error) {
	if len(v) != len(y) || (w != nil && len(w) != len(v)) {
		return fitResult{}, ErrMismatch
	}
	if len(v) < 5 {
		return fitResult{}, ErrNoLine
	}
	if w == nil {
		w = make([]float64, len(v))
		for i := range w {
			w[i] = 1
		}
	}
	th0, ok := gaussStart(v, y)
	if !ok {
		return fitResult{}, ErrNoLine
	}
	res, ok := lmFit(v, y, w, th0, gaussModel, 200)
	if !ok {
		return fitResult{}, ErrFitFailed
	}
	res.theta[3] = math.Abs(res.theta[3])
	if !(res.theta[1] > 0) || res.theta[2] < v[0] || res.theta[2] > v[len(v)-1] {
		return fitResult{}, ErrNoLine
	}
	return res, nil
}

// gaussStart guesses (C0, A, v0, σ) from the data: the continuum from the
// higher of the two ends, the centre at the minimum, the width from the
// half-depth crossing points.
func gaussStart(v, y []float64) ([]float64, bool) {
	n := len(v)
	imin := 0
	for i := range y {
		if y[i] < y[imin] {
			imin = i
		}
	}
	m := max(1, n/10)
	var lo, hi float64
	for i := 0; i < m; i++ {
		lo += y[i]
		hi += y[n-1-i]
	}
	c0 := math.Max(lo, hi) / float64(m)
	a := c0 - y[imin]
	if !(a > 0) {
		return nil, false
	}
	half := c0 - a/2
	l, r := imin, imin
	for l > 0 && y[l] < half {
		l--
	}
	for r < n-1 && y[r] < half {
		r++
	}
	s := (v[r] - v[l]) / 2.3548
	if !(s > 0) {
		s = (v[n-1] - v[0]) / 10
	}
	return []float64{c0, a, v[imin], s}, true
}
