package rvfit

import (
	"math"
	"sort"

	"gonum.org/v1/gonum/diff/fd"
)

// rvfit carries its own small minimisers because gonum/optimize pulls in
// gonum/stat/distmv and with it golang.org/x/tools, which the module does
// not list; both follow the textbook algorithms.

// nelderMead minimises f from x0 with an initial simplex of unit steps
// along each axis (coordinates are pre-scaled), using the standard
// reflection 1, expansion 2, contraction ½ and shrink ½ coefficients
// (Nelder & Mead 1965, Comput. J. 7, 308; from memory). It stops when the
// spread of the simplex values falls below ftol·(|f|+1e-12) and the
// simplex is smaller than xtol, or after maxEval evaluations.
func nelderMead(f func([]float64) float64, x0 []float64, maxEval int, ftol, xtol float64) ([]float64, float64, int) {
	n := len(x0)
	pts := make([][]float64, n+1)
	val := make([]float64, n+1)
	evals := 0
	eval := func(x []float64) float64 { evals++; return f(x) }
	for i := range pts {
		pts[i] = append([]float64(nil), x0...)
		if i > 0 {
			pts[i][i-1] += 1
		}
		val[i] = eval(pts[i])
	}
	idx := make([]int, n+1)
	cen := make([]float64, n)
	xr := make([]float64, n)
	xe := make([]float64, n)
	xc := make([]float64, n)
	for evals < maxEval {
		for i := range idx {
			idx[i] = i
		}
		sort.SliceStable(idx, func(a, b int) bool { return val[idx[a]] < val[idx[b]] })
		best, worst, second := idx[0], idx[n], idx[n-1]
		size := 0.0
		for _, i := range idx[1:] {
			for j := range cen {
				size = math.Max(size, math.Abs(pts[i][j]-pts[best][j]))
			}
		}
		if math.Abs(val[worst]-val[best]) <= ftol*(math.Abs(val[best])+1e-12) && size < xtol {
			break
		}
		for j := range cen {
			cen[j] = 0
			for _, i := range idx[:n] {
				cen[j] += pts[i][j]
			}
			cen[j] /= float64(n)
		}
		for j := range xr {
			xr[j] = cen[j] + (cen[j] - pts[worst][j])
		}
		fr := eval(xr)
		switch {
		case fr < val[best]:
			for j := range xe {
				xe[j] = cen[j] + 2*(cen[j]-pts[worst][j])
			}
			if fe := eval(xe); fe < fr {
				copy(pts[worst], xe)
				val[worst] = fe
			} else {
				copy(pts[worst], xr)
				val[worst] = fr
			}
		case fr < val[second]:
			copy(pts[worst], xr)
			val[worst] = fr
		default:
			// Contract towards the better of the worst point and its
			// reflection.
			outside := fr < val[worst]
			for j := range xc {
				if outside {
					xc[j] = cen[j] + 0.5*(xr[j]-cen[j])
				} else {
					xc[j] = cen[j] + 0.5*(pts[worst][j]-cen[j])
				}
			}
			fc := eval(xc)
			if fc < math.Min(fr, val[worst]) {
				copy(pts[worst], xc)
				val[worst] = fc
			} else {
				for _, i := range idx[1:] {
					for j := range pts[i] {
						pts[i][j] = pts[best][j] + 0.5*(pts[i][j]-pts[best][j])
					}
					val[i] = eval(pts[i])
				}
			}
		}
	}
	b := 0
	for i := range val {
		if val[i] < val[b] {
			b = i
		}
	}
	return pts[b], val[b], evals
}

// bfgs minimises f from x0 by the BFGS quasi-Newton method with
// central-difference gradients (gonum/diff/fd) and a backtracking Armijo
// line search (Nocedal & Wright 2006, Numerical Optimization, ch. 6; from
// memory). It stops when the gradient's largest component is below gtol,
// when a line search fails, or after maxEval evaluations.
func bfgs(f func([]float64) float64, x0 []float64, maxEval int, gtol float64) ([]float64, float64, int) {
	n := len(x0)
	evals := 0
	eval := func(x []float64) float64 { evals++; return f(x) }
	grad := func(dst, x []float64) bool {
		fd.Gradient(dst, eval, x, &fd.Settings{Formula: fd.Central, Step: 1e-5})
		for _, g := range dst {
			if math.IsNaN(g) || math.IsInf(g, 0) {
				return false
			}
		}
		return true
	}
	x := append([]float64(nil), x0...)
	fx := eval(x)
	g := make([]float64, n)
	if math.IsInf(fx, 0) || !grad(g, x) {
		return x, fx, evals
	}
	Hinv := make([]float64, n*n)
	for i := 0; i < n; i++ {
		Hinv[i*n+i] = 1
	}
	p := make([]float64, n)
	xn := make([]float64, n)
	gn := make([]float64, n)
	s := make([]float64, n)
	y := make([]float64, n)
	Hy := make([]float64, n)
	for evals < maxEval {
		gmax := 0.0
		for _, v := range g {
			gmax = math.Max(gmax, math.Abs(v))
		}
		if gmax < gtol {
			break
		}
		slope := 0.0
		for i := 0; i < n; i++ {
			p[i] = 0
			for j := 0; j < n; j++ {
				p[i] -= Hinv[i*n+j] * g[j]
			}
			slope += p[i] * g[i]
		}
		if slope >= 0 {
			// Not a descent direction: reset to steepest descent.
			for i := range Hinv {
				Hinv[i] = 0
			}
			slope = 0
			for i := 0; i < n; i++ {
				Hinv[i*n+i] = 1
				p[i] = -g[i]
				slope -= g[i] * g[i]
			}
		}
		step := 1.0
		var fn float64
		ok := false
		for ls := 0; ls < 40; ls++ {
			for i := range xn {
				xn[i] = x[i] + step*p[i]
			}
			fn = eval(xn)
			if fn <= fx+1e-4*step*slope {
				ok = true
				break
			}
			step *= 0.5
		}
		if !ok || !grad(gn, xn) {
			break
		}
		sy := 0.0
		for i := range s {
			s[i] = xn[i] - x[i]
			y[i] = gn[i] - g[i]
			sy += s[i] * y[i]
		}
		copy(x, xn)
		copy(g, gn)
		improved := fx - fn
		fx = fn
		if sy > 1e-12 {
			// H⁻¹ ← (I − ρ s yᵀ) H⁻¹ (I − ρ y sᵀ) + ρ s sᵀ, ρ = 1/(yᵀs).
			rho := 1 / sy
			yHy := 0.0
			for i := 0; i < n; i++ {
				Hy[i] = 0
				for j := 0; j < n; j++ {
					Hy[i] += Hinv[i*n+j] * y[j]
				}
				yHy += y[i] * Hy[i]
			}
			for i := 0; i < n; i++ {
				for j := 0; j < n; j++ {
					Hinv[i*n+j] += -rho*(s[i]*Hy[j]+Hy[i]*s[j]) + (rho*rho*yHy+rho)*s[i]*s[j]
				}
			}
		}
		if improved < 1e-13*(math.Abs(fx)+1) {
			break
		}
	}
	return x, fx, evals
}
