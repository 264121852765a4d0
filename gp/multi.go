package gp

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
)

// Output is one observable driven by the latent process G(t) of a Multi
// model and its time derivative:
//
//	y(t) = C·G(t) + R·dG/dt(t)
//
// In Rajpaul et al. (2015) the RV has (C, R) = (Vc, Vr), the bisector span
// (Bc, Br) and a chromospheric index (Lc, 0). Output{C: 1} is G itself and
// Output{R: 1} its derivative (unit of G per day).
type Output struct {
	Name string  // label, e.g. "rv", used in error messages
	C    float64 // coefficient of G
	R    float64 // coefficient of dG/dt (days)
}

// Multi is a multi-output Gaussian-process model: several observables are
// linear combinations of one latent process G ~ GP(0, k) and its time
// derivative. With τ = t_i − t_j, the covariance between output a at t_i
// and output b at t_j is
//
//	cov = C_a C_b γ + R_a R_b γ_dd + C_a R_b γ_Gd + R_a C_b γ_dG
//	γ = k(τ),  γ_dG = ∂γ/∂t_i = k'(τ),  γ_Gd = ∂γ/∂t_j = −k'(τ),  γ_dd = ∂²γ/∂t_i∂t_j = −k''(τ)
//
// which gives the blocks of docs/methods.md §8, e.g. cov(RV_i, I_j) = Vc Lc γ +
// Vr Lc γ_dG. For a stationary k the cross terms of an auto-block cancel
// at τ = 0.
//
// The parameter vector is the latent kernel's followed by (C, R) of each
// output in order.
//
// Reference: Rajpaul, Aigrain, Osborne, Reece & Roberts 2015, MNRAS 452,
// 2269 (the model; block formulas from memory, restated in docs/methods.md §8).
type Multi struct {
	Latent  Differentiable
	Outputs []Output
}

// Indices of the outputs of NewRajpaul.
const (
	OutRV    = 0 // radial velocity: Vc G + Vr dG/dt
	OutIndex = 1 // chromospheric index (e.g. log R'HK): Lc G
	OutBIS   = 2 // bisector span: Bc G + Br dG/dt
)

// NewRajpaul returns the three-output model of Rajpaul et al. (2015) with
// latent kernel latent (usually a unit-amplitude QuasiPeriodic):
// outputs OutRV (vc, vr), OutIndex (lc, 0) and OutBIS (bc, br).
func NewRajpaul(latent Differentiable, vc, vr, lc, bc, br float64) Multi {
	return Multi{Latent: latent, Outputs: []Output{
		{Name: "rv", C: vc, R: vr},
		{Name: "index", C: lc},
		{Name: "bis", C: bc, R: br},
	}}
}

// Cross returns the covariance between output a at time ti and output b at
// time tj.
func Cross(k Differentiable, a, b Output, ti, tj float64) float64 {
	g, d1, d2 := k.CovDeriv(ti - tj)
	return a.C*b.C*g - a.R*b.R*d2 - a.C*b.R*d1 + a.R*b.C*d1
}

// NumParams returns the latent kernel's count plus two per output.
func (m Multi) NumParams() int { return m.Latent.NumParams() + 2*len(m.Outputs) }

// Params appends the latent parameters, then (C, R) of each output.
func (m Multi) Params(dst []float64) []float64 {
	dst = m.Latent.Params(dst)
	for _, o := range m.Outputs {
		dst = append(dst, o.C, o.R)
	}
	return dst
}

// WithParams returns the model with parameter vector p.
func (m Multi) WithParams(p []float64) (Multi, error) {
	if len(p) != m.NumParams() {
		return Multi{}, fmt.Errorf("%w: Multi needs %d, got %d", ErrParamCount, m.NumParams(), len(p))
	}
	nl := m.Latent.NumParams()
	k, err := m.Latent.WithParams(p[:nl])
	if err != nil {
		return Multi{}, err
	}
	dk, ok := k.(Differentiable)
	if !ok {
		return Multi{}, fmt.Errorf("%w: %T", ErrNotDifferentiable, k)
	}
	out := Multi{Latent: dk, Outputs: make([]Output, len(m.Outputs))}
	for i, o := range m.Outputs {
		out.Outputs[i] = Output{Name: o.Name, C: p[nl+2*i], R: p[nl+2*i+1]}
	}
	return out, out.Validate()
}

// Validate checks the latent kernel and that every coefficient is finite.
func (m Multi) Validate() error {
	if m.Latent == nil {
		return fmt.Errorf("%w: Multi has no latent kernel", ErrBadParam)
	}
	if err := validate(m.Latent); err != nil {
		return err
	}
	if len(m.Outputs) == 0 {
		return fmt.Errorf("%w: Multi has no outputs", ErrBadParam)
	}
	for i, o := range m.Outputs {
		if isBad(o.C) || isBad(o.R) {
			return &ParamError{Kernel: "Multi", Name: fmt.Sprintf("Outputs[%d] (%s)", i, o.Name),
				Value: math.NaN(), Reason: "coefficients must be finite"}
		}
	}
	return nil
}

// Series is one observed output of a Multi model: its epochs (days) and
// per-point variances (nil means zero; add per-series jitter² here). Any
// subset of a model's outputs may be observed, each with its own epochs.
type Series struct {
	Output   int       // index into Multi.Outputs
	T        []float64 // epochs, days, any order
	Variance []float64 // σ², unit of the output squared
}

// MultiDense is a factorised covariance of several stacked Series of a
// Multi model: the series are concatenated in the order given.
type MultiDense struct {
	denseCore
	model  Multi
	series []Series
	offset []int
}

// NewMultiDense builds and factorises the stacked covariance of the given
// series. Errors name the series; a covariance that is not positive
// definite gives Status NotPositiveDefinite and ErrNotPositiveDefinite as
// in NewDense.
func NewMultiDense(m Multi, series []Series, s *DenseSettings) (*MultiDense, error) {
	if err := m.Validate(); err != nil {
		return nil, err
	}
	if len(series) == 0 {
		return nil, ErrNoData
	}
	md := &MultiDense{model: m, series: make([]Series, len(series)), offset: make([]int, len(series)+1)}
	for i, sr := range series {
		if sr.Output < 0 || sr.Output >= len(m.Outputs) {
			return nil, fmt.Errorf("%w: series %d: output %d of %d", ErrSeries, i, sr.Output, len(m.Outputs))
		}
		if err := checkTimes(sr.T, sr.Variance, false); err != nil {
			return nil, fmt.Errorf("series %d (%s): %w", i, m.Outputs[sr.Output].Name, err)
		}
		c := Series{Output: sr.Output, T: append([]float64(nil), sr.T...)}
		if sr.Variance != nil {
			c.Variance = append([]float64(nil), sr.Variance...)
		} else {
			c.Variance = make([]float64, len(sr.T))
		}
		md.series[i] = c
		md.offset[i+1] = md.offset[i] + len(sr.T)
	}
	n := md.offset[len(series)]
	// Row i belongs to series seriesOf[i] and has epoch times[i].
	seriesOf := make([]int, n)
	times := make([]float64, n)
	for a, sa := range md.series {
		for i := md.offset[a]; i < md.offset[a+1]; i++ {
			seriesOf[i] = a
			times[i] = sa.T[i-md.offset[a]]
		}
	}
	coef := make([]Output, n)
	for i := range coef {
		coef[i] = m.Outputs[md.series[seriesOf[i]].Output]
	}
	// Indicators usually come from the same spectra as the RVs, so the
	// series share epochs: then the latent kernel and its derivatives are
	// evaluated once per pair of distinct epochs and reused by every pair
	// of outputs.
	uniq, idx := uniqueEpochs(times)
	var lat []float64 // 3 values (γ, γ', γ'') per pair of distinct epochs, lower triangle
	if multiEpochCache && len(uniq) <= n/2 {
		u := len(uniq)
		lat = make([]float64, 3*u*(u+1)/2)
		fillRows(u, func(i0, i1 int) {
			for i := i0; i < i1; i++ {
				base := 3 * i * (i + 1) / 2
				for j := 0; j <= i; j++ {
					g, d1, d2 := m.Latent.CovDeriv(uniq[i] - uniq[j])
					lat[base+3*j], lat[base+3*j+1], lat[base+3*j+2] = g, d1, d2
				}
			}
		})
	}
	fill := func(c *cholesky) {
		fillRows(n, func(i0, i1 int) {
			for i := i0; i < i1; i++ {
				row := c.a[i*c.ld : i*c.ld+i+1]
				oa := coef[i]
				if lat == nil {
					for j := range row {
						row[j] = Cross(m.Latent, oa, coef[j], times[i], times[j])
					}
				} else {
					for j := range row {
						ua, ub, sg := idx[i], idx[j], 1.0
						if ub > ua {
							ua, ub, sg = ub, ua, -1 // γ' is odd in τ
						}
						p := 3 * (ua*(ua+1)/2 + ub)
						g, d1, d2 := lat[p], sg*lat[p+1], lat[p+2]
						ob := coef[j]
						row[j] = oa.C*ob.C*g - oa.R*ob.R*d2 - oa.C*ob.R*d1 + oa.R*ob.C*d1
					}
				}
				a := seriesOf[i]
				row[i] += md.series[a].Variance[i-md.offset[a]]
			}
		})
	}
	var err error
	md.denseCore, err = newDenseCore(n, fill, s)
	return md, err
}

// multiEpochCache enables the shared-epoch cache of NewMultiDense (tests
// switch it off to compare both paths).
var multiEpochCache = true

// uniqueEpochs returns the distinct values of t in ascending order and,
// for each t[i], its index among them.
func uniqueEpochs(t []float64) ([]float64, []int) {
	u := append([]float64(nil), t...)
	slices.Sort(u)
	u = slices.Compact(u)
	idx := make([]int, len(t))
	for i, v := range t {
		idx[i], _ = slices.BinarySearch(u, v)
	}
	return u, idx
}

// Stack concatenates per-series values (one slice per series, in the
// order given to NewMultiDense) into one vector, checking the lengths.
func (md *MultiDense) Stack(y [][]float64) ([]float64, error) {
	if len(y) != len(md.series) {
		return nil, fmt.Errorf("%w: %d value slices for %d series", ErrLength, len(y), len(md.series))
	}
	out := make([]float64, 0, md.Len())
	for i, v := range y {
		if len(v) != len(md.series[i].T) {
			return nil, fmt.Errorf("%w: series %d has %d epochs and %d values", ErrLength, i, len(md.series[i].T), len(v))
		}
		out = append(out, v...)
	}
	return out, nil
}

// Split is the inverse of Stack.
func (md *MultiDense) Split(y []float64) [][]float64 {
	out := make([][]float64, len(md.series))
	for i := range md.series {
		out[i] = y[md.offset[i]:md.offset[i+1]]
	}
	return out
}

// LogLikelihoodSeries returns ln L of per-series residuals r.
func (md *MultiDense) LogLikelihoodSeries(r [][]float64) (float64, error) {
	v, err := md.Stack(r)
	if err != nil {
		return math.Inf(-1), err
	}
	return md.LogLikelihood(v)
}

// Predict returns the predictive mean and (if wantVar) variance of an
// arbitrary output o — one of the model's outputs, or Output{C: 1} for
// G, or Output{R: 1} for dG/dt — at times tnew, given the stacked
// residuals r. The variance is that of the noise-free output.
func (md *MultiDense) Predict(r []float64, o Output, tnew []float64, wantVar bool) (mean, variance []float64, err error) {
	alpha, err := md.Solve(nil, r)
	if err != nil {
		return nil, nil, err
	}
	if err := checkFinite("tnew", tnew); err != nil {
		return nil, nil, err
	}
	k := md.model.Latent
	mean = make([]float64, len(tnew))
	if wantVar {
		variance = make([]float64, len(tnew))
	}
	prior := Cross(k, o, o, 0, 0)
	ks := make([]float64, md.Len())
	for m, ts := range tnew {
		for b, sb := range md.series {
			ob := md.model.Outputs[sb.Output]
			for jj, tj := range sb.T {
				ks[md.offset[b]+jj] = Cross(k, o, ob, ts, tj)
			}
		}
		mean[m] = dot(ks, alpha)
		if wantVar {
			md.chol.solveLower(ks)
			variance[m] = prior - dot(ks, ks)
		}
	}
	return mean, variance, nil
}

// DrawSeries returns a prior draw of every series (including their
// variances), split per series.
func (md *MultiDense) DrawSeries(rnd *rand.Rand) ([][]float64, error) {
	y, err := md.Draw(nil, rnd)
	if err != nil {
		return nil, err
	}
	return md.Split(y), nil
}

// LogLikelihood returns ln L of per-series residuals r (one slice per
// series, in the order of series) under the model: a convenience for
// NewMultiDense followed by LogLikelihoodSeries. A fitting package puts
// its Keplerians in the RV residuals only.
func (m Multi) LogLikelihood(series []Series, r [][]float64) (float64, error) {
	md, err := NewMultiDense(m, series, nil)
	if err != nil {
		return math.Inf(-1), err
	}
	return md.LogLikelihoodSeries(r)
}
