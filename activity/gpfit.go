package activity

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"

	"spotsift/gp"
	"spotsift/mapfit"
	"spotsift/rvfit"
)

// gpModel is a Gaussian-process activity model of one series:
//
//	y = X β + ε,  ε ~ N(0, k_rot + diag(σ² + s_inst²))
//
// with k_rot the two-oscillator rotation kernel (gp.RotationSHO: modes at
// P and P/2), one jitter s per instrument, and X the per-instrument offsets
// plus, when freq > 0, a sinusoid at freq (the circular Keplerian at a fixed
// period). The linear parameters β are profiled out by generalised least
// squares at every step (common practice), so the optimiser sees only the
// kernel parameters and jitters. The fit goes through mapfit (log and
// logistic transforms, several starts, Laplace errors).
type gpModel struct {
	t, y, sigma []float64
	inst        []int
	ninst       int
	freq        float64
	shape       orbitShape // the signal's shape at freq (a sinusoid's by default)
	// fixed holds further columns of X, placed after the offsets: other
	// signals at fixed periods, their amplitudes fitted with the rest.
	fixed [][]float64
	t0    float64
	// Period bounds (days) and an optional Gaussian prior on ln P.
	pLo, pHi        float64
	lnPMu, lnPSigma float64 // lnPSigma = 0: log-uniform on [pLo, pHi]
	scale           float64 // a typical amplitude of y, for the bounds
	// redNoise, when true, adds to the rotation kernel a red-noise term
	// (gp.Exponential: a damped random walk of free amplitude and time
	// scale, from the longest rotation period of the model to ten data
	// spans), with its two parameters after the jitters: variation slower
	// than rotation with no period at all, such as slow drifts of the star
	// or the instrument (see redNoiseCheck).
	redNoise bool
	// mode, when positive, adds to the rotation kernel an oscillator at
	// that frequency (c/d) with its own amplitude (one parameter, last)
	// and the fundamental mode's damping time (modeSHO): activity there as
	// coherent as the rotation signal itself and no more. The model
	// comparison uses it for a signal at P_rot/3 or P_rot/4, where the
	// kernel's two modes have no power; the oscillator sits at the
	// signal's own frequency, since spots at other latitudes put their
	// harmonics up to the differential rotation's spread away from n/P_rot.
	mode float64
	// ctx, when not nil, stops the fits soon after it is cancelled.
	ctx context.Context
}

// gpResult is the maximum a posteriori fit of a gpModel.
type gpResult struct {
	theta   []float64 // natural parameters at the MAP (gpModel.space order)
	lnL     float64   // profile log-likelihood at the MAP
	lnPost  float64
	period  float64 // GP rotation period (days)
	periodE float64 // its one-sigma Laplace error, NaN if unavailable
	beta    []float64
	covBeta *mat.SymDense
	ok      bool
	fit     *mapfit.Result
}

// Parameter layout: amplitude, period, quality of the P/2 mode, quality
// gap, weight of the P/2 mode, then one jitter per instrument.
const gpKernelParams = 5

func (m *gpModel) nParams() int {
	n := gpKernelParams + m.ninst
	if m.redNoise {
		n += 2
	}
	if m.mode > 0 {
		n++
	}
	return n
}

// modeIdx is the index of the added oscillator's amplitude in θ (mode).
func (m *gpModel) modeIdx() int { return m.nParams() - 1 }

// withoutMode returns the model and its fit r without the oscillator of
// mode (the same when there is none): the model comparison's fit as the
// later tests reuse it (the alias check, the season test's errors, the
// report's GP curve). A noise mode at the signal's frequency would answer
// their questions for them: an alias check with activity allowed at one
// of the two candidate periods favours the other. The oscillator's
// amplitude is θ's last parameter, so the rest keeps its meaning.
func withoutMode(m *gpModel, r gpResult) (*gpModel, *gpResult) {
	if m.mode <= 0 {
		return m, &r
	}
	mm := *m
	mm.mode = 0
	r.theta = slices.Clone(r.theta[:mm.nParams()])
	return &mm, &r
}

// span returns the time the data cover (days, at least one).
func (m *gpModel) span() float64 { return math.Max(rvSpan(m.t), 1) }

// space returns the parameters with their transforms; the bounds are the
// supports of the priors of lnPrior.
func (m *gpModel) space() mapfit.Space {
	sc := math.Max(m.scale, 1e-12)
	s := mapfit.Space{
		{Name: "gp_amp", Kind: mapfit.LogBounded, Lo: 1e-3 * sc, Hi: 20 * sc},
		{Name: "gp_prot", Kind: mapfit.LogBounded, Lo: m.pLo, Hi: m.pHi},
		{Name: "gp_qual", Kind: mapfit.LogBounded, Lo: 0.05, Hi: 30},
		{Name: "gp_qgap", Kind: mapfit.LogBounded, Lo: 0.01, Hi: 30},
		{Name: "gp_mix", Kind: mapfit.Bounded, Lo: 0, Hi: 1},
	}
	for k := 0; k < m.ninst; k++ {
		s = append(s, mapfit.Param{Name: "jitter", Kind: mapfit.Bounded, Lo: 0, Hi: 10 * sc})
	}
	if m.redNoise {
		s = append(s,
			mapfit.Param{Name: "rn_amp", Kind: mapfit.LogBounded, Lo: 1e-3 * sc, Hi: 20 * sc},
			mapfit.Param{Name: "rn_tau", Kind: mapfit.LogBounded, Lo: m.rnTauLo(), Hi: math.Max(10*m.span(), 2*m.rnTauLo())})
	}
	if m.mode > 0 {
		s = append(s, mapfit.Param{Name: "gp_mode_amp", Kind: mapfit.LogBounded, Lo: 1e-3 * sc, Hi: 20 * sc})
	}
	return s
}

// noise builds the GP noise model of natural parameters θ.
func (m *gpModel) noise(theta []float64) *gp.Noise {
	k := gp.RotationSHO{Amp: theta[0], Period: theta[1], Quality: theta[2], QualityGap: theta[3], Mix: theta[4]}
	jit := append([]float64(nil), theta[gpKernelParams:gpKernelParams+m.ninst]...)
	if !m.redNoise && !(m.mode > 0) {
		// The common case: the rotation kernel alone, no Sum built on
		// every evaluation of the likelihood.
		return &gp.Noise{Kernel: k, Jitter: jit}
	}
	terms := gp.Sum{k}
	if m.redNoise {
		rn := theta[gpKernelParams+m.ninst:]
		terms = append(terms, gp.Exponential{Sigma: rn[0], Tau: rn[1]})
	}
	if m.mode > 0 {
		terms = append(terms, modeSHO(k, m.mode, theta[m.modeIdx()]))
	}
	return &gp.Noise{Kernel: terms, Jitter: jit}
}

// modeSHO returns an oscillator of standard deviation amp that oscillates
// at frequency f (c/d) and decays as fast as k's fundamental mode: spots
// that live for a time τ shape every harmonic of the rotation signal with
// the same envelope. An SHO of frequency ω0 and quality Q oscillates at
// ω0 √(1 − 1/(4Q²)) and decays at the rate ω0/(2Q); k's fundamental
// oscillates at 2π/P and decays at 2π/(P √(4Q_1² − 1)), so an equal decay
// rate at 2πf needs √(4Q² − 1) = f P √(4Q_1² − 1). Its variance is S0 ω0 Q.
func modeSHO(k gp.RotationSHO, f, amp float64) gp.SHO {
	q1 := 0.5 + k.Quality + k.QualityGap
	g := f * k.Period * math.Sqrt(4*q1*q1-1)
	q := 0.5 * math.Sqrt(1+g*g)
	w := 2 * math.Pi * f * 2 * q / g
	return gp.SHO{S0: amp * amp / (w * q), W0: w, Q: q}
}

// design returns the columns of X.
func (m *gpModel) design() [][]float64 {
	n := len(m.t)
	var cols [][]float64
	for g := 0; g < m.ninst; g++ {
		c := make([]float64, n)
		for i := range c {
			if m.inst[i] == g {
				c[i] = 1
			}
		}
		cols = append(cols, c)
	}
	cols = append(cols, m.fixed...)
	if m.freq > 0 {
		cc, sc := make([]float64, n), make([]float64, n)
		for i, ti := range m.t {
			cc[i], sc[i] = basis(m.freq, m.shape, ti, m.t0)
		}
		cols = append(cols, cc, sc)
	}
	return cols
}

// profile returns the profile log-likelihood at θ with the GLS estimate of
// β and its covariance, and the residuals y − Xβ. ok is false when the
// covariance cannot be factorised.
func (m *gpModel) profile(theta []float64, cols [][]float64, wantCov bool) (lnL float64, beta []float64, cov *mat.SymDense, ok bool) {
	lnL, beta, cov, _, _, ok = m.profileSolve(theta, cols, wantCov)
	return
}

func (m *gpModel) profileSolve(theta []float64, cols [][]float64, wantCov bool) (lnL float64, beta []float64, cov *mat.SymDense, r []float64, sol gp.Solver, ok bool) {
	for _, v := range theta {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return math.Inf(-1), nil, nil, nil, nil, false
		}
	}
	variance := make([]float64, len(m.sigma))
	for i, s := range m.sigma {
		variance[i] = s * s
	}
	sol, err := m.noise(theta).Factor(m.t, variance, m.inst)
	if err != nil || sol == nil {
		return math.Inf(-1), nil, nil, nil, nil, false
	}
	beta, cov, r, ok = glsProfile(sol, cols, m.y, wantCov)
	if !ok {
		return math.Inf(-1), nil, nil, nil, nil, false
	}
	lnL, err = sol.LogLikelihood(r)
	if err != nil || math.IsNaN(lnL) {
		return math.Inf(-1), nil, nil, nil, nil, false
	}
	return lnL, beta, cov, r, sol, true
}

// glsProfile returns the generalised least-squares β = (XᵀK⁻¹X)⁻¹XᵀK⁻¹y,
// its covariance (when wantCov) and the residuals y − Xβ.
func glsProfile(sol interface {
	Solve(dst, y []float64) ([]float64, error)
}, cols [][]float64, y []float64, wantCov bool) (beta []float64, cov *mat.SymDense, r []float64, ok bool) {
	kx, ok := solveColumns(sol, cols)
	if !ok {
		return nil, nil, nil, false
	}
	return glsSolved(kx, cols, y, wantCov)
}

// solveColumns returns K⁻¹c for each column c of cols.
func solveColumns(sol interface {
	Solve(dst, y []float64) ([]float64, error)
}, cols [][]float64) ([][]float64, bool) {
	kx := make([][]float64, len(cols))
	var err error
	for j, c := range cols {
		if kx[j], err = sol.Solve(nil, c); err != nil {
			return nil, false
		}
	}
	return kx, true
}

// glsSolved is glsProfile with K⁻¹X given (kx), for callers that vary
// some columns and keep the others' solves.
func glsSolved(kx, cols [][]float64, y []float64, wantCov bool) (beta []float64, cov *mat.SymDense, r []float64, ok bool) {
	nc := len(cols)
	a := mat.NewSymDense(max(nc, 1), nil)
	b := mat.NewVecDense(max(nc, 1), nil)
	for j := 0; j < nc; j++ {
		b.SetVec(j, dot(kx[j], y))
		for l := j; l < nc; l++ {
			a.SetSym(j, l, dot(kx[j], cols[l]))
		}
	}
	r = append([]float64(nil), y...)
	if nc == 0 {
		return nil, nil, r, true
	}
	var ch mat.Cholesky
	if !ch.Factorize(a) {
		return nil, nil, nil, false
	}
	var x mat.VecDense
	if err := ch.SolveVecTo(&x, b); err != nil {
		return nil, nil, nil, false
	}
	beta = make([]float64, nc)
	for j := range beta {
		beta[j] = x.AtVec(j)
		for i := range r {
			r[i] -= beta[j] * cols[j][i]
		}
	}
	if wantCov {
		cov = mat.NewSymDense(nc, nil)
		if err := ch.InverseTo(cov); err != nil {
			cov = nil
		}
	}
	return beta, cov, r, true
}

// lnPrior is the log prior of θ inside the box of space: log-uniform in
// the amplitude and the two quality parameters, uniform in the mix and the
// jitters, and log-uniform in the period or, when lnPSigma > 0, a Gaussian
// in ln P (density in P).
func (m *gpModel) lnPrior(theta []float64) float64 {
	lp := -math.Log(theta[0]) - math.Log(theta[2]) - math.Log(theta[3])
	if m.redNoise {
		// Log-uniform in the red noise's amplitude and time scale.
		rn := theta[gpKernelParams+m.ninst:]
		lp -= math.Log(rn[0]) + math.Log(rn[1])
	}
	if m.mode > 0 {
		lp -= math.Log(theta[m.modeIdx()])
	}
	lnP := math.Log(theta[1])
	lp -= lnP
	if m.lnPSigma > 0 {
		z := (lnP - m.lnPMu) / m.lnPSigma
		lp -= 0.5 * z * z
	}
	return lp
}

// inBox reports whether θ lies inside the space's bounds.
func inBox(s mapfit.Space, theta []float64) bool {
	for i, p := range s {
		switch p.Kind {
		case mapfit.Bounded, mapfit.LogBounded:
			if !(theta[i] >= p.Lo && theta[i] <= p.Hi) {
				return false
			}
		}
	}
	return true
}

// fit returns the MAP of the model from the starts (natural parameters),
// keeping the best, with Laplace errors.
func (m *gpModel) fit(starts [][]float64) gpResult {
	cols := m.design()
	sp := m.space()
	post := func(theta []float64) float64 {
		if !inBox(sp, theta) {
			return math.Inf(-1)
		}
		lnL, _, _, ok := m.profile(theta, cols, false)
		if !ok {
			return math.Inf(-1)
		}
		return lnL + m.lnPrior(theta)
	}
	var clean [][]float64
	for _, s := range starts {
		if len(s) == len(sp) {
			clean = append(clean, s)
		}
	}
	res, err := mapfit.Fit(&mapfit.Problem{Space: sp, LogPost: post, Starts: clean}, &mapfit.Settings{MaxEvaluations: 400 * len(sp), Workers: 1, Context: m.ctx})
	if err != nil || res == nil || res.X == nil {
		return gpResult{lnPost: math.Inf(-1), periodE: math.NaN()}
	}
	best := gpResult{theta: res.X, lnPost: res.LogPost, fit: res, period: res.X[1], periodE: math.NaN()}
	var ok bool
	best.lnL, best.beta, best.covBeta, ok = m.profile(best.theta, cols, true)
	best.ok = ok
	if L := res.Laplace; L != nil {
		best.periodE = L.Errors[1]
	}
	return best
}

// start returns a starting θ for period p (days), inside the box.
func (m *gpModel) start(p float64) []float64 {
	sp := m.space()
	th := []float64{m.scale, p, 1, 2, 0.5}
	for k := 0; k < m.ninst; k++ {
		th = append(th, 0.3*m.scale)
	}
	if m.redNoise {
		th = append(th, 0.3*m.scale, m.span()/3)
	}
	if m.mode > 0 {
		th = append(th, 0.3*m.scale)
	}
	for i, q := range sp {
		if q.Kind == mapfit.Bounded || q.Kind == mapfit.LogBounded {
			w := 1e-3 * (q.Hi - q.Lo)
			th[i] = math.Max(q.Lo+w, math.Min(q.Hi-w, th[i]))
		}
	}
	return th
}

func dot(a, b []float64) float64 {
	s := 0.0
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}

// GP activity models for FitGPActivity.
const (
	// GPRotation is the single-output model: the RVs alone with the
	// two-oscillator rotation kernel (gp.RotationSHO), one jitter per
	// instrument.
	GPRotation = "rotation"
	// GPMulti is the multi-output model of Rajpaul et al. (2015): one
	// latent rotation process G and its derivative drive the RVs
	// (a G + b dG/dt) and the activity indicators, each series on its own
	// epochs, solved in O(N) (gp.MultiSemisep).
	GPMulti = "multi"
)

// GPActivityOptions sets up FitGPActivity. The zero value (or nil) gives
// the defaults listed with each field.
type GPActivityOptions struct {
	// Model is GPRotation (the default) or GPMulti.
	Model string
	// Period, in days, adds a sinusoid at that fixed period (a circular
	// Keplerian) to the RV mean model; zero means none.
	Period float64
	// Rotation and RotationErr (days) are a rotation-period estimate: a
	// Gaussian prior in ln P on the GP's period, of width
	// max(RotationErr/Rotation, 0.1), and a start. Zero means no estimate:
	// the period is log-uniform on [1.5 d, baseline/2] and the starts come
	// from the highest periodogram peaks of the RVs and of each indicator
	// (each peak and its double).
	Rotation, RotationErr float64
	// Indicators names the indicator columns of GPMulti (they need
	// errors); nil means the first of log_rhk, s_index, halpha that has
	// errors, and bis when it has errors.
	Indicators []string
	// Starts caps the number of optimiser starts; zero means 6.
	Starts int
	// Workers runs starts in parallel; zero means GOMAXPROCS.
	Workers int
	// Context, when not nil, stops the fit soon after it is cancelled
	// (the fit then returns the context's error). Nil: never cancelled.
	Context context.Context
}

// GPActivityFit is the maximum a posteriori fit of a GP activity model to
// a series, from FitGPActivity.
type GPActivityFit struct {
	// Model is GPRotation or GPMulti; Period the sinusoid's period (0:
	// none).
	Model  string  `json:"model"`
	Period float64 `json:"period"`
	// Names, Params and Errors are the kernel and jitter parameters in
	// natural units with their Laplace one-sigma errors (NaN when
	// unknown); AtBound flags a parameter whose MAP lies on a prior bound
	// ("lower bound", "upper bound" or "").
	Names   []string  `json:"names"`
	Params  []float64 `json:"params"`
	Errors  []float64 `json:"errors"`
	AtBound []string  `json:"at_bound"`
	// LinearNames and Linear are the profiled linear parameters (offsets
	// per instrument and series, then the sinusoid's cosine and sine
	// amplitudes), LinearErrors their conditional errors at the MAP.
	LinearNames  []string  `json:"linear_names"`
	Linear       []float64 `json:"linear"`
	LinearErrors []float64 `json:"linear_errors"`
	// LogLikelihood is ln L at the MAP (all series for GPMulti);
	// LogPosterior adds the kernel priors.
	LogLikelihood float64 `json:"log_likelihood"`
	LogPosterior  float64 `json:"log_posterior"`
	// NumParams counts every fitted parameter (kernel, jitters, linear);
	// NumData every data point (all series). BIC = k ln N − 2 ln L
	// (Schwarz 1978, Ann. Stat. 6, 461).
	NumParams int     `json:"num_params"`
	NumData   int     `json:"num_data"`
	BIC       float64 `json:"bic"`
	// LogEvidence is the Laplace estimate of ln Z over the kernel
	// parameters (mapfit.Laplace) times the Gaussian integral over the
	// linear parameters with flat priors of width 6× the data range
	// (offsets) and ±3× the range (sinusoid amplitudes); NaN when the
	// Hessian is not positive definite.
	LogEvidence float64 `json:"log_evidence"`
	// Converged, Status, StartsAgree and Starts report the optimiser
	// (mapfit.Result).
	Converged   bool   `json:"converged"`
	Status      string `json:"status"`
	StartsAgree int    `json:"starts_agree"`
	Starts      int    `json:"starts"`
	// Rotation and RotationErr are the GP's period and its error (days).
	Rotation    float64 `json:"rotation"`
	RotationErr float64 `json:"rotation_err"`
	// Amplitude and AmplitudeErr are the sinusoid's semi-amplitude K and
	// its error (m/s); NaN without a sinusoid.
	Amplitude    float64 `json:"amplitude"`
	AmplitudeErr float64 `json:"amplitude_err"`
	// Residuals are the RVs less offsets, sinusoid and the GP's predictive
	// mean, at the series' epochs (m/s).
	Residuals []float64 `json:"residuals"`
}

// ErrGPModel reports an unknown or unusable GP activity model.
var ErrGPModel = errors.New("activity: bad GP activity model")

// FitGPActivity fits a Gaussian-process activity model (single- or
// multi-output, see GPActivityOptions.Model) to the series s, with
// per-instrument offsets and, when opts.Period > 0, a sinusoid at that
// period in the RVs, by maximum a posteriori through mapfit (several
// starts, Laplace errors). It gives ln L, BIC and the Laplace evidence for
// model comparison; CompareGPActivity runs it without and with the
// sinusoid.
//
// Errors: ErrGPModel for an unknown model or missing indicator columns,
// rvfit's validation errors, mapfit.ErrNoStart when no start converged to a
// finite posterior.
func FitGPActivity(s *rvfit.Series, opts *GPActivityOptions) (*GPActivityFit, error) {
	var o GPActivityOptions
	if opts != nil {
		o = *opts
	}
	if s == nil || s.Len() < 8 {
		return nil, fmt.Errorf("%w: a GP activity fit needs at least 8 epochs", rvfit.ErrTooFewEpochs)
	}
	if o.Starts == 0 {
		o.Starts = 6
	}
	if o.Starts < 0 || o.Period < 0 || o.Rotation < 0 || o.RotationErr < 0 {
		return nil, fmt.Errorf("%w: starts %d, period %g, rotation %g ± %g", ErrGPModel, o.Starts, o.Period, o.Rotation, o.RotationErr)
	}
	var f *GPActivityFit
	var err error
	switch o.Model {
	case "", GPRotation:
		f, err = fitRotationActivity(s, &o)
	case GPMulti:
		f, err = fitMultiActivity(s, &o)
	default:
		return nil, fmt.Errorf("%w: %q (want %q or %q)", ErrGPModel, o.Model, GPRotation, GPMulti)
	}
	if o.Context != nil && o.Context.Err() != nil {
		return nil, o.Context.Err()
	}
	return f, err
}

// CompareGPActivity fits the GP activity model of opts without and with a
// sinusoid at period (days): ΔlnL = with.LogLikelihood −
// without.LogLikelihood, ΔBIC = with.BIC − without.BIC (negative favours
// the sinusoid), Δln Z likewise. The fit with the sinusoid also starts from
// the optimum without it.
func CompareGPActivity(s *rvfit.Series, period float64, opts *GPActivityOptions) (without, with *GPActivityFit, err error) {
	if !(period > 0) {
		return nil, nil, fmt.Errorf("%w: period %g d", ErrGPModel, period)
	}
	var o GPActivityOptions
	if opts != nil {
		o = *opts
	}
	o.Period = 0
	if without, err = FitGPActivity(s, &o); err != nil {
		return nil, nil, err
	}
	o.Period = period
	if o.Rotation == 0 {
		o.Rotation = without.Rotation
		o.RotationErr = math.Max(without.RotationErr, 0.1*without.Rotation)
		if math.IsNaN(o.RotationErr) {
			o.RotationErr = 0.1 * without.Rotation
		}
	}
	if with, err = FitGPActivity(s, &o); err != nil {
		return without, nil, err
	}
	return without, with, nil
}

// rvSpan returns max − min of v (at least 1e-3).
func rvSpan(v []float64) float64 {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, x := range v {
		lo, hi = math.Min(lo, x), math.Max(hi, x)
	}
	return math.Max(hi-lo, 1e-3)
}

// periodStarts returns starting rotation periods in (lo, hi): the rotation
// estimate when given, and the highest GLS peak of each series given (and
// its double), duplicates within 5% removed, at most n.
func periodStarts(rot float64, series [][3][]float64, lo, hi float64, n int) []float64 {
	var out []float64
	add := func(p float64) {
		if !(p > lo && p < hi) || len(out) >= n {
			return
		}
		for _, q := range out {
			if math.Abs(math.Log(p/q)) < 0.05 {
				return
			}
		}
		out = append(out, p)
	}
	add(rot)
	var peaks []float64
	for _, sr := range series {
		t, y, e := sr[0], sr[1], sr[2]
		if len(t) < 6 {
			continue
		}
		g, err := rvfit.NewGrid(t, &rvfit.GridOptions{PMin: lo, PMax: hi, Oversampling: 5})
		if err != nil {
			continue
		}
		pg, err := rvfit.GLS(t, y, e, g, nil)
		if err != nil {
			continue
		}
		k := 0
		for i, v := range pg.Power {
			if v > pg.Power[k] {
				k = i
			}
		}
		peaks = append(peaks, 1/g.Freq(k))
	}
	for _, p := range peaks {
		add(p)
	}
	for _, p := range peaks {
		add(2 * p)
	}
	if len(out) == 0 {
		add(math.Sqrt(lo * hi))
	}
	return out
}

// indicatorSeries returns the valid epochs, values and errors of an
// indicator column.
func indicatorSeries(s *rvfit.Series, name string) (t, y, e []float64, idx []int) {
	ind := s.Indicator(name)
	if ind == nil || ind.Err == nil {
		return nil, nil, nil, nil
	}
	for i := range ind.Value {
		if ind.Valid(i) && ind.Err[i] > 0 {
			t, y, e = append(t, s.Time[i]), append(y, ind.Value[i]), append(e, ind.Err[i])
			idx = append(idx, i)
		}
	}
	return t, y, e, idx
}

// fitRotationActivity is FitGPActivity's GPRotation.
func fitRotationActivity(s *rvfit.Series, o *GPActivityOptions) (*GPActivityFit, error) {
	g, ng := groupIndex(s.Instrument)
	T := s.Baseline()
	m := &gpModel{t: s.Time, y: s.RV, sigma: s.RVErr, inst: g, ninst: ng, t0: s.Time[0],
		pLo: 1.5, pHi: math.Max(3, T/2), scale: math.Max(stddev(s.RV), 1e-12), ctx: o.Context}
	if o.Period > 0 {
		m.freq = 1 / o.Period
	}
	if o.Rotation > 0 {
		ls := math.Max(o.RotationErr/o.Rotation, 0.1)
		m.lnPMu, m.lnPSigma = math.Log(o.Rotation), ls
		m.pLo = math.Max(0.5, o.Rotation*math.Exp(-4*ls))
		m.pHi = o.Rotation * math.Exp(4*ls)
	}
	series := [][3][]float64{{s.Time, s.RV, s.RVErr}}
	for _, ind := range s.Indicators {
		if t, y, e, _ := indicatorSeries(s, ind.Name); len(t) > 0 {
			series = append(series, [3][]float64{t, y, e})
		}
	}
	var starts [][]float64
	for _, p := range periodStarts(o.Rotation, series, m.pLo, m.pHi, o.Starts) {
		starts = append(starts, m.start(p))
	}
	r := m.fit(starts)
	if !r.ok {
		return nil, fmt.Errorf("%s: %w", s.Name, mapfit.ErrNoStart)
	}
	out := &GPActivityFit{Model: GPRotation, Period: o.Period, Names: m.space().Names(), Params: r.theta,
		LogLikelihood: r.lnL, LogPosterior: r.lnPost, NumData: len(s.Time), Rotation: r.period, RotationErr: r.periodE,
		Amplitude: math.NaN(), AmplitudeErr: math.NaN()}
	instr := s.Instruments()
	for i := gpKernelParams; i < len(out.Names); i++ {
		out.Names[i] = "jitter_" + instr[i-gpKernelParams]
	}
	for _, in := range instr {
		out.LinearNames = append(out.LinearNames, "offset_"+in)
	}
	widths := make([]float64, 0, len(r.beta))
	span := rvSpan(s.RV)
	for range instr {
		widths = append(widths, 3*span)
	}
	if m.freq > 0 {
		out.LinearNames = append(out.LinearNames, "sin_cos", "sin_sin")
		widths = append(widths, 6*span, 6*span)
	}
	fillFit(out, r.fit, r.beta, r.covBeta, widths)
	// Residuals after the full model: y − Xβ − GP mean.
	if _, _, _, res, sol, ok := m.profileSolve(r.theta, m.design(), false); ok {
		if mean, _, err := predictAtData(sol, res, m.t); err == nil {
			for i := range res {
				res[i] -= mean[i]
			}
			out.Residuals = res
		}
	}
	return out, nil
}

// predictAtData returns the GP's predictive mean at the data epochs.
func predictAtData(sol gp.Solver, r, t []float64) ([]float64, []float64, error) {
	return sol.Predict(r, t, false)
}

// fillFit copies the optimiser's outcome, the linear parameters and the
// model-comparison statistics into out.
func fillFit(out *GPActivityFit, res *mapfit.Result, beta []float64, covBeta *mat.SymDense, widths []float64) {
	out.Converged, out.Status, out.StartsAgree, out.Starts = res.Converged, res.Status, res.Agree, len(res.Starts)
	out.Errors = make([]float64, len(out.Params))
	out.AtBound = make([]string, len(out.Params))
	for i := range out.Errors {
		out.Errors[i] = math.NaN()
		out.AtBound[i] = string(res.AtBound[i])
	}
	out.LogEvidence = math.NaN()
	if L := res.Laplace; L != nil {
		copy(out.Errors, L.Errors)
		out.LogEvidence = L.LogEvidence
	}
	out.Linear = beta
	out.LinearErrors = make([]float64, len(beta))
	for i := range beta {
		out.LinearErrors[i] = math.NaN()
		if covBeta != nil {
			out.LinearErrors[i] = math.Sqrt(covBeta.At(i, i))
		}
	}
	if covBeta != nil && len(beta) > 0 {
		// ∫ exp(−½ δβᵀ C⁻¹ δβ) dβ / Π widths = (2π)^(k/2) det(C)^½ / Π w.
		var ch mat.Cholesky
		if ch.Factorize(covBeta) {
			lz := 0.5*float64(len(beta))*math.Log(2*math.Pi) + 0.5*ch.LogDet()
			for _, w := range widths {
				lz -= math.Log(w)
			}
			out.LogEvidence += lz
		} else {
			out.LogEvidence = math.NaN()
		}
	}
	out.NumParams = len(out.Params) + len(beta)
	out.BIC = rvfit.BIC(out.LogLikelihood, out.NumParams, out.NumData)
	if out.Period > 0 && len(beta) >= 2 {
		var kErr float64
		out.Amplitude, kErr = sinusoidAmplitude(beta, covBeta)
		if !math.IsNaN(kErr) {
			out.AmplitudeErr = kErr
		}
	}
}

// sinusoidAmplitude returns the semi-amplitude √(a² + b²) of the sinusoid
// whose cosine and sine coefficients are the last two elements of beta,
// and its first-order error from their covariance in cov (NaN without it
// or at zero amplitude).
func sinusoidAmplitude(beta []float64, cov *mat.SymDense) (k, kErr float64) {
	nb := len(beta)
	a, b := beta[nb-2], beta[nb-1]
	k, kErr = math.Hypot(a, b), math.NaN()
	if cov != nil && k > 0 {
		caa, cbb, cab := cov.At(nb-2, nb-2), cov.At(nb-1, nb-1), cov.At(nb-2, nb-1)
		kErr = math.Sqrt(math.Max(0, a*a*caa+b*b*cbb+2*a*b*cab)) / k
	}
	return k, kErr
}

// multiIndicators returns the indicator columns of GPMulti: the names
// given, or the first chromospheric index with errors and the bisector
// span when it has errors.
func multiIndicators(s *rvfit.Series, names []string) ([]string, error) {
	if names != nil {
		for _, n := range names {
			if t, _, _, _ := indicatorSeries(s, n); len(t) < 4 {
				return nil, fmt.Errorf("%w: indicator %q is missing, has no errors or fewer than 4 values", ErrGPModel, n)
			}
		}
		return names, nil
	}
	var out []string
	for _, n := range []string{"log_rhk", "s_index", "halpha"} {
		if t, _, _, _ := indicatorSeries(s, n); len(t) >= 4 {
			out = append(out, n)
			break
		}
	}
	if t, _, _, _ := indicatorSeries(s, "bis"); len(t) >= 4 {
		out = append(out, "bis")
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("%w: the multi-output model needs an index (log_rhk, s_index or halpha) or bis column with errors", ErrGPModel)
	}
	return out, nil
}

// multiModel is the GPMulti model of a series: the RVs of each
// instrument and each indicator as series of gp.MultiRotation, linear
// terms (per-instrument offsets of every series, the sinusoid in the RVs)
// profiled by generalised least squares.
type multiModel struct {
	mr      *gp.MultiRotation
	y       [][]float64   // per series
	cols    [][][]float64 // design columns, each per series
	names   []string      // natural parameter names
	sp      mapfit.Space
	hasR    []bool // output o has a derivative term
	nOut    int
	nSeries int
	lnPMu   float64
	lnPSig  float64
	seriesT [][]float64
	rvIdx   [][]int // for each RV series, the epochs of s
}

// toP maps the natural parameters to MultiRotation's vector (an index has
// no derivative term: its R is 0).
func (mm *multiModel) toP(x []float64) []float64 {
	p := append([]float64(nil), x[:4]...)
	k := 4
	for o := 0; o < mm.nOut; o++ {
		p = append(p, x[k])
		k++
		if mm.hasR[o] {
			p = append(p, x[k])
			k++
		} else {
			p = append(p, 0)
		}
	}
	return append(p, x[k:]...)
}

// gradX maps a gradient over MultiRotation's vector to the natural
// parameters.
func (mm *multiModel) gradX(gp []float64) []float64 {
	g := append([]float64(nil), gp[:4]...)
	k := 4
	for o := 0; o < mm.nOut; o++ {
		g = append(g, gp[k])
		if mm.hasR[o] {
			g = append(g, gp[k+1])
		}
		k += 2
	}
	return append(g, gp[k:]...)
}

// profile returns the profile ln L at x (and its gradient when grad is not
// nil: by the envelope theorem the partial gradient at β̂), β̂ and its
// covariance, and the residuals.
func (mm *multiModel) profile(x, grad []float64, wantCov bool) (float64, []float64, *mat.SymDense, [][]float64, bool) {
	p := mm.toP(x)
	rhs := append([][][]float64{mm.y}, mm.cols...)
	sol, err := mm.mr.SolveMany(p, rhs)
	if err != nil {
		return math.Inf(-1), nil, nil, nil, false
	}
	nc := len(mm.cols)
	flat := func(v [][]float64) []float64 {
		var o []float64
		for _, s := range v {
			o = append(o, s...)
		}
		return o
	}
	y := flat(mm.y)
	ky := flat(sol[0])
	X := make([][]float64, nc)
	KX := make([][]float64, nc)
	for j := range mm.cols {
		X[j], KX[j] = flat(mm.cols[j]), flat(sol[j+1])
	}
	a := mat.NewSymDense(nc, nil)
	b := mat.NewVecDense(nc, nil)
	for j := 0; j < nc; j++ {
		b.SetVec(j, dot(KX[j], y))
		for l := j; l < nc; l++ {
			a.SetSym(j, l, dot(KX[j], X[l]))
		}
	}
	_ = ky
	var ch mat.Cholesky
	if !ch.Factorize(a) {
		return math.Inf(-1), nil, nil, nil, false
	}
	var bv mat.VecDense
	if err := ch.SolveVecTo(&bv, b); err != nil {
		return math.Inf(-1), nil, nil, nil, false
	}
	beta := make([]float64, nc)
	r := make([][]float64, len(mm.y))
	for s := range mm.y {
		r[s] = append([]float64(nil), mm.y[s]...)
	}
	for j := range beta {
		beta[j] = bv.AtVec(j)
		for s := range r {
			for i := range r[s] {
				r[s][i] -= beta[j] * mm.cols[j][s][i]
			}
		}
	}
	var lnL float64
	if grad != nil {
		gp := make([]float64, len(p))
		lnL, err = mm.mr.LogLikelihoodGrad(gp, p, r)
		copy(grad, mm.gradX(gp))
	} else {
		lnL, err = mm.mr.LogLikelihood(p, r)
	}
	if err != nil || math.IsNaN(lnL) {
		return math.Inf(-1), nil, nil, nil, false
	}
	var cov *mat.SymDense
	if wantCov {
		cov = mat.NewSymDense(nc, nil)
		if err := ch.InverseTo(cov); err != nil {
			cov = nil
		}
	}
	return lnL, beta, cov, r, true
}

// lnPrior returns the log prior inside the box and its gradient:
// log-uniform in the period (or a Gaussian in ln P), the quality factor
// and the quality gap; uniform in the rest.
func (mm *multiModel) lnPrior(x, grad []float64) float64 {
	lp := -math.Log(x[0]) - math.Log(x[1]) - math.Log(x[2])
	if grad != nil {
		grad[0] -= 1 / x[0]
		grad[1] -= 1 / x[1]
		grad[2] -= 1 / x[2]
	}
	if mm.lnPSig > 0 {
		z := (math.Log(x[0]) - mm.lnPMu) / mm.lnPSig
		lp -= 0.5 * z * z
		if grad != nil {
			grad[0] -= z / (mm.lnPSig * x[0])
		}
	}
	return lp
}

// fitMultiActivity is FitGPActivity's GPMulti.
func fitMultiActivity(s *rvfit.Series, o *GPActivityOptions) (*GPActivityFit, error) {
	inds, err := multiIndicators(s, o.Indicators)
	if err != nil {
		return nil, err
	}
	instr := s.Instruments()
	gi, _ := groupIndex(s.Instrument)
	T := s.Baseline()
	mm := &multiModel{nOut: 1 + len(inds)}
	outputs := append([]string{"rv"}, inds...)
	mm.hasR = make([]bool, mm.nOut)
	mm.hasR[0] = true
	var series []gp.Series
	var seriesInst [][]int
	var seriesNames []string
	var scat []float64
	// RVs: one series per instrument.
	for k, in := range instr {
		var sr gp.Series
		var y []float64
		var idx []int
		for i := range s.Time {
			if gi[i] == k {
				sr.T = append(sr.T, s.Time[i])
				sr.Variance = append(sr.Variance, s.RVErr[i]*s.RVErr[i])
				y = append(y, s.RV[i])
				idx = append(idx, i)
			}
		}
		series = append(series, sr)
		mm.y = append(mm.y, y)
		mm.rvIdx = append(mm.rvIdx, idx)
		seriesInst = append(seriesInst, constInts(len(y), k))
		seriesNames = append(seriesNames, "jitter_"+in)
	}
	rvSD := math.Max(stddev(s.RV), 1e-9)
	nRVSeries := len(series)
	startSeries := [][3][]float64{{s.Time, s.RV, s.RVErr}}
	for j, name := range inds {
		t, y, e, idx := indicatorSeries(s, name)
		sr := gp.Series{Output: 1 + j, T: t}
		for _, v := range e {
			sr.Variance = append(sr.Variance, v*v)
		}
		if name == "bis" {
			mm.hasR[1+j] = true
		}
		ins := make([]int, len(idx))
		for i, k := range idx {
			ins[i] = gi[k]
		}
		series = append(series, sr)
		mm.y = append(mm.y, y)
		seriesInst = append(seriesInst, ins)
		seriesNames = append(seriesNames, "jitter_"+name)
		scat = append(scat, math.Max(stddev(y), 1e-12))
		startSeries = append(startSeries, [3][]float64{t, y, e})
	}
	mm.nSeries = len(series)
	if mm.mr, err = gp.NewMultiRotation(outputs, series); err != nil {
		return nil, fmt.Errorf("%s: %w", s.Name, err)
	}
	// Design: an offset per instrument for every series, the sinusoid in
	// the RVs.
	var linNames []string
	var widths []float64
	for sIdx := range series {
		seen := map[int]bool{}
		for _, k := range seriesInst[sIdx] {
			seen[k] = true
		}
		for k := range instr {
			if !seen[k] {
				continue
			}
			col := make([][]float64, len(series))
			for s2 := range series {
				col[s2] = make([]float64, len(series[s2].T))
			}
			for i, kk := range seriesInst[sIdx] {
				if kk == k {
					col[sIdx][i] = 1
				}
			}
			mm.cols = append(mm.cols, col)
			label := outputs[series[sIdx].Output]
			linNames = append(linNames, "offset_"+label+"_"+instr[k])
			widths = append(widths, 3*rvSpan(mm.y[sIdx]))
		}
	}
	if o.Period > 0 {
		cc := make([][]float64, len(series))
		sc := make([][]float64, len(series))
		for s2 := range series {
			cc[s2] = make([]float64, len(series[s2].T))
			sc[s2] = make([]float64, len(series[s2].T))
		}
		for s2 := 0; s2 < nRVSeries; s2++ {
			for i, t := range series[s2].T {
				sc[s2][i], cc[s2][i] = math.Sincos(2 * math.Pi * (t - s.Time[0]) / o.Period)
			}
		}
		mm.cols = append(mm.cols, cc, sc)
		linNames = append(linNames, "sin_cos", "sin_sin")
		widths = append(widths, 6*rvSpan(s.RV), 6*rvSpan(s.RV))
	}
	// Parameters and their boxes.
	pLo, pHi := 1.5, math.Max(3, T/2)
	if o.Rotation > 0 {
		ls := math.Max(o.RotationErr/o.Rotation, 0.1)
		mm.lnPMu, mm.lnPSig = math.Log(o.Rotation), ls
		pLo, pHi = math.Max(0.5, o.Rotation*math.Exp(-4*ls)), o.Rotation*math.Exp(4*ls)
	}
	mm.sp = mapfit.Space{
		{Name: "gp_prot", Kind: mapfit.LogBounded, Lo: pLo, Hi: pHi},
		{Name: "gp_qual", Kind: mapfit.LogBounded, Lo: 0.05, Hi: 30},
		{Name: "gp_qgap", Kind: mapfit.LogBounded, Lo: 0.01, Hi: 30},
		{Name: "gp_mix", Kind: mapfit.Bounded, Lo: 0, Hi: 1},
	}
	// dG/dt of a unit process at period P is ~2π/P: derivative
	// coefficients get a box wide enough for 10× the scatter at pHi.
	rW := pHi / (2 * math.Pi)
	mm.sp = append(mm.sp,
		mapfit.Param{Name: "gp_rv_level", Kind: mapfit.Bounded, Lo: 0, Hi: 10 * rvSD},
		mapfit.Param{Name: "gp_rv_slope", Kind: mapfit.Bounded, Lo: -10 * rvSD * rW, Hi: 10 * rvSD * rW})
	for j, name := range inds {
		mm.sp = append(mm.sp, mapfit.Param{Name: "gp_" + name + "_level", Kind: mapfit.Bounded, Lo: -10 * scat[j], Hi: 10 * scat[j]})
		if mm.hasR[1+j] {
			mm.sp = append(mm.sp, mapfit.Param{Name: "gp_" + name + "_slope", Kind: mapfit.Bounded, Lo: -10 * scat[j] * rW, Hi: 10 * scat[j] * rW})
		}
	}
	for sIdx, n := range seriesNames {
		sd := rvSD
		if sIdx >= nRVSeries {
			sd = scat[sIdx-nRVSeries]
		}
		mm.sp = append(mm.sp, mapfit.Param{Name: n, Kind: mapfit.Bounded, Lo: 0, Hi: 5 * sd})
	}
	post := func(x []float64) float64 {
		lnL, _, _, _, ok := mm.profile(x, nil, false)
		if !ok || !inBox(mm.sp, x) {
			return math.Inf(-1)
		}
		return lnL + mm.lnPrior(x, nil)
	}
	grad := func(g, x []float64) float64 {
		if !inBox(mm.sp, x) {
			return math.Inf(-1)
		}
		lnL, _, _, _, ok := mm.profile(x, g, false)
		if !ok {
			return math.Inf(-1)
		}
		return lnL + mm.lnPrior(x, g)
	}
	// Starts: each period from the rotation estimate and the periodograms
	// of the RVs and indicators; levels at 0.7 of each series' scatter,
	// signed by the series' correlation with the RVs at shared epochs.
	sign := func(j int) []float64 {
		t, y, _, idx := indicatorSeries(s, inds[j])
		_ = t
		if len(idx) < 4 {
			return []float64{1, -1}
		}
		var a, b []float64
		for i, k := range idx {
			a, b = append(a, s.RV[k]), append(b, y[i])
		}
		if c := stat.Correlation(a, b, nil); c < 0 {
			return []float64{-1}
		}
		return []float64{1}
	}
	var starts [][]float64
	for _, P := range periodStarts(o.Rotation, startSeries, pLo, pHi, o.Starts) {
		x := []float64{P, 1, 2, 0.5, 0.7 * rvSD, 0}
		for j := range inds {
			x = append(x, sign(j)[0]*0.7*scat[j])
			if mm.hasR[1+j] {
				x = append(x, 0)
			}
		}
		for sIdx := range seriesNames {
			sd := rvSD
			if sIdx >= nRVSeries {
				sd = scat[sIdx-nRVSeries]
			}
			x = append(x, 0.3*sd)
		}
		for i, q := range mm.sp {
			if q.Kind == mapfit.Bounded || q.Kind == mapfit.LogBounded {
				w := 1e-3 * (q.Hi - q.Lo)
				x[i] = math.Max(q.Lo+w, math.Min(q.Hi-w, x[i]))
			}
		}
		starts = append(starts, x)
	}
	res, err := mapfit.Fit(&mapfit.Problem{Space: mm.sp, LogPost: post, Grad: grad, Starts: starts},
		&mapfit.Settings{MaxEvaluations: 300 * len(mm.sp), Workers: o.Workers, Context: o.Context})
	if err != nil {
		return nil, fmt.Errorf("%s: %w", s.Name, err)
	}
	lnL, beta, covBeta, r, ok := mm.profile(res.X, nil, true)
	if !ok {
		return nil, fmt.Errorf("%s: %w: the covariance at the optimum is not positive definite", s.Name, mapfit.ErrNoStart)
	}
	out := &GPActivityFit{Model: GPMulti, Period: o.Period, Names: mm.sp.Names(), Params: res.X,
		LogLikelihood: lnL, LogPosterior: res.LogPost, NumData: mm.mr.Len(), Rotation: res.X[0], RotationErr: math.NaN(),
		Amplitude: math.NaN(), AmplitudeErr: math.NaN(), LinearNames: linNames}
	fillFit(out, res, beta, covBeta, widths)
	out.RotationErr = out.Errors[0]
	// Residuals after the full model: RV less offsets, sinusoid and the
	// predictive mean of the RV output given every series.
	p := mm.toP(res.X)
	rvOut := gp.Output{C: p[4], R: p[5]}
	out.Residuals = make([]float64, s.Len())
	for k := 0; k < nRVSeries; k++ {
		mean, err := mm.mr.Predict(p, r, rvOut, series[k].T)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", s.Name, err)
		}
		for i, idx := range mm.rvIdx[k] {
			out.Residuals[idx] = r[k][i] - mean[i]
		}
	}
	return out, nil
}

func constInts(n, v int) []int {
	out := make([]int, n)
	for i := range out {
		out[i] = v
	}
	return out
}

// rnTauLo is the shortest time scale of the red-noise term: the longest
// rotation period the model's rotation kernel may take, so that the term
// stands for variation slower than any rotation and never for white noise
// or for the rotation itself.
func (m *gpModel) rnTauLo() float64 { return math.Max(1, m.pHi) }
