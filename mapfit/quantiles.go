package mapfit

import (
	"math"
	"math/rand/v2"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// The percentiles of the approximation (Laplace.Median, Lo, Hi).
//
// The optimiser's logistic coordinates keep a bounded parameter inside its
// support, but a Gaussian in them is a poor picture of a posterior that
// leans on a bound: their Jacobian adds a bump that pulls the mode towards
// the middle of the range. The percentiles are therefore those of the
// Laplace approximation in the coordinates where the priors are simple —
// w = ln x for a scale (Positive, LogBounded; x itself with NaturalMAP),
// w = x for the rest — about the MAP (the mode of the posterior density
// in w, which is what Fit maximises), truncated to the support of the
// parameters: a Gaussian N(ŵ, H_w⁻¹) with H_w = −∇∇ ln p_w at ŵ, its
// draws outside a bound or the disk rejected. The marginal percentiles
// come from 20,000 accepted seeded draws. For the scales this is the
// Gaussian in ln x the brief of a log-uniform prior asks for; for a
// parameter far from its bounds it is the plain Laplace approximation.
//
// A parameter at a bound (AtBound) keeps the percentiles of the Gaussian
// in the logistic coordinate and is held at its MAP while the others'
// curvature is taken; what its uncertainty adds to theirs is carried over
// from the logistic coordinates, where it is finite: the difference
// between the marginal and the conditional covariance of the others
// there, (H_u⁻¹)_II − (H_u,II)⁻¹, mapped to w by dw/du. When H_w is not
// positive definite, or too few draws fall inside the support, every
// parameter keeps the percentiles of the logistic coordinates.

// curvatureU is the Laplace step's curvature in u.
type curvatureU struct {
	H, covU *mat.SymDense
	pd      bool
	J       []float64 // dx/du, row-major
	u       []float64
}

// naturalW maps x to w.
func (p *Problem) naturalW(x []float64) []float64 {
	w := append([]float64(nil), x...)
	for i, q := range p.Space {
		if !p.natural && (q.Kind == Positive || q.Kind == LogBounded) {
			w[i] = math.Log(x[i])
		}
	}
	return w
}

// naturalX maps w back to x.
func (p *Problem) naturalX(w []float64) []float64 {
	x := append([]float64(nil), w...)
	for i, q := range p.Space {
		if !p.natural && (q.Kind == Positive || q.Kind == LogBounded) {
			x[i] = math.Exp(w[i])
		}
	}
	return x
}

// inSupport reports whether x lies inside every bound and disk.
func (s Space) inSupport(x []float64) bool {
	for i := 0; i < len(s); i++ {
		q := s[i]
		switch q.Kind {
		case Positive:
			if !(x[i] > 0) {
				return false
			}
		case Bounded, LogBounded:
			if !(x[i] > q.Lo && x[i] < q.Hi) {
				return false
			}
		case DiskPair:
			if !(math.Hypot(x[i], x[i+1]) < q.Hi) {
				return false
			}
			i++
		}
	}
	return true
}

// naturalQuantiles replaces L's percentiles by those of the truncated
// Laplace approximation in w about xhat (see above); it leaves them as
// they are when that approximation is not available.
func (p *Problem) naturalQuantiles(L *Laplace, xhat []float64, cu *curvatureU) {
	d := len(p.Space)
	ab := p.Space.AtBound(xhat)
	var idx []int // the free coordinates of w
	for i, b := range ab {
		if b == Inside && !L.Unconstrained[i] {
			idx = append(idx, i)
		}
	}
	// A disk pair moves together.
	for k := 0; k < len(idx); k++ {
		i := idx[k]
		if p.Space[i].Kind == DiskPair && (k+1 >= len(idx) || idx[k+1] != i+1) {
			idx = append(idx[:k], idx[k+1:]...)
			k--
		}
		if i > 0 && p.Space[i-1].Kind == DiskPair && (k == 0 || idx[k-1] != i-1) {
			idx = append(idx[:k], idx[k+1:]...)
			k--
		}
	}
	n := len(idx)
	if n == 0 {
		return
	}
	w0 := p.naturalW(xhat)
	full := func(v []float64) []float64 {
		w := append([]float64(nil), w0...)
		for k, i := range idx {
			w[i] = v[k]
		}
		return w
	}
	// ln p_w = ln p(x) + Σ ln x over the scales (the Jacobian of ln x).
	logpw := func(v []float64) float64 {
		x := p.naturalX(full(v))
		if !p.Space.inSupport(x) {
			return math.Inf(-1)
		}
		lp := p.LogPost(x)
		if !p.natural {
			lp += p.Space.logScale(x)
		}
		return lp
	}
	steps := make([]float64, n)
	v0 := make([]float64, n)
	for k, i := range idx {
		v0[k] = w0[i]
		q := p.Space[i]
		switch {
		case !p.natural && (q.Kind == Positive || q.Kind == LogBounded):
			steps[k] = 1e-4
		case q.Kind == Bounded:
			steps[k] = 1e-4 * (q.Hi - q.Lo)
		case q.Kind == LogBounded:
			steps[k] = 1e-4 * (q.Hi - q.Lo)
		case q.Kind == DiskPair || (i > 0 && p.Space[i-1].Kind == DiskPair):
			r := q.Hi
			if q.Kind != DiskPair {
				r = p.Space[i-1].Hi
			}
			steps[k] = 1e-4 * r
		default:
			steps[k] = 1e-4 * q.scale()
			if q.Kind == Positive {
				steps[k] = 1e-4 * math.Max(math.Abs(xhat[i]), 1e-300)
			}
		}
	}
	// Keep the steps inside the support.
	for k := range steps {
		for _, sg := range []float64{1, -1} {
			for try := 0; try < 30; try++ {
				v := append([]float64(nil), v0...)
				v[k] += 2 * sg * steps[k]
				if !math.IsInf(logpw(v), -1) {
					break
				}
				steps[k] /= 4
			}
		}
	}
	var gradw func(g, v []float64)
	if p.Grad != nil {
		gradw = func(g, v []float64) {
			w := full(v)
			x := p.naturalX(w)
			gx := make([]float64, d)
			if val := p.Grad(gx, x); math.IsInf(val, 0) || math.IsNaN(val) {
				for k := range g {
					g[k] = math.NaN()
				}
				return
			}
			for k, i := range idx {
				q := p.Space[i]
				if !p.natural && (q.Kind == Positive || q.Kind == LogBounded) {
					g[k] = -(gx[i]*x[i] + 1)
				} else {
					g[k] = -gx[i]
				}
			}
		}
	}
	if p.marginals {
		// Where the Gaussian fails, the marginal (see marginal.go), also
		// when the Gaussian in w cannot be had.
		var u []float64
		if cu != nil {
			u = cu.u
		}
		defer p.refineMarginals(L, xhat, u, idx, steps)
	}
	H := hessianFD(func(v []float64) float64 { return -logpw(v) }, gradw, v0, steps)
	var ch mat.Cholesky
	if !ch.Factorize(H) {
		return
	}
	var cov mat.SymDense
	if ch.InverseTo(&cov) != nil {
		return
	}
	if n < d && cu != nil && cu.pd {
		addBoundVariance(&cov, p, idx, xhat, cu)
	}
	var chc mat.Cholesky
	if !chc.Factorize(&cov) {
		return
	}
	var Lc mat.TriDense
	chc.LTo(&Lc)
	const want = 20000
	rng := rand.New(rand.NewPCG(1, 3))
	draws := make([][]float64, n)
	z := make([]float64, n)
	v := make([]float64, n)
	rejected := 0
	for try := 0; try < 40*want && len(draws[0]) < want; try++ {
		for k := range z {
			z[k] = rng.NormFloat64()
		}
		for a := 0; a < n; a++ {
			s := v0[a]
			for b := 0; b <= a; b++ {
				s += Lc.At(a, b) * z[b]
			}
			v[a] = s
		}
		x := p.naturalX(full(v))
		if !p.Space.inSupport(x) {
			rejected++
			continue
		}
		for k, i := range idx {
			draws[k] = append(draws[k], x[i])
		}
	}
	m := len(draws[0])
	if m < 1000 {
		return
	}
	if m == want && rejected == 0 {
		// No draw fell outside the support: the truncation is nil and the
		// percentiles are the Gaussian's own, exactly.
		for k, i := range idx {
			sd := math.Sqrt(cov.At(k, k))
			at := func(dv float64) float64 {
				w := append([]float64(nil), w0...)
				w[i] = v0[k] + dv
				return p.naturalX(w)[i]
			}
			L.Median[i], L.Lo[i], L.Hi[i] = at(0), at(-sd), at(sd)
		}
		return
	}
	for k, i := range idx {
		s := draws[k]
		sort.Float64s(s)
		q := func(f float64) float64 { return s[int(math.Round(f*float64(m-1)))] }
		L.Median[i], L.Lo[i], L.Hi[i] = q(0.5), q(0.15865525393145707), q(0.8413447460685429)
	}
}

// addBoundVariance adds to cov (the conditional covariance in w of the
// parameters idx) what the others' uncertainty adds in u, mapped to w.
func addBoundVariance(cov *mat.SymDense, p *Problem, idx []int, xhat []float64, cu *curvatureU) {
	n, d := len(idx), len(p.Space)
	hII := mat.NewSymDense(n, nil)
	for a, i := range idx {
		for b, j := range idx[:a+1] {
			hII.SetSym(a, b, cu.H.At(i, j))
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(hII) {
		return
	}
	var cond mat.SymDense
	if ch.InverseTo(&cond) != nil {
		return
	}
	// dw/du on the free block: dx/du, divided by x for a scale.
	x := p.Space.ToX(nil, cu.u)
	D := mat.NewDense(n, n, nil)
	for a, i := range idx {
		f := 1.0
		if q := p.Space[i]; !p.natural && (q.Kind == Positive || q.Kind == LogBounded) {
			f = 1 / x[i]
		}
		for b, j := range idx {
			D.Set(a, b, f*cu.J[i*d+j])
		}
	}
	delta := mat.NewDense(n, n, nil)
	for a, i := range idx {
		for b, j := range idx {
			delta.Set(a, b, cu.covU.At(i, j)-cond.At(a, b))
		}
	}
	var t1, t2 mat.Dense
	t1.Mul(D, delta)
	t2.Mul(&t1, D.T())
	for a := 0; a < n; a++ {
		for b := 0; b <= a; b++ {
			cov.SetSym(a, b, cov.At(a, b)+0.5*(t2.At(a, b)+t2.At(b, a)))
		}
	}
}

// hessianFD returns the Hessian of f at v by central differences of grad
// (when not nil) with the given steps, else by second differences of f.
func hessianFD(f func([]float64) float64, grad func(g, v []float64), v0, steps []float64) *mat.SymDense {
	d := len(v0)
	H := mat.NewSymDense(d, nil)
	v := append([]float64(nil), v0...)
	if grad != nil {
		gp := make([]float64, d)
		gm := make([]float64, d)
		rows := make([][]float64, d)
		for j := 0; j < d; j++ {
			h := steps[j]
			v[j] = v0[j] + h
			grad(gp, v)
			v[j] = v0[j] - h
			grad(gm, v)
			v[j] = v0[j]
			rows[j] = make([]float64, d)
			for i := range rows[j] {
				rows[j][i] = (gp[i] - gm[i]) / (2 * h)
			}
		}
		for i := 0; i < d; i++ {
			for j := 0; j <= i; j++ {
				H.SetSym(i, j, 0.5*(rows[i][j]+rows[j][i]))
			}
		}
		return H
	}
	f0 := f(v0)
	for i := 0; i < d; i++ {
		hi := steps[i]
		v[i] = v0[i] + hi
		fp := f(v)
		v[i] = v0[i] - hi
		fm := f(v)
		v[i] = v0[i]
		H.SetSym(i, i, (fp-2*f0+fm)/(hi*hi))
		for j := 0; j < i; j++ {
			hj := steps[j]
			var s [4]float64
			for k, sg := range [4][2]float64{{1, 1}, {1, -1}, {-1, 1}, {-1, -1}} {
				v[i], v[j] = v0[i]+sg[0]*hi, v0[j]+sg[1]*hj
				s[k] = f(v)
			}
			v[i], v[j] = v0[i], v0[j]
			H.SetSym(i, j, (s[0]-s[1]-s[2]+s[3])/(4*hi*hj))
		}
	}
	return H
}
