package gp

import (
	"fmt"
	"math"
	"sort"
	"sync"
)

// MultiRotation is the multi-output model of Rajpaul et al. (2015) with a
// rotation latent process, solved in O(N): one latent process G with the
// unit-amplitude two-oscillator kernel RotationSHO{Amp: 1, Period,
// Quality, QualityGap, Mix} and its time derivative drive every output,
//
//	y_o(t) = C_o G(t) + R_o dG/dt(t),
//
// each series on its own epochs with its own white jitter. Each
// oscillator of the latent kernel is one celerite term
//
//	k(τ) = e^(−c|τ|) [a cos dτ + b sin d|τ|],
//
// and its lag derivatives keep that form for τ > 0 (k' has coefficients
// a1 = −ca + db, b1 = −cb − da, and k″ the same map applied again), so the
// covariance of output o at t_n and output o' at an earlier t_m,
// x_oᵀ M(t_n − t_m) x_o' with x = (C, R) and M = [[k, −k'], [k', −k”]],
// is a sum over terms of e^(−c(t_n−t_m)) U_n·V_m with four columns per
// term:
//
//	U_n = [cos(d t_n) Mcᵀx + sin(d t_n) Msᵀx,  sin(d t_n) Mcᵀx − cos(d t_n) Msᵀx]
//	V_m = [cos(d t_m) x',  sin(d t_m) x']
//
// with Mc, Ms the cosine and sine coefficient matrices of M. The stacked
// covariance of all series (merged in time order) is therefore
// semiseparable of rank 8, factorised by the celerite recurrences in
// O(N·64), and the log-likelihood's gradient with respect to every
// parameter comes from differentiating those recurrences in reverse
// (analytic, O(N·64) again). The oscillators' k'(0) = 0, so the derivative
// process exists and the cross-covariances at equal epochs are consistent.
//
// Parameter vector: Period, Quality, QualityGap, Mix of the latent kernel,
// then (C, R) of each output, then one jitter per series (≥ 0, unit of
// that series).
//
// References: Rajpaul, Aigrain, Osborne, Reece & Roberts 2015, MNRAS 452,
// 2269 (the model); Foreman-Mackey, Agol, Ambikasaran & Angus 2017, AJ 154,
// 220 (the celerite recurrences); Delisle, Unger, Hara & Ségransan 2022,
// A&A 659, A182 (semiseparable multi-output GPs with derivatives); see
// docs/methods.md.
type MultiRotation struct {
	outputs []string
	series  []Series
	// merged order: point k is epoch pos[k] of series ser[k], at t[k].
	ser []int
	pos []int
	t   []float64
}

const mrTerms = 2          // oscillators at P and P/2
const mrRank = 4 * mrTerms // semiseparable rank
const mrLatent = 4         // Period, Quality, QualityGap, Mix

// NewMultiRotation returns the model for the named outputs and the
// observed series (each Series.Output indexes outputs; times in any
// order, variances nil meaning zero).
func NewMultiRotation(outputs []string, series []Series) (*MultiRotation, error) {
	if len(outputs) == 0 || len(series) == 0 {
		return nil, ErrNoData
	}
	m := &MultiRotation{outputs: append([]string(nil), outputs...)}
	for i, sr := range series {
		if sr.Output < 0 || sr.Output >= len(outputs) {
			return nil, fmt.Errorf("%w: series %d: output %d of %d", ErrSeries, i, sr.Output, len(outputs))
		}
		if err := checkTimes(sr.T, sr.Variance, false); err != nil {
			return nil, fmt.Errorf("series %d (%s): %w", i, outputs[sr.Output], err)
		}
		c := Series{Output: sr.Output, T: append([]float64(nil), sr.T...), Variance: make([]float64, len(sr.T))}
		if sr.Variance != nil {
			copy(c.Variance, sr.Variance)
		}
		m.series = append(m.series, c)
		for j := range sr.T {
			m.ser = append(m.ser, i)
			m.pos = append(m.pos, j)
		}
	}
	idx := make([]int, len(m.ser))
	for i := range idx {
		idx[i] = i
	}
	tt := func(k int) float64 { return m.series[m.ser[k]].T[m.pos[k]] }
	sort.SliceStable(idx, func(a, b int) bool { return tt(idx[a]) < tt(idx[b]) })
	ser, pos := make([]int, len(idx)), make([]int, len(idx))
	m.t = make([]float64, len(idx))
	for k, i := range idx {
		ser[k], pos[k] = m.ser[i], m.pos[i]
		m.t[k] = m.series[ser[k]].T[pos[k]]
	}
	m.ser, m.pos = ser, pos
	return m, nil
}

// Len returns the total number of points.
func (m *MultiRotation) Len() int { return len(m.t) }

// NumParams returns 4 + 2·outputs + series.
func (m *MultiRotation) NumParams() int { return mrLatent + 2*len(m.outputs) + len(m.series) }

// Dense returns the equivalent dense model (for checks and small data):
// the Multi with a unit RotationSHO latent kernel and the jitters.
func (m *MultiRotation) Dense(p []float64) (Multi, []float64, error) {
	if err := m.check(p); err != nil {
		return Multi{}, nil, err
	}
	mm := Multi{Latent: RotationSHO{Amp: 1, Period: p[0], Quality: p[1], QualityGap: p[2], Mix: p[3]}}
	for o, name := range m.outputs {
		mm.Outputs = append(mm.Outputs, Output{Name: name, C: p[mrLatent+2*o], R: p[mrLatent+2*o+1]})
	}
	return mm, append([]float64(nil), p[mrLatent+2*len(m.outputs):]...), nil
}

func (m *MultiRotation) check(p []float64) error {
	if len(p) != m.NumParams() {
		return fmt.Errorf("%w: MultiRotation needs %d, got %d", ErrParamCount, m.NumParams(), len(p))
	}
	for i, v := range p {
		if isBad(v) {
			return &ParamError{Kernel: "MultiRotation", Name: fmt.Sprintf("p[%d]", i), Value: v, Reason: "must be finite"}
		}
	}
	if err := (RotationSHO{Amp: 1, Period: p[0], Quality: p[1], QualityGap: p[2], Mix: p[3]}).Validate(); err != nil {
		return err
	}
	for i, j := range p[mrLatent+2*len(m.outputs):] {
		if err := nonNegative("MultiRotation", fmt.Sprintf("jitter[%d]", i), j); err != nil {
			return err
		}
	}
	return nil
}

// termCoef holds one oscillator's coefficients of k, k' and k” for τ > 0
// and its damping c and frequency d.
type termCoef struct{ a, b, a1, b1, a2, b2, c, d float64 }

func newTermCoef(a, b, c, d float64) termCoef {
	a1, b1 := -c*a+d*b, -c*b-d*a
	return termCoef{a: a, b: b, a1: a1, b1: b1, a2: -c*a1 + d*b1, b2: -c*b1 - d*a1, c: c, d: d}
}

// rotationTerms returns the two oscillators of the unit RotationSHO and
// the Jacobian of (a, b, c, d) of each with respect to (Period, Quality,
// QualityGap, Mix): with q1 = ½ + Quality + QualityGap, q2 = ½ + Quality,
// f = √(4q² − 1),
//
//	term 1: a = 1/(1+m),  b = a/f1, c = 2π/(P f1), d = 2π/P
//	term 2: a = m/(1+m),  b = a/f2, c = 4π/(P f2), d = 4π/P
//
// (RotationSHO's oscillators in celerite form, an identity of SHO.Terms).
func rotationTerms(P, Q, G, mix float64) ([mrTerms]termCoef, [mrTerms][4][mrLatent]float64) {
	var tc [mrTerms]termCoef
	var jac [mrTerms][4][mrLatent]float64
	q1, q2 := 0.5+Q+G, 0.5+Q
	f1, f2 := math.Sqrt(4*q1*q1-1), math.Sqrt(4*q2*q2-1)
	df1, df2 := 4*q1/f1, 4*q2/f2 // df/dq
	a1, a2 := 1/(1+mix), mix/(1+mix)
	da1, da2 := -1/((1+mix)*(1+mix)), 1/((1+mix)*(1+mix))
	b1, b2 := a1/f1, a2/f2
	c1, c2 := 2*math.Pi/(P*f1), 4*math.Pi/(P*f2)
	d1, d2 := 2*math.Pi/P, 4*math.Pi/P
	tc[0] = newTermCoef(a1, b1, c1, d1)
	tc[1] = newTermCoef(a2, b2, c2, d2)
	// Rows a, b, c, d; columns P, Q, G, m.
	jac[0][0][3] = da1
	jac[0][1] = [mrLatent]float64{0, -b1 / f1 * df1, -b1 / f1 * df1, da1 / f1}
	jac[0][2] = [mrLatent]float64{-c1 / P, -c1 / f1 * df1, -c1 / f1 * df1, 0}
	jac[0][3][0] = -d1 / P
	jac[1][0][3] = da2
	jac[1][1] = [mrLatent]float64{0, -b2 / f2 * df2, 0, da2 / f2}
	jac[1][2] = [mrLatent]float64{-c2 / P, -c2 / f2 * df2, 0, 0}
	jac[1][3][0] = -d2 / P
	return tc, jac
}

// mrWork is the workspace of one evaluation.
type mrWork struct {
	u, v, phi, w, f []float64 // N×R
	s               []float64 // N×R×R (S_n)
	a, d, z, y      []float64 // N
	cs              []float64 // N×terms×2 (cos, sin of d t)
	// adjoints (LogLikelihoodGrad)
	bU, bV, bPhi, bW []float64 // N×R
	bD, bA, bz       []float64 // N
}

var mrPool sync.Pool

func (m *MultiRotation) work() *mrWork {
	n := len(m.t)
	ws, _ := mrPool.Get().(*mrWork)
	if ws == nil || cap(ws.a) < n {
		ws = &mrWork{
			u: make([]float64, n*mrRank), v: make([]float64, n*mrRank), phi: make([]float64, n*mrRank),
			w: make([]float64, n*mrRank), f: make([]float64, n*mrRank), s: make([]float64, n*mrRank*mrRank),
			a: make([]float64, n), d: make([]float64, n), z: make([]float64, n), y: make([]float64, n),
			cs: make([]float64, n*mrTerms*2),
			bU: make([]float64, n*mrRank), bV: make([]float64, n*mrRank), bPhi: make([]float64, n*mrRank), bW: make([]float64, n*mrRank),
			bD: make([]float64, n), bA: make([]float64, n), bz: make([]float64, n),
		}
	}
	return ws
}

// LogLikelihood returns ln L of per-series residuals r (one slice per
// series, in the order given to NewMultiRotation) at parameters p.
func (m *MultiRotation) LogLikelihood(p []float64, r [][]float64) (float64, error) {
	return m.eval(p, r, nil, nil)
}

// LogLikelihoodGrad returns ln L and stores its gradient with respect to
// p in grad (len NumParams).
func (m *MultiRotation) LogLikelihoodGrad(grad, p []float64, r [][]float64) (float64, error) {
	if len(grad) != m.NumParams() {
		return math.Inf(-1), fmt.Errorf("%w: gradient has %d slots for %d parameters", ErrLength, len(grad), m.NumParams())
	}
	return m.eval(p, r, grad, nil)
}

// LogLikelihoodGradResid is LogLikelihoodGrad that also stores the
// gradient with respect to the residuals, ∂ln L/∂r = −K⁻¹r, in dr (one
// slice per series, shaped as r), for models whose residuals depend on
// further parameters (a mean model fitted jointly).
func (m *MultiRotation) LogLikelihoodGradResid(grad []float64, dr [][]float64, p []float64, r [][]float64) (float64, error) {
	if len(grad) != m.NumParams() {
		return math.Inf(-1), fmt.Errorf("%w: gradient has %d slots for %d parameters", ErrLength, len(grad), m.NumParams())
	}
	if err := m.checkR(dr); err != nil {
		return math.Inf(-1), err
	}
	return m.eval(p, r, grad, dr)
}

func (m *MultiRotation) checkR(r [][]float64) error {
	if len(r) != len(m.series) {
		return fmt.Errorf("%w: %d residual slices for %d series", ErrLength, len(r), len(m.series))
	}
	for i, v := range r {
		if len(v) != len(m.series[i].T) {
			return fmt.Errorf("%w: series %d has %d epochs and %d values", ErrLength, i, len(m.series[i].T), len(v))
		}
		if err := checkFinite("residuals", v); err != nil {
			return err
		}
	}
	return nil
}

// factor fills the generators and factorises; it returns the terms.
func (m *MultiRotation) factor(ws *mrWork, p []float64) ([mrTerms]termCoef, error) {
	const R = mrRank
	n := len(m.t)
	tc, _ := rotationTerms(p[0], p[1], p[2], p[3])
	no := len(m.outputs)
	jit := p[mrLatent+2*no:]
	t0 := m.t[0]
	for k := 0; k < n; k++ {
		s := m.ser[k]
		o := m.series[s].Output
		C, Rc := p[mrLatent+2*o], p[mrLatent+2*o+1]
		tt := m.t[k] - t0
		A := m.series[s].Variance[m.pos[k]] + jit[s]*jit[s]
		u := ws.u[k*R : k*R+R]
		v := ws.v[k*R : k*R+R]
		ph := ws.phi[k*R : k*R+R]
		for j, c := range tc {
			sn, cn := math.Sincos(c.d * tt)
			ws.cs[2*(k*mrTerms+j)], ws.cs[2*(k*mrTerms+j)+1] = cn, sn
			mc0, mc1 := c.a*C+c.a1*Rc, -c.a1*C-c.a2*Rc
			ms0, ms1 := c.b*C+c.b1*Rc, -c.b1*C-c.b2*Rc
			q := 4 * j
			u[q], u[q+1], u[q+2], u[q+3] = cn*mc0+sn*ms0, cn*mc1+sn*ms1, sn*mc0-cn*ms0, sn*mc1-cn*ms1
			v[q], v[q+1], v[q+2], v[q+3] = cn*C, cn*Rc, sn*C, sn*Rc
			e := 0.0
			if k > 0 {
				e = math.Exp(-c.c * (m.t[k] - m.t[k-1]))
			}
			ph[q], ph[q+1], ph[q+2], ph[q+3] = e, e, e, e
			A += c.a*C*C - c.a2*Rc*Rc
		}
		ws.a[k] = A
	}
	var Sprev []float64
	for k := 0; k < n; k++ {
		S := ws.s[k*R*R : (k+1)*R*R]
		u := ws.u[k*R : k*R+R]
		wk := ws.w[k*R : k*R+R]
		copy(wk, ws.v[k*R:k*R+R])
		a := ws.a[k]
		if k == 0 {
			for i := range S {
				S[i] = 0
			}
		} else {
			ph := ws.phi[k*R : k*R+R]
			wp := ws.w[(k-1)*R : k*R]
			dp := ws.d[k-1]
			for i := 0; i < R; i++ {
				fi := dp * wp[i]
				for j := 0; j < R; j++ {
					S[i*R+j] = ph[i] * (Sprev[i*R+j] + fi*wp[j]) * ph[j]
				}
			}
			uSu := 0.0
			for i := 0; i < R; i++ {
				su := 0.0
				for j := 0; j < R; j++ {
					su += S[i*R+j] * u[j]
				}
				uSu += u[i] * su
				wk[i] -= su
			}
			a -= uSu
		}
		if !(a > 0) || math.IsInf(a, 0) {
			return tc, fmt.Errorf("%w: multi-output pivot %d (t = %g) is %g", ErrNotPositiveDefinite, k, m.t[k], a)
		}
		ws.d[k] = a
		for i := range wk {
			wk[i] /= a
		}
		Sprev = S
	}
	return tc, nil
}

// forward solves L z = y, keeping every f_n.
func (m *MultiRotation) forward(ws *mrWork) {
	const R = mrRank
	n := len(m.t)
	for i := 0; i < R; i++ {
		ws.f[i] = 0
	}
	ws.z[0] = ws.y[0]
	for k := 1; k < n; k++ {
		f := ws.f[k*R : k*R+R]
		fp := ws.f[(k-1)*R : k*R]
		ph := ws.phi[k*R : k*R+R]
		wp := ws.w[(k-1)*R : k*R]
		u := ws.u[k*R : k*R+R]
		zp := ws.z[k-1]
		uf := 0.0
		for i := 0; i < R; i++ {
			f[i] = ph[i] * (fp[i] + wp[i]*zp)
			uf += u[i] * f[i]
		}
		ws.z[k] = ws.y[k] - uf
	}
}

func (m *MultiRotation) eval(p []float64, r [][]float64, grad []float64, dr [][]float64) (float64, error) {
	if err := m.check(p); err != nil {
		return math.Inf(-1), err
	}
	if err := m.checkR(r); err != nil {
		return math.Inf(-1), err
	}
	ws := m.work()
	defer mrPool.Put(ws)
	n := len(m.t)
	for k := 0; k < n; k++ {
		ws.y[k] = r[m.ser[k]][m.pos[k]]
	}
	tc, err := m.factor(ws, p)
	if err != nil {
		return math.Inf(-1), err
	}
	m.forward(ws)
	chi2, logdet := 0.0, 0.0
	for k := 0; k < n; k++ {
		chi2 += ws.z[k] * ws.z[k] / ws.d[k]
		logdet += math.Log(ws.d[k])
	}
	lnL := -0.5*chi2 - 0.5*logdet - 0.5*float64(n)*math.Log(2*math.Pi)
	if grad != nil {
		m.backward(ws, p, tc, grad)
	}
	if dr != nil {
		alpha := make([]float64, n)
		m.solve(ws, r, alpha)
		for k, a := range alpha {
			dr[m.ser[k]][m.pos[k]] = -a
		}
	}
	return lnL, nil
}

// backward differentiates ln L through the forward solve and the
// factorisation in reverse order (reverse-mode differentiation by hand)
// and maps the adjoints of the generators to the parameters.
func (m *MultiRotation) backward(ws *mrWork, p []float64, tc [mrTerms]termCoef, grad []float64) {
	const R = mrRank
	n := len(m.t)
	bU, bV, bPhi, bW := ws.bU[:n*R], ws.bV[:n*R], ws.bPhi[:n*R], ws.bW[:n*R]
	bD, bA, bz := ws.bD[:n], ws.bA[:n], ws.bz[:n]
	for _, v := range [][]float64{bU, bV, bPhi, bW, bA} {
		clear(v)
	}
	for k := 0; k < n; k++ {
		dk := ws.d[k]
		bz[k] = -ws.z[k] / dk
		bD[k] = 0.5*ws.z[k]*ws.z[k]/(dk*dk) - 0.5/dk
	}
	// Forward solve, in reverse.
	bf := make([]float64, R)
	bg := make([]float64, R)
	for k := n - 1; k >= 1; k-- {
		u := ws.u[k*R : k*R+R]
		f := ws.f[k*R : k*R+R]
		bu := bU[k*R : k*R+R]
		for i := 0; i < R; i++ {
			bu[i] -= bz[k] * f[i]
			bf[i] -= bz[k] * u[i]
		}
		// f_k = φ_k ∘ (f_{k−1} + W_{k−1} z_{k−1}).
		ph := ws.phi[k*R : k*R+R]
		fp := ws.f[(k-1)*R : k*R]
		wp := ws.w[(k-1)*R : k*R]
		zp := ws.z[k-1]
		bph := bPhi[k*R : k*R+R]
		bwp := bW[(k-1)*R : k*R]
		s := 0.0
		for i := 0; i < R; i++ {
			g := fp[i] + wp[i]*zp
			bph[i] += bf[i] * g
			bg[i] = ph[i] * bf[i]
			bwp[i] += bg[i] * zp
			s += bg[i] * wp[i]
		}
		bz[k-1] += s
		copy(bf, bg)
	}
	// Factorisation, in reverse.
	bS := make([]float64, R*R)
	su := make([]float64, R)
	bsu := make([]float64, R)
	T := make([]float64, R*R)
	for k := n - 1; k >= 0; k-- {
		S := ws.s[k*R*R : (k+1)*R*R]
		u := ws.u[k*R : k*R+R]
		wk := ws.w[k*R : k*R+R]
		dk := ws.d[k]
		bu := bU[k*R : k*R+R]
		bv := bV[k*R : k*R+R]
		bw := bW[k*R : k*R+R]
		// W = (V − S U)/D.
		ww := 0.0
		for i := 0; i < R; i++ {
			bv[i] += bw[i] / dk
			bsu[i] = -bw[i] / dk
			ww += bw[i] * wk[i]
		}
		bD[k] -= ww / dk
		// D = A − Uᵀ S U.
		bA[k] += bD[k]
		for i := 0; i < R; i++ {
			s := 0.0
			for j := 0; j < R; j++ {
				s += S[i*R+j] * u[j]
			}
			su[i] = s
		}
		for i := 0; i < R; i++ {
			sb := 0.0
			for j := 0; j < R; j++ {
				bS[i*R+j] += bsu[i]*u[j] - bD[k]*u[i]*u[j]
				sb += S[j*R+i] * bsu[j]
			}
			bu[i] += sb - 2*bD[k]*su[i]
		}
		if k == 0 {
			break
		}
		// S_k = Φ (S_{k−1} + D_{k−1} W_{k−1} W_{k−1}ᵀ) Φ.
		Sp := ws.s[(k-1)*R*R : k*R*R]
		wp := ws.w[(k-1)*R : k*R]
		dp := ws.d[k-1]
		ph := ws.phi[k*R : k*R+R]
		bph := bPhi[k*R : k*R+R]
		bwp := bW[(k-1)*R : k*R]
		for i := 0; i < R; i++ {
			for j := 0; j < R; j++ {
				T[i*R+j] = Sp[i*R+j] + dp*wp[i]*wp[j]
			}
		}
		bdp := 0.0
		for i := 0; i < R; i++ {
			s := 0.0
			for j := 0; j < R; j++ {
				s += (bS[i*R+j] + bS[j*R+i]) * T[i*R+j] * ph[j]
			}
			bph[i] += s
		}
		for i := 0; i < R; i++ {
			for j := 0; j < R; j++ {
				bS[i*R+j] *= ph[i] * ph[j] // now bT
			}
		}
		for i := 0; i < R; i++ {
			s := 0.0
			for j := 0; j < R; j++ {
				s += (bS[i*R+j] + bS[j*R+i]) * wp[j]
				bdp += bS[i*R+j] * wp[i] * wp[j]
			}
			bwp[i] += dp * s
		}
		bD[k-1] += bdp
		// bS now holds the adjoint of S_{k−1}.
	}
	// Generators to parameters.
	for i := range grad {
		grad[i] = 0
	}
	no := len(m.outputs)
	jit := p[mrLatent+2*no:]
	var bt [mrTerms]termCoef // adjoints of the term coefficients
	t0 := m.t[0]
	for k := 0; k < n; k++ {
		s := m.ser[k]
		o := m.series[s].Output
		C, Rc := p[mrLatent+2*o], p[mrLatent+2*o+1]
		tt := m.t[k] - t0
		var bC, bR float64
		ba := bA[k]
		grad[mrLatent+2*no+s] += 2 * jit[s] * ba
		for j, c := range tc {
			q := k*R + 4*j
			cn, sn := ws.cs[2*(k*mrTerms+j)], ws.cs[2*(k*mrTerms+j)+1]
			bu := bU[q : q+4]
			bv := bV[q : q+4]
			mc0, mc1 := c.a*C+c.a1*Rc, -c.a1*C-c.a2*Rc
			ms0, ms1 := c.b*C+c.b1*Rc, -c.b1*C-c.b2*Rc
			bmc0, bmc1 := cn*bu[0]+sn*bu[2], cn*bu[1]+sn*bu[3]
			bms0, bms1 := sn*bu[0]-cn*bu[2], sn*bu[1]-cn*bu[3]
			bcn := bu[0]*mc0 + bu[1]*mc1 - bu[2]*ms0 - bu[3]*ms1 + bv[0]*C + bv[1]*Rc
			bsn := bu[0]*ms0 + bu[1]*ms1 + bu[2]*mc0 + bu[3]*mc1 + bv[2]*C + bv[3]*Rc
			bC += cn*bv[0] + sn*bv[2]
			bR += cn*bv[1] + sn*bv[3]
			b := &bt[j]
			b.d += tt * (-sn*bcn + cn*bsn)
			// mc0 = aC + a1R, mc1 = −a1C − a2R, ms0 = bC + b1R, ms1 = −b1C − b2R.
			b.a += C * bmc0
			b.a1 += Rc*bmc0 - C*bmc1
			b.a2 -= Rc * bmc1
			b.b += C * bms0
			b.b1 += Rc*bms0 - C*bms1
			b.b2 -= Rc * bms1
			bC += c.a*bmc0 - c.a1*bmc1 + c.b*bms0 - c.b1*bms1
			bR += c.a1*bmc0 - c.a2*bmc1 + c.b1*bms0 - c.b2*bms1
			// A += a C² − a2 R².
			b.a += C * C * ba
			b.a2 -= Rc * Rc * ba
			bC += 2 * c.a * C * ba
			bR -= 2 * c.a2 * Rc * ba
			if k > 0 {
				bp := bPhi[q] + bPhi[q+1] + bPhi[q+2] + bPhi[q+3]
				dt := m.t[k] - m.t[k-1]
				b.c -= dt * ws.phi[q] * bp
			}
		}
		grad[mrLatent+2*o] += bC
		grad[mrLatent+2*o+1] += bR
	}
	_, jac := rotationTerms(p[0], p[1], p[2], p[3])
	for j, c := range tc {
		b := bt[j]
		// a2 = −c a1 + d b1, b2 = −c b1 − d a1.
		ba1 := b.a1 - c.c*b.a2 - c.d*b.b2
		bb1 := b.b1 + c.d*b.a2 - c.c*b.b2
		bc := b.c - c.a1*b.a2 - c.b1*b.b2
		bd := b.d + c.b1*b.a2 - c.a1*b.b2
		// a1 = −c a + d b, b1 = −c b − d a.
		ba := b.a - c.c*ba1 - c.d*bb1
		bb := b.b + c.d*ba1 - c.c*bb1
		bc += -c.a*ba1 - c.b*bb1
		bd += c.b*ba1 - c.a*bb1
		for l := 0; l < mrLatent; l++ {
			grad[l] += ba*jac[j][0][l] + bb*jac[j][1][l] + bc*jac[j][2][l] + bd*jac[j][3][l]
		}
	}
}

// SolveMany returns K⁻¹y for each right-hand side (per-series slices, as
// the residuals of LogLikelihood), factorising K once.
func (m *MultiRotation) SolveMany(p []float64, rhs [][][]float64) ([][][]float64, error) {
	if err := m.check(p); err != nil {
		return nil, err
	}
	for _, r := range rhs {
		if err := m.checkR(r); err != nil {
			return nil, err
		}
	}
	ws := m.work()
	defer mrPool.Put(ws)
	if _, err := m.factor(ws, p); err != nil {
		return nil, err
	}
	out := make([][][]float64, len(rhs))
	alpha := make([]float64, len(m.t))
	for i, r := range rhs {
		m.solve(ws, r, alpha)
		out[i] = make([][]float64, len(m.series))
		for s := range m.series {
			out[i][s] = make([]float64, len(m.series[s].T))
		}
		for k, a := range alpha {
			out[i][m.ser[k]][m.pos[k]] = a
		}
	}
	return out, nil
}

// solve stores K⁻¹r in alpha (merged order) with the factorisation in ws:
// the forward pass, then x_n = z_n/D_n − W_n·g, g = φ_{n+1}(g + U_{n+1}
// x_{n+1}).
func (m *MultiRotation) solve(ws *mrWork, r [][]float64, alpha []float64) {
	const R = mrRank
	n := len(m.t)
	for k := 0; k < n; k++ {
		ws.y[k] = r[m.ser[k]][m.pos[k]]
	}
	m.forward(ws)
	g := make([]float64, R)
	alpha[n-1] = ws.z[n-1] / ws.d[n-1]
	for k := n - 2; k >= 0; k-- {
		ph := ws.phi[(k+1)*R : (k+2)*R]
		un := ws.u[(k+1)*R : (k+2)*R]
		wk := ws.w[k*R : k*R+R]
		wg := 0.0
		for i := 0; i < R; i++ {
			g[i] = ph[i] * (g[i] + un[i]*alpha[k+1])
			wg += wk[i] * g[i]
		}
		alpha[k] = ws.z[k]/ws.d[k] - wg
	}
}

// Predict returns the predictive mean of the noise-free output out (any
// (C, R), e.g. one of the model's outputs at its fitted coefficients, or
// Output{C: 1} for G) at times tnew, given per-series residuals r.
func (m *MultiRotation) Predict(p []float64, r [][]float64, out Output, tnew []float64) ([]float64, error) {
	if err := m.check(p); err != nil {
		return nil, err
	}
	if err := m.checkR(r); err != nil {
		return nil, err
	}
	if err := checkFinite("tnew", tnew); err != nil {
		return nil, err
	}
	ws := m.work()
	defer mrPool.Put(ws)
	n := len(m.t)
	tc, err := m.factor(ws, p)
	if err != nil {
		return nil, err
	}
	alpha := make([]float64, n)
	m.solve(ws, r, alpha)
	mean := make([]float64, len(tnew))
	for i, ts := range tnew {
		v := 0.0
		for k := 0; k < n; k++ {
			o := m.series[m.ser[k]].Output
			xb := Output{C: p[mrLatent+2*o], R: p[mrLatent+2*o+1]}
			v += crossTerms(tc[:], out, xb, ts-m.t[k]) * alpha[k]
		}
		mean[i] = v
	}
	return mean, nil
}

// crossTerms returns cov(output a at t, output b at t − tau) from the
// term coefficients: x_aᵀ M(τ) x_b with M = [[k, −k'], [k', −k”]].
func crossTerms(tc []termCoef, a, b Output, tau float64) float64 {
	if tau < 0 {
		// cov(a@t, b@t') = cov(b@t', a@t) with a positive lag.
		a, b = b, a
		tau = -tau
	}
	v := 0.0
	for _, c := range tc {
		e := math.Exp(-c.c * tau)
		sn, cn := math.Sincos(c.d * tau)
		k := e * (c.a*cn + c.b*sn)
		k1 := e * (c.a1*cn + c.b1*sn)
		k2 := e * (c.a2*cn + c.b2*sn)
		v += a.C*b.C*k - a.C*b.R*k1 + a.R*b.C*k1 - a.R*b.R*k2
	}
	return v
}
