package mapfit

import (
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"

	"spotsift/internal/worker"
)

// Marginal percentiles where the Gaussian fails (Settings.Marginals).
//
// The Laplace approximation describes a posterior by its curvature at the
// mode. Where a parameter's posterior is skewed, or lies along a curved
// ridge, or where the others' spread changes along it (a GP amplitude
// that is pinned down for one quality factor and free for another), or
// where parameters held at a bound would move inside it, its percentiles
// are wrong however its own coordinate is chosen. For such a parameter
// the marginal density is approximated by the Laplace approximation of
// the integral over all the others at each fixed value t of its
// coordinate (Tierney & Kadane 1986, JASA 81, 82, from memory; see
// docs/methods.md §9):
//
//	ln m(t) ≈ max_o ln p_v(t, o) − ½ ln det H_oo(t),
//
// H_oo(t) the curvature of −ln p_v in the others at their conditional
// optimum. It is exact when the others are Gaussian given the parameter,
// whatever their conditional mean and spread do as it moves; unlike the
// profile alone (the first term) it keeps the volume the others leave.
// The coordinates v are the optimiser's u (with its Jacobian, so the
// density vanishes at both bounds and has a mode inside) for a bounded
// parameter, and w of naturalQuantiles (ln x for a scale, x else) for
// the rest; parameters without curvature stay at the MAP (the Gaussian
// percentiles are conditional on them too), and when a parameter with
// curvature lies where neither coordinate can carry it (a disk pair at
// its edge), no parameter is refined. Percentiles do not depend on the coordinate of the
// parameter itself, only the accuracy of the inner Laplace integrals
// does. The joint mode of p_v is found by BFGS (gonum/optimize) from the
// Laplace step's mode and Newton steps; each conditional optimum by
// Newton steps from the Laplace (or the last two points') prediction, the
// Hessian by forward differences of the gradient (n gradients), BFGS
// first where that Hessian is not positive definite.
//
// The test of whether the Gaussian percentiles hold: for a Gaussian,
// ln m(c ± σ_k) = ln m(c) − ½ exactly, c the joint mode and σ_k the
// Laplace error of v_k there, and the median is c. A parameter inside its
// support is refined if either side drops by more than ½ + quadTol or
// less than ½ − quadTol, or if its Gaussian median lies more than
// shiftTol·σ_k from c. Then ln m is evaluated on a grid on each side
// (marginalMaxSteps) until it has fallen by marginalDrop below its
// maximum or the support ends, with points added where it changes by
// more than 1 between two; the 16th, 50th and 84th percentiles are those
// of the density between the points (ln m a cubic Hermite interpolant,
// the last slope carried on beyond an end). If a conditional optimum
// cannot be found, the grid does not close, a profile rises above the
// joint mode's (another optimum of the others: the approximation about
// one fails), or the marginal's 68 % interval leaves out the MAP (for a
// parameter inside its support that would take a marginal more skewed
// than an exponential's; where it happened, the integrals over
// parameters piled against a bound had failed), the parameter keeps its
// Gaussian percentiles.
//
// Cost: for n parameters, about 2n conditional optima for the test (each
// one to three Hessians of n gradients), 10–30 more for each parameter
// refined: a few thousand gradient evaluations for the GP models of
// "model", comparable to one or two of the fit's starts.

const (
	// quadTol: a drop of ½ + ε at ±σ_k means a width on that side of
	// σ_k/√(1 + 2ε) for a locally Gaussian side, so 0.1 flags a side whose
	// width is off by 9 % or more (a third of the 30 % agreement a
	// Laplace error is expected to reach; common practice is to distrust
	// a Laplace interval when the profile deviates from quadratic by this
	// order at one sigma).
	quadTol = 0.1
	// marginalDrop: ln m this far below its maximum (3σ for a Gaussian)
	// leaves less than 0.3 % of the mass beyond, in a tail the last slope
	// describes.
	marginalDrop = 4.5
	// marginalMaxSteps bounds the grid on a side: steps of σ_k to 4σ_k,
	// then each a quarter longer than the last (about 25σ_k in 10 steps,
	// 200σ_k in 20: a flat tail cut by a bound, whose Jacobian in u makes
	// it fall, still closes).
	marginalMaxSteps = 20
	// refineDiff: between two grid points whose ln m differs by more than
	// this, a point is added. The cubic interpolant is exact for a
	// quadratic ln m (a Gaussian), so steps of σ_k only need help where
	// the shape changes fast; 1.5 is the change between σ_k and 2σ_k of a
	// Gaussian (its third step from 2σ_k to 3σ_k, 2.5, is split).
	refineDiff = 1.5
	// modeTol: a profile more than this above the joint mode's (the
	// Newton decrement at which a conditional optimum is accepted, its
	// precision) means the joint mode is not the global one.
	modeTol = 0.05
	// shiftTol: a Gaussian median more than this many σ_k from the joint
	// mode in v (where no parameter is held at a bound) moves each side
	// of the interval by as much: 15 %, half the 30 % agreement asked of
	// a Laplace error.
	shiftTol = 0.15
)

// vProblem is −ln p_v over the coordinates v the marginal integrates:
// the optimiser's u for a bounded parameter (with its Jacobian: the
// density vanishes at both bounds and has a mode inside, even for a
// parameter whose MAP is on a bound), w (see naturalQuantiles) for the
// others. Parameters without curvature stay at the MAP.
type vProblem struct {
	p     *Problem
	idx   []int     // the parameters in v
	inU   []bool    // v[a] is u (a Bounded or LogBounded parameter)
	base  []float64 // x with the others at the MAP
	steps []float64 // finite-difference steps in v
}

// x maps v to the natural parameters.
func (h *vProblem) x(v []float64) []float64 {
	x := append([]float64(nil), h.base...)
	for a, i := range h.idx {
		q := h.p.Space[i]
		switch {
		case h.inU[a]:
			x[i] = Space{q}.ToX(nil, []float64{v[a]})[0]
		case !h.p.natural && (q.Kind == Positive || q.Kind == LogBounded):
			x[i] = math.Exp(v[a])
		default:
			x[i] = v[a]
		}
	}
	return x
}

// f returns −ln p_v(v), +Inf outside the support.
func (h *vProblem) f(v []float64) float64 {
	x := h.x(v)
	if !h.p.Space.inSupport(x) || h.p.cancelled() != nil {
		return math.Inf(1)
	}
	lp := h.p.LogPost(x)
	if math.IsNaN(lp) || math.IsInf(lp, 1) {
		return math.Inf(1)
	}
	for a, i := range h.idx {
		q := h.p.Space[i]
		switch {
		case h.inU[a]:
			_, lj := Space{q}.jacobian([]float64{v[a]})
			lp += lj
		case !h.p.natural && (q.Kind == Positive || q.Kind == LogBounded):
			lp += v[a]
		}
	}
	return -lp
}

// grad stores ∇f(v) in g and returns f(v) (+Inf, g NaN, where the
// posterior vanishes); central differences without Problem.Grad.
func (h *vProblem) grad(g, v []float64) float64 {
	if h.p.Grad == nil {
		vv := append([]float64(nil), v...)
		for a := range v {
			d := h.steps[a]
			vv[a] = v[a] + d
			fp := h.f(vv)
			vv[a] = v[a] - d
			fm := h.f(vv)
			vv[a] = v[a]
			g[a] = (fp - fm) / (2 * d)
		}
		return h.f(v)
	}
	x := h.x(v)
	if !h.p.Space.inSupport(x) || h.p.cancelled() != nil {
		for a := range g {
			g[a] = math.NaN()
		}
		return math.Inf(1)
	}
	gx := make([]float64, len(x))
	lp := h.p.Grad(gx, x)
	if math.IsNaN(lp) || math.IsInf(lp, 0) {
		for a := range g {
			g[a] = math.NaN()
		}
		return math.Inf(1)
	}
	for a, i := range h.idx {
		q := h.p.Space[i]
		switch {
		case h.inU[a]:
			one := Space{q}
			J, lj := one.jacobian([]float64{v[a]})
			_, lp1 := one.jacobian([]float64{v[a] + 1e-5})
			_, lm1 := one.jacobian([]float64{v[a] - 1e-5})
			g[a] = -(gx[i]*J[0] + (lp1-lm1)/2e-5)
			lp += lj
		case !h.p.natural && (q.Kind == Positive || q.Kind == LogBounded):
			g[a] = -(gx[i]*x[i] + 1)
			lp += v[a]
		default:
			g[a] = -gx[i]
		}
	}
	return -lp
}

// local returns f, its gradient and its Hessian in the coordinates
// keep of v (the others held): forward differences of the gradient
// (n + 1 gradients), else second differences of f.
func (h *vProblem) local(v []float64, keep []int) (f float64, g []float64, H *mat.SymDense) {
	n := len(v)
	full := make([]float64, n)
	f = h.grad(full, v)
	m := len(keep)
	g = make([]float64, m)
	for b, a := range keep {
		g[b] = full[a]
	}
	if math.IsInf(f, 1) {
		return f, g, nil
	}
	sub := func(y []float64) []float64 {
		vv := append([]float64(nil), v...)
		for b, a := range keep {
			vv[a] = y[b]
		}
		return vv
	}
	y0 := make([]float64, m)
	st := make([]float64, m)
	for b, a := range keep {
		y0[b], st[b] = v[a], h.steps[a]
	}
	H = mat.NewSymDense(m, nil)
	if h.p.Grad == nil {
		return f, g, hessianFD(func(y []float64) float64 { return h.f(sub(y)) }, nil, y0, st)
	}
	rows := make([][]float64, m)
	y := append([]float64(nil), y0...)
	for b := range keep {
		y[b] = y0[b] + st[b]
		h.grad(full, sub(y))
		y[b] = y0[b]
		rows[b] = make([]float64, m)
		for c, a := range keep {
			rows[b][c] = (full[a] - g[c]) / st[b]
		}
	}
	for b := 0; b < m; b++ {
		for c := 0; c <= b; c++ {
			H.SetSym(b, c, 0.5*(rows[b][c]+rows[c][b]))
		}
	}
	return f, g, H
}

// mpoint is a grid point of ln m: the coordinate's value t, ln m, and the
// conditional optimum v (v[k] = t).
type mpoint struct {
	t, lm float64
	lp    float64 // the profile: max over the others of ln p_v
	v     []float64
}

// profile returns ln m(t) for coordinate k (up to a constant), the
// others started at v: Newton steps (the Hessian by differences of the
// gradient) until the decrement ½ gᵀH⁻¹g that a step would still gain
// is below 0.05, that gain added. ok is false when the start lies outside
// the support, H is not positive definite or three steps do not get
// there.
func (h *vProblem) profile(k int, t float64, v []float64) (mp mpoint, ok bool) {
	n := len(v)
	v = append([]float64(nil), v...)
	v[k] = t
	keep := make([]int, 0, n-1)
	for a := 0; a < n; a++ {
		if a != k {
			keep = append(keep, a)
		}
	}
	if len(keep) == 0 {
		f := h.f(v)
		return mpoint{t: t, lm: -f, lp: -f, v: v}, !math.IsInf(f, 1)
	}
	polished := false
	for it := 0; it < 4; it++ {
		f, g, H := h.local(v, keep)
		if math.IsInf(f, 1) || H == nil {
			return mp, false
		}
		var ch mat.Cholesky
		if !ch.Factorize(H) {
			if polished {
				return mp, false
			}
			// Not yet in the optimum's basin: BFGS (gonum/optimize) first.
			polished = true
			v = h.polish(v, keep)
			it--
			continue
		}
		z := mat.NewVecDense(len(keep), nil)
		if ch.SolveVecTo(z, mat.NewVecDense(len(keep), g)) != nil {
			return mp, false
		}
		dec := 0.5 * mat.Dot(z, mat.NewVecDense(len(keep), g))
		if math.IsNaN(dec) {
			return mp, false
		}
		if dec < 0.05 {
			nv := append([]float64(nil), v...)
			for b, a := range keep {
				nv[a] -= z.AtVec(b)
			}
			return mpoint{t: t, lm: -f + dec - 0.5*ch.LogDet(), lp: -f + dec, v: nv}, true
		}
		if it == 3 {
			break
		}
		// A Newton step, halved until f decreases.
		for step := 1.0; step > 1e-3; step /= 2 {
			nv := append([]float64(nil), v...)
			for b, a := range keep {
				nv[a] -= step * z.AtVec(b)
			}
			if fn := h.f(nv); fn < f {
				v = nv
				break
			}
		}
	}
	return mp, false
}

// polish returns the minimum of f over the coordinates keep of v (the
// others held) found by gonum's BFGS from v.
func (h *vProblem) polish(v []float64, keep []int) []float64 {
	full := func(y []float64) []float64 {
		vv := append([]float64(nil), v...)
		for b, a := range keep {
			vv[a] = y[b]
		}
		return vv
	}
	y0 := make([]float64, len(keep))
	for b, a := range keep {
		y0[b] = v[a]
	}
	g := make([]float64, len(v))
	pr := optimize.Problem{Func: func(y []float64) float64 { return h.f(full(y)) },
		Grad: func(gy, y []float64) {
			h.grad(g, full(y))
			for b, a := range keep {
				gy[b] = g[a]
			}
		}}
	st := &optimize.Settings{FuncEvaluations: 100 * len(keep), GradientThreshold: 1e-6,
		Converger: &optimize.FunctionConverge{Absolute: 1e-8, Iterations: 10}}
	if r, _ := optimize.Minimize(pr, y0, st, &optimize.BFGS{}); r != nil && r.X != nil && r.F <= h.f(v) && !math.IsNaN(r.F) {
		return full(r.X)
	}
	return v
}

// marginal returns the percentiles (16th, 50th, 84th) of coordinate k's
// marginal, or ok false when the Gaussian ones hold (or the marginal
// cannot be found). c is ln m at the mode, cov the Laplace covariance in
// v there.
func (h *vProblem) marginal(k int, c mpoint, cov *mat.SymDense, med float64) (q [3]float64, ok bool) {
	n := len(c.v)
	sig := math.Sqrt(cov.At(k, k))
	if !(sig > 0) {
		return q, false
	}
	// dir: the Laplace conditional mean of the others per unit of v_k.
	dir := make([]float64, n)
	for j := range dir {
		dir[j] = cov.At(j, k) / cov.At(k, k)
	}
	along := func(from mpoint, t float64, slope []float64) []float64 {
		v := append([]float64(nil), from.v...)
		for j := range v {
			v[j] += slope[j] * (t - from.t)
		}
		return v
	}
	c.t = c.v[k]
	// The test at ±σ_k.
	lo, okl := h.profile(k, c.t-sig, along(c, c.t-sig, dir))
	hi, okh := h.profile(k, c.t+sig, along(c, c.t+sig, dir))
	if okl && okh && math.Abs(c.lm-lo.lm-0.5) <= quadTol && math.Abs(c.lm-hi.lm-0.5) <= quadTol && !(math.Abs(med-c.t) > shiftTol*sig) {
		return q, false
	}
	top := c.lm
	side := func(sg float64, known mpoint, have bool) (pts []mpoint, edge, fine bool) {
		prev, slope := c, dir
		dt, step := 0.0, 1.0
		for i := 1; ; i++ {
			if dt >= 4 {
				step *= 1.25
			}
			dt += step
			if i > marginalMaxSteps {
				return pts, false, false
			}
			t := c.t + sg*dt*sig
			var mp mpoint
			ok := false
			if i == 1 && have {
				mp, ok = known, true
			} else {
				mp, ok = h.profile(k, t, along(prev, t, slope))
			}
			if !ok {
				// Outside the support from the last optimum as well: the
				// side ends at the support.
				v := append([]float64(nil), prev.v...)
				v[k] = t
				if math.IsInf(h.f(v), 1) {
					return pts, true, true
				}
				if mp, ok = h.profile(k, t, prev.v); !ok {
					return pts, false, false
				}
			}
			pts = append(pts, mp)
			top = math.Max(top, mp.lm)
			if mp.lm < top-marginalDrop {
				return pts, false, true
			}
			slope = make([]float64, n)
			for j := range slope {
				slope[j] = (mp.v[j] - prev.v[j]) / (mp.t - prev.t)
			}
			prev = mp
		}
	}
	left, edgeL, fineL := side(-1, lo, okl)
	right, edgeR, fineR := side(1, hi, okh)
	if !fineL || !fineR {
		return q, false
	}
	pts := append(append(left, c), right...)
	sort.Slice(pts, func(a, b int) bool { return pts[a].t < pts[b].t })
	// No profile may rise above the joint mode's: where one does, the
	// others have another optimum (the conditional is multimodal) and the
	// approximation that integrates them about one optimum fails.
	for _, p := range pts {
		if p.lp > c.lp+modeTol {
			return q, false
		}
	}
	// Where ln m changes by more than refineDiff between two points, halve
	// the step (down to σ_k/8), starting from the mean of their optima.
	for extra := 0; extra < 40; {
		added := false
		for j := 0; j+1 < len(pts) && extra < 40; j++ {
			a, b := pts[j], pts[j+1]
			if math.Abs(b.lm-a.lm) <= refineDiff || b.t-a.t < sig/8 {
				continue
			}
			v := make([]float64, n)
			for i := range v {
				v[i] = 0.5 * (a.v[i] + b.v[i])
			}
			mp, ok := h.profile(k, 0.5*(a.t+b.t), v)
			if !ok {
				return q, false
			}
			pts = append(pts[:j+1], append([]mpoint{mp}, pts[j+1:]...)...)
			extra++
			added = true
			j++
		}
		if !added {
			break
		}
	}
	return gridQuantiles(pts, edgeL, edgeR)
}

// refineMarginals replaces the percentiles of every parameter inside its
// support whose marginal the Gaussian misses (see above). u is the mode
// of the Laplace step in the optimiser's coordinates, steps the finite-
// difference steps of naturalQuantiles for the parameters in free.
func (p *Problem) refineMarginals(L *Laplace, xhat, u []float64, free []int, wsteps []float64) {
	ab := p.Space.AtBound(xhat)
	h := &vProblem{p: p, base: append([]float64(nil), xhat...)}
	var v0 []float64
	isFree := map[int]float64{}
	for k, i := range free {
		isFree[i] = wsteps[k]
	}
	w0 := p.naturalW(xhat)
	for i := range p.Space {
		q := p.Space[i]
		st, free := isFree[i]
		switch {
		case L.Unconstrained[i]:
		case (q.Kind == Bounded || q.Kind == LogBounded) && u != nil:
			// In u, where the density vanishes at both bounds.
			h.idx, h.inU, h.steps = append(h.idx, i), append(h.inU, true), append(h.steps, 1e-4)
			v0 = append(v0, u[i])
		case free:
			h.idx, h.inU, h.steps = append(h.idx, i), append(h.inU, false), append(h.steps, st)
			v0 = append(v0, w0[i])
		default:
			// A parameter with curvature that v cannot carry (a disk pair
			// at its edge): the marginals would leave out what its
			// uncertainty adds to the others', which the Gaussian
			// percentiles keep (addBoundVariance). They stay.
			return
		}
	}
	n := len(v0)
	if n == 0 {
		return
	}
	all := make([]int, n)
	for a := range all {
		all[a] = a
	}
	// The mode in v: BFGS (gonum/optimize) from the Laplace step's mode
	// in u, then Newton steps.
	if u != nil {
		xu := p.Space.ToX(nil, u)
		wu := p.naturalW(xu)
		for a, i := range h.idx {
			if !h.inU[a] {
				v0[a] = wu[i]
			}
		}
		if !p.Space.inSupport(h.x(v0)) {
			return
		}
	}
	pr := optimize.Problem{Func: h.f, Grad: func(g, v []float64) { h.grad(g, v) }}
	st := &optimize.Settings{FuncEvaluations: 300 * n, GradientThreshold: 1e-7,
		Converger: &optimize.FunctionConverge{Absolute: 1e-10, Relative: 1e-12, Iterations: 20}}
	if r, _ := optimize.Minimize(pr, v0, st, &optimize.BFGS{}); r != nil && r.X != nil && r.F <= h.f(v0) && !math.IsNaN(r.F) {
		v0 = r.X
	}
	var cov mat.SymDense
	var c mpoint
	found := false
	v := v0
	for it := 0; it < 6 && !found; it++ {
		f, g, H := h.local(v, all)
		var ch mat.Cholesky
		if math.IsInf(f, 1) || H == nil || !ch.Factorize(H) {
			return
		}
		z := mat.NewVecDense(n, nil)
		if ch.SolveVecTo(z, mat.NewVecDense(n, g)) != nil {
			return
		}
		dec := 0.5 * mat.Dot(z, mat.NewVecDense(n, g))
		if dec < 1e-3 {
			if ch.InverseTo(&cov) != nil {
				return
			}
			// ln m of a coordinate at the mode: det H_oo = det H · Σ_kk.
			c = mpoint{lm: -f + dec - 0.5*ch.LogDet(), lp: -f + dec, v: v}
			found = true
			break
		}
		for step := 1.0; step > 1e-3; step /= 2 {
			nv := append([]float64(nil), v...)
			for a := range nv {
				nv[a] -= step * z.AtVec(a)
			}
			if h.f(nv) < f {
				v = nv
				break
			}
		}
	}
	if !found {
		return
	}
	// One parameter per job; each writes only its own entries of L, so the
	// result does not depend on the number of workers.
	one1 := func(k int) {
		i := h.idx[k]
		if ab[i] != Inside {
			return
		}
		one := Space{p.Space[i]}
		// toX maps v_k back to x_i.
		toX := func(t float64) float64 {
			if h.inU[k] {
				return one.ToX(nil, []float64{t})[0]
			}
			w := append([]float64(nil), w0...)
			w[i] = t
			return p.naturalX(w)[i]
		}
		// The Gaussian median in v_k.
		med := math.NaN()
		if h.inU[k] {
			if uu, err := one.ToU(nil, []float64{L.Median[i]}); err == nil {
				med = uu[0]
			}
		} else if !math.IsNaN(L.Median[i]) {
			xm := h.x(c.v)
			xm[i] = L.Median[i]
			med = p.naturalW(xm)[i]
		}
		ck := c
		ck.lm -= 0.5 * math.Log(cov.At(k, k))
		q, ok := h.marginal(k, ck, &cov, med)
		if !ok {
			return
		}
		lo, med, hi := toX(q[0]), toX(q[1]), toX(q[2])
		if !(lo <= xhat[i] && xhat[i] <= hi) {
			// The MAP outside the 68 % of its own marginal contradicts
			// the fit the marginal comes from: the Laplace integrals over
			// the others failed (seen with three kernel parameters piled
			// against their upper bounds). The Gaussian stays.
			return
		}
		L.Lo[i], L.Median[i], L.Hi[i] = lo, med, hi
		L.Marginal[i] = true
	}
	nw := min(max(p.workers, 1), n)
	if nw == 1 {
		for k := range h.idx {
			one1(k)
		}
		return
	}
	jobs := make(chan int)
	var wg worker.Group
	for w := 0; w < nw; w++ {
		wg.Go(func() {
			for k := range jobs {
				one1(k)
			}
		})
	}
	wg.Feed(jobs, n)
	wg.Rethrow()
}

// gridQuantiles returns the 16th, 50th and 84th percentiles of the
// density exp(lm) given at the points (sorted by t), ln m a cubic between
// them; beyond an end the last slope goes on (half a step where the
// support ends, edge, else to infinity).
func gridQuantiles(pts []mpoint, edgeLo, edgeHi bool) (q [3]float64, ok bool) {
	if len(pts) < 3 {
		return q, false
	}
	top := math.Inf(-1)
	for _, p := range pts {
		top = math.Max(top, p.lm)
	}
	type bin struct{ c, m, w float64 }
	var bins []bin
	const sub = 16
	// add puts [a, b] into bins, ln m there given by lm.
	add := func(a, b float64, lm func(float64) float64) {
		h := (b - a) / sub
		for j := 0; j < sub; j++ {
			c := a + (float64(j)+0.5)*h
			bins = append(bins, bin{c: c, m: math.Exp(lm(c)-top) * h, w: h})
		}
	}
	// Between the points, ln m is the cubic Hermite interpolant with
	// slopes from the three-point formula (one-sided at the ends).
	n := len(pts)
	d := make([]float64, n)
	for j := range pts {
		switch {
		case j == 0:
			d[j] = (pts[1].lm - pts[0].lm) / (pts[1].t - pts[0].t)
		case j == n-1:
			d[j] = (pts[j].lm - pts[j-1].lm) / (pts[j].t - pts[j-1].t)
		default:
			h0, h1 := pts[j].t-pts[j-1].t, pts[j+1].t-pts[j].t
			s0, s1 := (pts[j].lm-pts[j-1].lm)/h0, (pts[j+1].lm-pts[j].lm)/h1
			d[j] = (h1*s0 + h0*s1) / (h0 + h1)
		}
	}
	for j := 0; j+1 < n; j++ {
		a, b := pts[j], pts[j+1]
		h, da, db := b.t-a.t, d[j], d[j+1]
		add(a.t, b.t, func(x float64) float64 {
			u := (x - a.t) / h
			h00, h10 := 2*u*u*u-3*u*u+1, u*u*u-2*u*u+u
			h01, h11 := -2*u*u*u+3*u*u, u*u*u-u*u
			return h00*a.lm + h10*h*da + h01*b.lm + h11*h*db
		})
	}
	// The tails: the last slope carried on, outwards; half a step where
	// the support ends.
	tail := func(b mpoint, s, step float64, edge bool) {
		// s: the slope of ln m outwards, step the last step (signed).
		far := 0.5 * math.Abs(step)
		if !edge {
			s = math.Min(s, -1/math.Abs(step)) // at least e⁻¹ per step
			far = 12 / -s                      // e⁻¹² further out
		}
		x := b.t + math.Copysign(far, step)
		add(math.Min(b.t, x), math.Max(b.t, x), func(y float64) float64 { return b.lm + s*math.Abs(y-b.t) })
	}
	tail(pts[0], -d[0], pts[0].t-pts[1].t, edgeLo)
	tail(pts[n-1], d[n-1], pts[n-1].t-pts[n-2].t, edgeHi)
	total := 0.0
	for _, b := range bins {
		total += b.m
	}
	if !(total > 0) || math.IsInf(total, 0) {
		return q, false
	}
	cdf := func(t float64) float64 {
		s := 0.0
		for _, b := range bins {
			sd := b.w / math.Sqrt(12)
			s += b.m * 0.5 * math.Erfc(-(t-b.c)/(sd*math.Sqrt2))
		}
		return s / total
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, b := range bins {
		sd := b.w / math.Sqrt(12)
		lo, hi = math.Min(lo, b.c-10*sd), math.Max(hi, b.c+10*sd)
	}
	for j, f := range []float64{0.15865525393145707, 0.5, 0.8413447460685429} {
		a, b := lo, hi
		for it := 0; it < 60; it++ {
			m := 0.5 * (a + b)
			if cdf(m) < f {
				a = m
			} else {
				b = m
			}
		}
		q[j] = 0.5 * (a + b)
	}
	return q, true
}
