package gp

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// DenseSettings controls the dense solver. A nil *DenseSettings means
// the defaults below.
type DenseSettings struct {
	// MaxJitter is the largest diagonal jitter, relative to the mean of
	// the covariance diagonal, that may be added when the Cholesky
	// factorisation fails. Jitter is tried in decades from 1e-12 up to
	// MaxJitter. Zero means 1e-6; a negative value disables jitter.
	MaxJitter float64
}

func (s *DenseSettings) maxJitter() float64 {
	if s == nil || s.MaxJitter == 0 {
		return 1e-6
	}
	return s.MaxJitter
}

// Dense is a factorised dense covariance matrix
//
//	K_ij = k(t_i − t_j) + δ_ij (σ_i² + nugget)
//
// for a kernel k at times t with per-point variances σ². Factorisation is
// by Cholesky, K = LLᵀ, O(N³/3); with the factor, log-determinants,
// solves and likelihoods cost O(N²). It is safe for concurrent use after
// construction.
//
// Reference: Rasmussen & Williams 2006, Gaussian Processes for Machine
// Learning, MIT Press, Algorithm 2.1 (from memory).
type Dense struct {
	denseCore
	kernel   Kernel
	t        []float64
	variance []float64
}

// denseCore is a Cholesky-factorised covariance matrix with its
// factorisation outcome.
type denseCore struct {
	chol   *cholesky
	status Status
	jitter float64
	logDet float64
}

// newDenseCore factorises the matrix written by fill into an n×n buffer
// (lower triangle only).
func newDenseCore(n int, fill func(c *cholesky), s *DenseSettings) (denseCore, error) {
	c := newCholeskyBuffer(n)
	fill(c)
	st, jit, err := factorWithJitter(c, fill, s.maxJitter())
	core := denseCore{chol: c, status: st, jitter: jit}
	if err != nil {
		return core, err
	}
	core.logDet = c.logDet()
	return core, nil
}

// NewDense builds and factorises the covariance of kernel k at times t
// (days; any order, repeated epochs allowed) with per-point variances
// variance (σ², unit of the data squared; nil means zero). If the
// factorisation fails, diagonal jitter is added in steps (see
// DenseSettings); if it still fails, NewDense returns the solver with
// Status NotPositiveDefinite and an error wrapping ErrNotPositiveDefinite.
// Bad input (NaN, mismatched lengths, invalid hyperparameters) gives an
// error and a nil solver.
func NewDense(k Kernel, t, variance []float64, s *DenseSettings) (*Dense, error) {
	if err := validate(k); err != nil {
		return nil, err
	}
	if err := checkTimes(t, variance, false); err != nil {
		return nil, err
	}
	n := len(t)
	d := &Dense{kernel: k, t: append([]float64(nil), t...)}
	if variance != nil {
		d.variance = append([]float64(nil), variance...)
	} else {
		d.variance = make([]float64, n)
	}
	nug := nuggetOf(k)
	k0 := k.Cov(0)
	fill := func(c *cholesky) {
		fillRows(n, func(i0, i1 int) {
			for i := i0; i < i1; i++ {
				row := c.a[i*c.ld : i*c.ld+i+1]
				ti := d.t[i]
				for j := 0; j < i; j++ {
					row[j] = k.Cov(ti - d.t[j])
				}
				row[i] = k0 + nug + d.variance[i]
			}
		})
	}
	var err error
	d.denseCore, err = newDenseCore(n, fill, s)
	return d, err
}

// factorWithJitter factorises c, refilling it with fill and adding jitter
// to the diagonal in decades when the factorisation fails.
func factorWithJitter(c *cholesky, fill func(c *cholesky), maxRel float64) (Status, float64, error) {
	n := c.n
	diag := make([]float64, n)
	for i := range diag {
		diag[i] = c.a[i*c.ld+i]
	}
	if c.factor() {
		return Factorized, 0, nil
	}
	if maxRel <= 0 {
		return NotPositiveDefinite, 0, fmt.Errorf("%w: no jitter allowed", ErrNotPositiveDefinite)
	}
	var mean float64
	for _, v := range diag {
		mean += v
	}
	mean /= float64(n)
	if !(mean > 0) {
		return NotPositiveDefinite, 0, fmt.Errorf("%w: mean diagonal %g", ErrNotPositiveDefinite, mean)
	}
	for rel := 1e-12; rel <= maxRel*(1+1e-9); rel *= 10 {
		jit := rel * mean
		fill(c)
		for i := 0; i < n; i++ {
			c.a[i*c.ld+i] += jit
		}
		if c.factor() {
			return JitterAdded, jit, nil
		}
	}
	return NotPositiveDefinite, 0, fmt.Errorf("%w: even with jitter %g × mean diagonal", ErrNotPositiveDefinite, maxRel)
}

// Len returns the number of points.
func (d *denseCore) Len() int { return d.chol.n }

// Status returns the outcome of the factorisation.
func (d *denseCore) Status() Status { return d.status }

// Jitter returns the diagonal jitter (unit of the data squared) that was
// added to factorise the covariance; zero when none was needed.
func (d *denseCore) Jitter() float64 { return d.jitter }

// LogDet returns ln det K.
func (d *denseCore) LogDet() float64 { return d.logDet }

func (d *denseCore) usable() error {
	if d.status == NotPositiveDefinite {
		return ErrNotPositiveDefinite
	}
	return nil
}

// Solve stores x = K⁻¹y in dst (allocated if nil or short) and returns it.
func (d *denseCore) Solve(dst, y []float64) ([]float64, error) {
	if err := d.usable(); err != nil {
		return nil, err
	}
	if len(y) != d.Len() {
		return nil, fmt.Errorf("%w: y has %d values, solver %d", ErrLength, len(y), d.Len())
	}
	dst = resize(dst, len(y))
	copy(dst, y)
	d.chol.solveLower(dst)
	d.chol.solveUpper(dst)
	return dst, nil
}

// LogLikelihood returns the Gaussian log-likelihood of residuals r
//
//	ln L = −½ rᵀK⁻¹r − ½ ln det K − (N/2) ln 2π
//
// (Rasmussen & Williams 2006, eq. 2.30).
func (d *denseCore) LogLikelihood(r []float64) (float64, error) {
	if err := d.usable(); err != nil {
		return math.Inf(-1), err
	}
	if len(r) != d.Len() {
		return math.Inf(-1), fmt.Errorf("%w: r has %d values, solver %d", ErrLength, len(r), d.Len())
	}
	if err := checkFinite("r", r); err != nil {
		return math.Inf(-1), err
	}
	z := append([]float64(nil), r...)
	d.chol.solveLower(z)
	chi2 := dot(z, z)
	return -0.5*chi2 - 0.5*d.logDet - 0.5*float64(len(r))*math.Log(2*math.Pi), nil
}

// Predict returns the predictive (posterior) mean and variance of the
// latent process f at times tnew, given residuals r at the solver's times:
//
//	mean = K*ᵀ K⁻¹ r,   var = k(0) − diag(K*ᵀ K⁻¹ K*),   (K*)_ij = k(t_i − t*_j)
//
// The variance excludes white noise, per-point variances and jitter (it is
// the variance of the noise-free process). If wantVar is false, variance
// is nil; computing it costs O(N²) per new time.
//
// Reference: Rasmussen & Williams 2006, eqs. 2.25–2.26 (from memory).
func (d *Dense) Predict(r, tnew []float64, wantVar bool) (mean, variance []float64, err error) {
	return d.predict(r, tnew, wantVar, false)
}

// PredictDeriv returns the predictive mean and variance of the time
// derivative df/dt (unit of the data per day) at times tnew. The kernel
// must be Differentiable:
//
//	cov(f'(t*), f(t_i)) = k'(t* − t_i),   var f'(t*) = −k''(0)
func (d *Dense) PredictDeriv(r, tnew []float64, wantVar bool) (mean, variance []float64, err error) {
	return d.predict(r, tnew, wantVar, true)
}

func (d *Dense) predict(r, tnew []float64, wantVar, deriv bool) (mean, variance []float64, err error) {
	alpha, err := d.Solve(nil, r)
	if err != nil {
		return nil, nil, err
	}
	if err := checkFinite("tnew", tnew); err != nil {
		return nil, nil, err
	}
	cross, prior, err := crossFunc(d.kernel, deriv)
	if err != nil {
		return nil, nil, err
	}
	n := d.Len()
	mean = make([]float64, len(tnew))
	if wantVar {
		variance = make([]float64, len(tnew))
	}
	ks := make([]float64, n)
	for m, ts := range tnew {
		for i, ti := range d.t {
			ks[i] = cross(ts - ti)
		}
		mean[m] = dot(ks, alpha)
		if wantVar {
			d.chol.solveLower(ks)
			variance[m] = prior - dot(ks, ks)
		}
	}
	return mean, variance, nil
}

// crossFunc returns the cross-covariance between the predicted quantity at
// t* and f(t_i) as a function of t* − t_i, and the predicted quantity's
// prior variance.
func crossFunc(k Kernel, deriv bool) (func(float64) float64, float64, error) {
	if !deriv {
		return k.Cov, k.Cov(0), nil
	}
	dk, ok := k.(Differentiable)
	if !ok {
		return nil, 0, fmt.Errorf("%w: %T", ErrNotDifferentiable, k)
	}
	_, _, d2 := dk.CovDeriv(0)
	return func(tau float64) float64 {
		_, d1, _ := dk.CovDeriv(tau)
		return d1
	}, -d2, nil
}

// Draw returns a draw y ~ N(0, K) from the prior, including the per-point
// variances and white noise: y = L z with z standard normal from rnd.
func (d *denseCore) Draw(dst []float64, rnd *rand.Rand) ([]float64, error) {
	if err := d.usable(); err != nil {
		return nil, err
	}
	z := make([]float64, d.Len())
	for i := range z {
		z[i] = rnd.NormFloat64()
	}
	dst = resize(dst, d.Len())
	d.chol.mulLower(dst, z)
	return dst, nil
}

// fillRows runs f over row ranges of an n-row lower triangle, on several
// goroutines for large n.
func fillRows(n int, f func(i0, i1 int)) {
	if n < cholParallelMin {
		f(0, n)
		return
	}
	parallelRows(0, n, 32, f)
}

func resize(dst []float64, n int) []float64 {
	if cap(dst) < n {
		return make([]float64, n)
	}
	return dst[:n]
}

// checkTimes checks t for NaN/Inf and emptiness, the variance length and
// sign, and (if sorted) the order.
func checkTimes(t, variance []float64, sorted bool) error {
	if len(t) == 0 {
		return ErrNoData
	}
	if err := checkFinite("t", t); err != nil {
		return err
	}
	if variance != nil {
		if len(variance) != len(t) {
			return fmt.Errorf("%w: t has %d values, variance %d", ErrLength, len(t), len(variance))
		}
		if err := checkFinite("variance", variance); err != nil {
			return err
		}
		for i, v := range variance {
			if v < 0 {
				return &IndexError{Slice: "variance", Index: i, Value: v, Err: ErrNegativeVariance}
			}
		}
	}
	if sorted {
		for i := 1; i < len(t); i++ {
			if t[i] < t[i-1] {
				return &IndexError{Slice: "t", Index: i, Value: t[i], Err: ErrUnsorted}
			}
		}
	}
	return nil
}

func checkFinite(name string, x []float64) error {
	for i, v := range x {
		if isBad(v) {
			return &IndexError{Slice: name, Index: i, Value: v, Err: ErrNaN}
		}
	}
	return nil
}
