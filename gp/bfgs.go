package gp

import "math"

// bfgs minimises f from x0 with the BFGS quasi-Newton method, forward
// finite-difference gradients and a backtracking (Armijo) line search,
// within maxEval evaluations of f. It returns the best point and whether
// a tolerance was met. Infinite values of f are treated as walls.
//
// Reference: Nocedal & Wright 2006, Numerical Optimization, 2nd ed.,
// Algorithm 6.1 and eq. 6.17 (from memory).
func bfgs(f func([]float64) float64, x0 []float64, maxEval int) ([]float64, bool) {
	n := len(x0)
	evals := 0
	fe := func(x []float64) float64 {
		evals++
		return f(x)
	}
	// Forward differences halve the cost of a gradient; their O(h) bias
	// moves the optimum by ≈ h, far below any parameter uncertainty.
	grad := func(g, x []float64, fx float64) {
		y := append([]float64(nil), x...)
		for i := range x {
			h := 1e-6 * math.Max(1, math.Abs(x[i]))
			y[i] = x[i] + h
			fp := fe(y)
			y[i] = x[i]
			g[i] = (fp - fx) / h
			if math.IsNaN(g[i]) || math.IsInf(g[i], 0) {
				g[i] = 0
			}
		}
	}
	x := append([]float64(nil), x0...)
	fx := fe(x)
	g := make([]float64, n)
	grad(g, x, fx)
	hinv := identity(n)
	p := make([]float64, n)
	xn := make([]float64, n)
	gn := make([]float64, n)
	s := make([]float64, n)
	yv := make([]float64, n)
	hy := make([]float64, n)
	first := true
	small := 0
	for evals < maxEval {
		if normInf(g) < 1e-5*(1+math.Abs(fx)) {
			return x, true
		}
		// p = −H g
		for i := 0; i < n; i++ {
			var v float64
			for j := 0; j < n; j++ {
				v -= hinv[i*n+j] * g[j]
			}
			p[i] = v
		}
		slope := dot(p, g)
		if !(slope < 0) {
			// Not a descent direction: restart from steepest descent.
			hinv = identity(n)
			for i := range p {
				p[i] = -g[i]
			}
			slope = dot(p, g)
			first = true
		}
		// Backtracking line search.
		alpha := 1.0
		if first {
			alpha = math.Min(1, 0.1/math.Max(normInf(p), 1e-300))
		}
		var fn float64
		ok := false
		for ls := 0; ls < 40 && evals < maxEval; ls++ {
			for i := range x {
				xn[i] = x[i] + alpha*p[i]
			}
			fn = fe(xn)
			if fn <= fx+1e-4*alpha*slope {
				ok = true
				break
			}
			alpha *= 0.5
		}
		if !ok {
			if first {
				return x, true // no decrease along steepest descent: at the minimum to fd precision
			}
			hinv = identity(n)
			first = true
			continue
		}
		grad(gn, xn, fn)
		for i := range s {
			s[i] = xn[i] - x[i]
			yv[i] = gn[i] - g[i]
		}
		df := fx - fn
		copy(x, xn)
		copy(g, gn)
		fx = fn
		// The objectives here are −ln L: a change below 1e-6 is
		// statistically irrelevant (and near the finite-difference noise).
		if df <= 1e-9*(1+math.Abs(fx)) || df < 1e-6 {
			small++
			if small >= 2 {
				return x, true
			}
		} else {
			small = 0
		}
		sy := dot(s, yv)
		if sy <= 1e-12*math.Sqrt(dot(s, s)*dot(yv, yv)) {
			continue // curvature condition fails: keep H
		}
		if first {
			// Scale the initial inverse Hessian (Nocedal & Wright eq. 6.20).
			sc := sy / dot(yv, yv)
			for i := range hinv {
				hinv[i] *= sc
			}
			first = false
		}
		// H ← (I − ρ s yᵀ) H (I − ρ y sᵀ) + ρ s sᵀ.
		rho := 1 / sy
		for i := 0; i < n; i++ {
			var v float64
			for j := 0; j < n; j++ {
				v += hinv[i*n+j] * yv[j]
			}
			hy[i] = v
		}
		yhy := dot(yv, hy)
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				hinv[i*n+j] += -rho*(hy[i]*s[j]+s[i]*hy[j]) + (rho*rho*yhy+rho)*s[i]*s[j]
			}
		}
	}
	return x, false
}

func identity(n int) []float64 {
	m := make([]float64, n*n)
	for i := 0; i < n; i++ {
		m[i*n+i] = 1
	}
	return m
}

func normInf(x []float64) float64 {
	var m float64
	for _, v := range x {
		m = math.Max(m, math.Abs(v))
	}
	return m
}
