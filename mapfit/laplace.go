package mapfit

import (
	"math"
	"math/rand/v2"
	"sort"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/optimize"
)

// Laplace is the Gaussian approximation of a posterior about its mode in
// the transformed coordinates u, where the density is
//
//	q(u) = p(x(u)) |det dx/du|
//
// (the posterior p of the natural parameters carried over with its
// Jacobian). It is found by a short quasi-Newton polish from the MAP, and
// its Hessian H = −∇∇ ln q is taken by central differences (of the
// gradient when one is given). Then
//
//	ln Z ≈ ln q(û) + (d/2) ln 2π − ½ ln det H,
//	Cov(x) ≈ J Σ_u Jᵀ,  Σ_u = H⁻¹,  J = dx/du at û.
//
// Working in u keeps a scale's curvature meaningful near zero and gives a
// parameter at a bound a finite error. When H is not positive definite the
// covariance is taken on the subspace of positive curvature (eigenvalues
// above 1e-10 of the largest) and every parameter with weight in the other
// directions gets a NaN variance; the evidence is then NaN.
//
// Reference: the Laplace approximation as in MacKay 2003, Information
// Theory, Inference and Learning Algorithms, ch. 27 (from memory); see
// docs/methods.md.
type Laplace struct {
	// Cov is the covariance of the natural parameters (rows of
	// unconstrained parameters NaN).
	Cov [][]float64 `json:"covariance"`
	// Errors are the one-sigma errors sqrt(diag Cov); NaN when unknown.
	Errors []float64 `json:"errors"`
	// LogEvidence is ln Z, NaN when H is not positive definite.
	LogEvidence float64 `json:"log_evidence"`
	// PositiveDefinite reports whether H was.
	PositiveDefinite bool `json:"positive_definite"`
	// Unconstrained flags parameters with weight in directions of zero or
	// negative curvature.
	Unconstrained []bool `json:"unconstrained"`
	// Median, Lo and Hi are the 50th, 16th and 84th percentiles of each
	// natural parameter under the approximation: the Gaussian in u
	// mapped back through the transform, so they are asymmetric about
	// the median for a scale or a bounded parameter (compare them with
	// a sampler's quantiles). For a parameter with its own transform
	// they are x(û), x(û − σ_u), x(û + σ_u) exactly; for a disk pair they
	// are the quantiles of 20,000 seeded draws of the pair's Gaussian.
	// NaN where the error is unknown.
	Median []float64 `json:"median"`
	Lo     []float64 `json:"p16"`
	Hi     []float64 `json:"p84"`
	// Marginal flags the parameters whose Median, Lo and Hi are those of
	// the marginal found where the Gaussian failed (Settings.Marginals).
	Marginal []bool `json:"marginal"`

	covU *mat.SymDense // H⁻¹ in u
}

// laplace returns the Laplace approximation about the MAP xhat.
func (p *Problem) laplace(xhat []float64) *Laplace {
	d := len(p.Space)
	out := &Laplace{LogEvidence: math.NaN(), Errors: make([]float64, d), Unconstrained: make([]bool, d),
		Median: make([]float64, d), Lo: make([]float64, d), Hi: make([]float64, d), Marginal: make([]bool, d)}
	for i := range out.Errors {
		out.Errors[i], out.Median[i], out.Lo[i], out.Hi[i] = math.NaN(), math.NaN(), math.NaN(), math.NaN()
	}
	if d == 0 {
		out.PositiveDefinite = true
		out.LogEvidence = p.LogPost(xhat)
		return out
	}
	u, err := p.Space.ToU(nil, xhat)
	if err != nil {
		return out
	}
	h := func(v []float64) float64 { return p.objective(v, true) }
	if math.IsInf(h(u), 1) {
		return out
	}
	// Polish to the mode of q(u).
	pr := optimize.Problem{Func: h, Grad: func(g, v []float64) { p.gradU(g, v, true) }}
	st := &optimize.Settings{FuncEvaluations: 300 * d, GradientThreshold: 1e-7,
		Converger: &optimize.FunctionConverge{Absolute: 1e-10, Relative: 1e-12, Iterations: 20}}
	if r, _ := optimize.Minimize(pr, u, st, &optimize.BFGS{}); r != nil && r.X != nil && r.F <= h(u) && !math.IsNaN(r.F) {
		u = r.X
	}
	f0 := h(u)
	H := p.hessianU(u)
	g := make([]float64, d)
	p.gradU(g, u, true)
	J, _ := p.Space.jacobian(u)
	covU, logdet, pd, bad := invertCurvature(H)
	out.PositiveDefinite = pd
	out.covU = covU
	if covU == nil {
		for i := range out.Unconstrained {
			out.Unconstrained[i] = true
		}
		return out
	}
	if pd {
		// The polish leaves a small gradient g: integrating the quadratic
		// expansion about u adds ½ gᵀH⁻¹g.
		gHg := 0.0
		for i := 0; i < d; i++ {
			for j := 0; j < d; j++ {
				gHg += g[i] * covU.At(i, j) * g[j]
			}
		}
		out.LogEvidence = -f0 + 0.5*float64(d)*math.Log(2*math.Pi) - 0.5*logdet + 0.5*gHg
	}
	out.Cov = make([][]float64, d)
	for i := 0; i < d; i++ {
		out.Cov[i] = make([]float64, d)
		for j := 0; j < d; j++ {
			s := 0.0
			for a := 0; a < d; a++ {
				if J[i*d+a] == 0 {
					continue
				}
				for b := 0; b < d; b++ {
					s += J[i*d+a] * covU.At(a, b) * J[j*d+b]
				}
			}
			out.Cov[i][j] = s
		}
	}
	// A parameter depends on u through its own block only.
	for i := 0; i < d; i++ {
		for a := 0; a < d; a++ {
			if J[i*d+a] != 0 && bad[a] {
				out.Unconstrained[i] = true
			}
		}
	}
	for i := 0; i < d; i++ {
		if out.Unconstrained[i] {
			for j := 0; j < d; j++ {
				out.Cov[i][j], out.Cov[j][i] = math.NaN(), math.NaN()
			}
			continue
		}
		if v := out.Cov[i][i]; v >= 0 {
			out.Errors[i] = math.Sqrt(v)
		}
	}
	p.Space.quantiles(out, u, covU)
	p.naturalQuantiles(out, xhat, &curvatureU{H: H, covU: covU, pd: pd, J: J, u: u})
	return out
}

// quantiles fills L.Median, L.Lo and L.Hi from the Gaussian N(u, covU)
// mapped back to the natural parameters.
func (s Space) quantiles(L *Laplace, u []float64, covU *mat.SymDense) {
	for i := 0; i < len(s); i++ {
		if s[i].Kind == DiskPair {
			if !L.Unconstrained[i] && !L.Unconstrained[i+1] {
				s.diskQuantiles(L, i, u, covU)
			}
			i++
			continue
		}
		if L.Unconstrained[i] {
			continue
		}
		su := math.Sqrt(covU.At(i, i))
		if !(su >= 0) {
			continue
		}
		// Every one-dimensional transform is increasing in u.
		one := Space{s[i]}
		at := func(v float64) float64 { return one.ToX(nil, []float64{v})[0] }
		L.Median[i], L.Lo[i], L.Hi[i] = at(u[i]), at(u[i]-su), at(u[i]+su)
	}
}

// diskQuantiles fills the quantiles of the disk pair at i by seeded draws
// of its 2×2 block of N(u, covU) (the map is not separable).
func (s Space) diskQuantiles(L *Laplace, i int, u []float64, covU *mat.SymDense) {
	a, b, c := covU.At(i, i), covU.At(i, i+1), covU.At(i+1, i+1)
	if !(a > 0) || !(c-b*b/a >= 0) {
		return
	}
	// Cholesky factor of [[a, b], [b, c]].
	l11 := math.Sqrt(a)
	l21 := b / l11
	l22 := math.Sqrt(c - l21*l21)
	const n = 20000
	rng := rand.New(rand.NewPCG(1, 2))
	pair := Space{s[i], s[i+1]}
	h := make([]float64, n)
	k := make([]float64, n)
	v := make([]float64, 2)
	for j := 0; j < n; j++ {
		z1, z2 := rng.NormFloat64(), rng.NormFloat64()
		x := pair.ToX(v, []float64{u[i] + l11*z1, u[i+1] + l21*z1 + l22*z2})
		h[j], k[j] = x[0], x[1]
	}
	for o, w := range [][]float64{h, k} {
		sort.Float64s(w)
		q := func(f float64) float64 { return w[int(math.Round(f*float64(n-1)))] }
		L.Median[i+o], L.Lo[i+o], L.Hi[i+o] = q(0.5), q(0.15865525393145707), q(0.8413447460685429)
	}
}

// hessianU returns H = −∇∇ ln q at u: central differences of the
// gradient (step 1e-4) when Grad is given, else second differences of
// the objective (step 1e-3; u is in natural units of each parameter).
func (p *Problem) hessianU(u []float64) *mat.SymDense {
	f := func(w []float64) float64 { return p.objective(w, true) }
	h := 1e-3
	var grad func(g, v []float64)
	if p.Grad != nil {
		h = 1e-4
		grad = func(g, v []float64) { p.gradU(g, v, true) }
	}
	steps := make([]float64, len(u))
	for i := range steps {
		steps[i] = h
	}
	return hessianFD(f, grad, u, steps)
}

// invertCurvature returns H⁻¹ and ln det H when H is positive definite.
// Otherwise it finds the coordinates that carry the directions without
// positive curvature (for each such eigenvector, its largest component and
// every component with a squared weight above 0.1), flags them in bad, and
// returns the inverse of H restricted to the other coordinates: their
// covariance conditional on the flagged ones held at the mode. A circular
// orbit is the common case: ln L is quartic in √e cos ω and √e sin ω at
// e = 0, while K, P and the phase keep a proper curvature and so an error.
// The rows and columns of flagged coordinates are zero. It returns a nil
// covariance when no coordinate is left or H holds a NaN.
func invertCurvature(H *mat.SymDense) (cov *mat.SymDense, logdet float64, pd bool, bad []bool) {
	d := H.SymmetricDim()
	bad = make([]bool, d)
	for i := 0; i < d; i++ {
		for j := 0; j <= i; j++ {
			if v := H.At(i, j); math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, 0, false, bad
			}
		}
	}
	var ch mat.Cholesky
	if ch.Factorize(H) {
		var inv mat.SymDense
		if err := ch.InverseTo(&inv); err == nil {
			return &inv, ch.LogDet(), true, bad
		}
	}
	// keep maps the coordinates of the current sub-matrix to H's.
	keep := make([]int, d)
	for i := range keep {
		keep[i] = i
	}
	sub := H
	for len(keep) > 0 {
		m := len(keep)
		var eig mat.EigenSym
		if !eig.Factorize(sub, true) {
			return nil, 0, false, bad
		}
		vals := eig.Values(nil)
		var vecs mat.Dense
		eig.VectorsTo(&vecs)
		maxv := 0.0
		for _, v := range vals {
			maxv = math.Max(maxv, v)
		}
		if !(maxv > 0) {
			break
		}
		flag := make([]bool, m)
		for k, lam := range vals {
			if lam > 1e-10*maxv {
				continue
			}
			big, at := 0.0, 0
			for i := 0; i < m; i++ {
				w := vecs.At(i, k)
				if w*w > 0.1 {
					flag[i] = true
				}
				if math.Abs(w) > big {
					big, at = math.Abs(w), i
				}
			}
			flag[at] = true
		}
		var next []int
		for i, f := range flag {
			if f {
				bad[keep[i]] = true
			} else {
				next = append(next, keep[i])
			}
		}
		if len(next) == len(keep) {
			// Every eigenvalue is positive yet the Cholesky failed:
			// the matrix is too ill-conditioned to invert.
			break
		}
		keep = next
		if len(keep) == 0 {
			break
		}
		sub = mat.NewSymDense(len(keep), nil)
		for i, a := range keep {
			for j, b := range keep[:i+1] {
				sub.SetSym(i, j, H.At(a, b))
			}
		}
		var c mat.Cholesky
		if !c.Factorize(sub) {
			continue
		}
		var inv mat.SymDense
		if err := c.InverseTo(&inv); err != nil {
			continue
		}
		cov = mat.NewSymDense(d, nil)
		for i, a := range keep {
			for j, b := range keep[:i+1] {
				cov.SetSym(a, b, inv.At(i, j))
			}
		}
		return cov, 0, false, bad
	}
	for i := range bad {
		bad[i] = true
	}
	return nil, 0, false, bad
}

// LaplaceAt returns the Laplace approximation of p's posterior about the
// MAP xhat (see Laplace), without fitting.
func LaplaceAt(p *Problem, xhat []float64) (*Laplace, error) {
	if err := p.Space.Validate(); err != nil {
		return nil, err
	}
	return p.laplace(xhat), nil
}
