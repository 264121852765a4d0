package rvfit

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"

	"spotsift/mapfit"
)

// FitOptions controls FitModel. The zero value (or nil) gives the
// defaults.
type FitOptions struct {
	// Model sets priors and limits (nil means NewModel's defaults).
	Model *ModelOptions
	// Grid sets up the periodograms that seed the starts (nil means
	// NewGrid's defaults).
	Grid *GridOptions
	// Periods, when not nil, gives the starting period of each planet in
	// days instead of the prewhitening peaks; its length must equal the
	// number of planets.
	Periods []float64
	// Starts is the number of optimiser starts; zero means 8. Start 0
	// uses the highest peak of each prewhitening step; the others draw
	// among each step's three highest peaks and perturb the phases,
	// eccentricities and amplitudes.
	Starts int
	// Seed seeds the starts (one PCG stream per start).
	Seed uint64
	// Workers is the number of goroutines; zero means GOMAXPROCS. Results
	// do not depend on it.
	Workers int
	// StarMass is the stellar mass in solar masses for derived minimum
	// masses and semi-major axes; zero leaves them out.
	StarMass float64
	// MaxEvaluations caps the log-posterior evaluations per start; zero
	// means 4000 per parameter.
	MaxEvaluations int
	// Marginals gives a parameter whose posterior the Laplace Gaussian
	// describes badly the percentiles (Median, Lo, Hi) of its marginal
	// instead (mapfit.Settings.Marginals): slower by a few conditional
	// optima per parameter.
	Marginals bool
}

// FitResult is the outcome of FitModel: the maximum a posteriori (MAP)
// parameters with Laplace-approximation uncertainties, residuals and model
// comparison statistics. Unknown numbers are NaN (null in JSON).
type FitResult struct {
	// ParamNames names the elements of Params, Errors and Covariance.
	ParamNames []string `json:"param_names"`
	// Params is the MAP parameter vector θ̂ (see Model for the layout).
	Params []float64 `json:"params"`
	// Errors holds the one-sigma uncertainties sqrt(diag Σ) of the Laplace
	// approximation (mapfit.Laplace: the Hessian in the fit's transformed
	// coordinates, mapped back); NaN for a parameter the curvature does
	// not constrain. A parameter whose MAP sits on a prior bound is flagged
	// in AtBound and keeps the error of its transformed coordinate.
	Errors     []float64   `json:"errors"`
	Covariance [][]float64 `json:"covariance,omitempty"`
	// Median, Lo and Hi are the 50th, 16th and 84th percentiles of each
	// parameter under the Laplace approximation (mapfit.Laplace: the
	// Gaussian in the transformed coordinates mapped back), asymmetric
	// for a scale or a bounded parameter; compare them with a sampler's
	// quantiles (Posterior). NaN where the error is unknown.
	Median []float64 `json:"laplace_median"`
	Lo     []float64 `json:"laplace_p16"`
	Hi     []float64 `json:"laplace_p84"`
	// Marginal flags the parameters whose Median, Lo and Hi are those of
	// the marginal found where the Gaussian failed (FitOptions.Marginals,
	// mapfit.Settings.Marginals).
	Marginal []bool `json:"laplace_marginal,omitempty"`
	// HessianOK reports whether the Hessian was positive definite (else the
	// covariance is taken on the subspace of positive curvature and
	// LogEvidence is NaN).
	HessianOK bool `json:"hessian_ok"`
	// AtBound is "lower bound" or "upper bound" for a parameter whose MAP
	// lies on a bound of its prior (a zero jitter, e at its maximum), ""
	// otherwise.
	AtBound []string `json:"at_bound"`
	// Converged, Status and StartsAgree report the optimiser: whether the
	// winning start met a convergence criterion, gonum/optimize's status,
	// and how many starts reached the best optimum (within 0.5 in ln
	// posterior) out of len(StartLogPosteriors).
	Converged   bool   `json:"converged"`
	Status      string `json:"status"`
	StartsAgree int    `json:"starts_agree"`
	// GradNorm is the largest component of the gradient of ln posterior in
	// the transformed coordinates at θ̂ over the parameters not at a bound
	// (near zero at a stationary point).
	GradNorm float64 `json:"grad_norm"`
	// Planets holds the orbits in physical parameters.
	Planets []PlanetFit `json:"planets"`
	// Instruments, Offsets (m/s), Trend (m/s/d, m/s/d² about
	// Model.RefTime) and NoiseParams describe the rest of θ̂.
	Instruments []string  `json:"instruments"`
	Offsets     []float64 `json:"offsets"`
	Trend       []float64 `json:"trend"`
	NoiseParams []float64 `json:"noise_params"`
	// LogLikelihood, LogPrior and LogPosterior are evaluated at θ̂.
	LogLikelihood float64 `json:"log_likelihood"`
	LogPrior      float64 `json:"log_prior"`
	LogPosterior  float64 `json:"log_posterior"`
	// BIC = k ln N − 2 ln L(θ̂) (Schwarz 1978, Ann. Stat. 6, 461, from
	// memory), with the MAP standing in for the maximum likelihood.
	BIC float64 `json:"bic"`
	// LogEvidence is the Laplace estimate of ln Z (mapfit.Laplace, common
	// practice); NaN when HessianOK is false.
	LogEvidence float64 `json:"log_evidence_laplace"`
	// Time, Residuals and RVErr per epoch. Residuals are observed − the
	// full model: Keplerians, offsets, trend and, for a noise model that
	// predicts (NoisePredictor, e.g. a GP), its conditional mean, which is
	// given in NoisePrediction (nil otherwise). ResidualRMS is their
	// unweighted rms.
	Time            []float64 `json:"time"`
	Residuals       []float64 `json:"residuals"`
	NoisePrediction []float64 `json:"noise_prediction,omitempty"`
	RVErr           []float64 `json:"rv_err"`
	ResidualRMS     float64   `json:"residual_rms"`
	// NObs is the number of epochs, Evaluations the number of
	// log-posterior evaluations over all starts, BestStart the start that
	// won and StartLogPosteriors the optimum reached by each start (null
	// for a start that found no finite posterior).
	NObs               int       `json:"n_obs"`
	Evaluations        int       `json:"evaluations"`
	BestStart          int       `json:"best_start"`
	StartLogPosteriors []float64 `json:"start_log_posteriors"`

	model *Model
}

// MarshalJSON writes the result with NaN and infinite numbers as null.
func (r *FitResult) MarshalJSON() ([]byte, error) {
	type plain FitResult
	cov := make([][]jsonNum, len(r.Covariance))
	for i, row := range r.Covariance {
		cov[i] = jsonNums(row)
	}
	return json.Marshal(struct {
		*plain
		Errors             []jsonNum   `json:"errors"`
		Covariance         [][]jsonNum `json:"covariance,omitempty"`
		Median             []jsonNum   `json:"laplace_median"`
		Lo                 []jsonNum   `json:"laplace_p16"`
		Hi                 []jsonNum   `json:"laplace_p84"`
		LogEvidence        jsonNum     `json:"log_evidence_laplace"`
		StartLogPosteriors []jsonNum   `json:"start_log_posteriors"`
	}{(*plain)(r), jsonNums(r.Errors), cov, jsonNums(r.Median), jsonNums(r.Lo), jsonNums(r.Hi), jsonNum(r.LogEvidence), jsonNums(r.StartLogPosteriors)})
}

// jsonNum is a float64 written as null when NaN or infinite.
type jsonNum float64

func (x jsonNum) MarshalJSON() ([]byte, error) {
	if math.IsNaN(float64(x)) || math.IsInf(float64(x), 0) {
		return []byte("null"), nil
	}
	return json.Marshal(float64(x))
}

func jsonNums(v []float64) []jsonNum {
	if v == nil {
		return nil
	}
	out := make([]jsonNum, len(v))
	for i, x := range v {
		out[i] = jsonNum(x)
	}
	return out
}

// Model returns the model that was fitted.
func (r *FitResult) Model() *Model { return r.model }

// PlanetFit is one fitted orbit with derived quantities.
type PlanetFit struct {
	Keplerian
	// Tc is the time of inferior conjunction (BJD_TDB d).
	Tc float64 `json:"t_conj"`
	// OmegaDeg is ω in degrees.
	OmegaDeg float64 `json:"omega_deg"`
	// MinMass is m sin i in Jupiter masses and SemiMajorAxis a in au; both
	// zero when no star mass was given.
	MinMass       float64 `json:"min_mass_mjup"`
	SemiMajorAxis float64 `json:"a_au"`
}

// FitModel fits nPlanets Keplerians plus per-instrument offsets and the
// noise model (nil means WhiteNoise) to s by maximum a posteriori, from
// several starts seeded by iterative prewhitening of GLS periodograms,
// through mapfit: each start runs gonum's Nelder–Mead and then BFGS in
// transformed coordinates (see Model.space), the best optimum wins, the
// starts' agreement and the optimiser's status are reported, and the
// Laplace approximation gives the errors and evidence. It is the library
// side of "spotsift model".
//
// Errors: NewModel's errors (ErrTooManyParams when the data cannot support
// the model), the grid's errors, ErrBadOption for inconsistent options,
// ErrNoConvergence when no start reached a finite posterior.
func FitModel(s *Series, nPlanets int, noise NoiseModel, opts *FitOptions) (*FitResult, error) {
	var o FitOptions
	if opts != nil {
		o = *opts
	}
	m, err := NewModel(s, nPlanets, noise, o.Model)
	if err != nil {
		return nil, err
	}
	if o.Starts == 0 {
		o.Starts = 8
	}
	if o.Starts < 0 || o.MaxEvaluations < 0 || o.StarMass < 0 {
		return nil, fmt.Errorf("%w: starts %d, max evaluations %d, star mass %g", ErrBadOption, o.Starts, o.MaxEvaluations, o.StarMass)
	}
	if o.Periods != nil && len(o.Periods) != nPlanets {
		return nil, fmt.Errorf("%w: %d starting periods for %d planets", ErrBadOption, len(o.Periods), nPlanets)
	}
	cands, err := seedCandidates(s, nPlanets, &o)
	if err != nil {
		return nil, err
	}
	if o.MaxEvaluations == 0 {
		o.MaxEvaluations = 4000 * m.NumParams()
	}
	starts := make([][]float64, o.Starts)
	for st := range starts {
		rng := rand.New(rand.NewPCG(o.Seed, uint64(st)))
		starts[st] = m.startVector(s, cands, st, rng)
	}
	prob := &mapfit.Problem{Space: m.space(m.scales(starts[0])), LogPost: m.wrappedLogPosterior, Starts: starts}
	if m.HasGradient() {
		prob.Grad = m.wrappedLogPosteriorGrad
	}
	fit, err := mapfit.Fit(prob, &mapfit.Settings{MaxEvaluations: o.MaxEvaluations, NelderMead: true, Workers: workers(o.Workers), Marginals: o.Marginals})
	if err != nil {
		if errors.Is(err, mapfit.ErrNoStart) {
			return nil, fmt.Errorf("%s: %w: no start reached a finite posterior", s.Name, ErrNoConvergence)
		}
		return nil, fmt.Errorf("%s: %w", s.Name, err)
	}
	out := &FitResult{ParamNames: m.ParamNames(), model: m, Instruments: m.Instruments(), NObs: len(m.t),
		Evaluations: fit.Evaluations, BestStart: fit.Best, Converged: fit.Converged, Status: fit.Status, StartsAgree: fit.Agree, GradNorm: fit.GradNorm}
	for _, st := range fit.Starts {
		out.StartLogPosteriors = append(out.StartLogPosteriors, st.LogPost)
	}
	out.AtBound = make([]string, len(fit.AtBound))
	for i, b := range fit.AtBound {
		out.AtBound[i] = string(b)
	}
	m.finish(out, m.wrap(fit.X), o.StarMass, fit.Laplace)
	return out, nil
}

// candidate periods per planet: the three highest peaks of each
// prewhitening step, with the fitted sinusoid of each.
type seedPeak struct {
	f   float64
	fit *SineFit
}

func seedCandidates(s *Series, nPlanets int, o *FitOptions) ([][]seedPeak, error) {
	d, err := newGLSDataMin(s.Time, s.RV, s.RVErr, s.Instrument, 1)
	if err != nil {
		return nil, err
	}
	cands := make([][]seedPeak, nPlanets)
	if nPlanets == 0 {
		return cands, nil
	}
	resid := &glsData{tref: d.tref, t: d.t, y: append([]float64(nil), d.y...), w: d.w, inst: d.inst, nInst: d.nInst, names: d.names}
	var g Grid
	if o.Periods == nil {
		g, err = NewGrid(s.Time, o.Grid)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", s.Name, err)
		}
	}
	T := s.Baseline()
	for p := 0; p < nPlanets; p++ {
		if o.Periods != nil {
			f := 1 / o.Periods[p]
			if !(f > 0) || math.IsInf(f, 0) {
				return nil, fmt.Errorf("%w: starting period %g d", ErrBadPeriod, o.Periods[p])
			}
			cands[p] = []seedPeak{{f, resid.fitSine(f)}}
		} else {
			pg := resid.periodogram(g, true, 1)
			for _, k := range LocalMaxima(pg.Power, g, 1/T, 3) {
				f, _ := resid.refine(g.Freq(k), g.DF)
				cands[p] = append(cands[p], seedPeak{f, resid.fitSine(f)})
			}
			if len(cands[p]) == 0 {
				return nil, fmt.Errorf("%s: %w: no periodogram peak to seed planet %d", s.Name, ErrNoConvergence, p+1)
			}
		}
		fit := cands[p][0].fit
		for i, ti := range resid.t {
			resid.y[i] -= fit.Eval(ti + resid.tref)
		}
	}
	return cands, nil
}

// startVector builds start st: planet parameters from the candidates,
// offsets from the weighted means of the data after removing the
// sinusoids, noise parameters inside their priors.
func (m *Model) startVector(s *Series, cands [][]seedPeak, st int, rng *rand.Rand) []float64 {
	x := make([]float64, m.NumParams())
	for p := 0; p < m.nPlanets; p++ {
		c := cands[p][0]
		if st > 0 && len(cands[p]) > 1 && rng.Float64() < 0.4 {
			c = cands[p][1+rng.IntN(len(cands[p])-1)]
		}
		P := 1 / c.fit.Freq
		K := c.fit.Amplitude()
		// Circular orbit: v = −K sin(2π(t − Tc)/P) = A cos φ + B sin φ.
		phic := math.Atan2(c.fit.A, -c.fit.B)
		tc := c.fit.RefTime + phic/(2*math.Pi)*P
		h, k := 0.05, 0.05
		if st > 0 {
			K *= math.Exp(0.2 * rng.NormFloat64())
			tc += 0.05 * P * rng.NormFloat64()
			e := 0.3 * rng.Float64()
			w := 2 * math.Pi * rng.Float64()
			h, k = math.Sqrt(e)*math.Cos(w), math.Sqrt(e)*math.Sin(w)
			P *= 1 + 1e-3*rng.NormFloat64()/(1+float64(len(m.t)))
		}
		// Keep the start's eccentricity inside the prior's support.
		if elo, ehi := m.ecc.Support(); elo > 0 || ehi < m.emax {
			e := h*h + k*k
			lo, hi := math.Max(elo, 0), math.Min(ehi, m.emax)
			if e <= lo || e >= hi {
				e2 := lo + (hi-lo)*(0.1+0.8*rng.Float64())
				r := math.Sqrt(e2 / math.Max(e, 1e-12))
				if e == 0 {
					h, k, r = 1, 0, math.Sqrt(e2)
				}
				h, k = h*r, k*r
			}
		}
		q := x[5*p : 5*p+5]
		q[0], q[1], q[2], q[3], q[4] = P, K, h, k, m.wrapTc(tc, P)
	}
	// Offsets: weighted mean per instrument of the data minus the orbits.
	base := 5 * m.nPlanets
	kep := m.PredictAt(x, m.t)
	sw := make([]float64, len(m.instr))
	sy := make([]float64, len(m.instr))
	for i := range m.t {
		w := 1 / m.v[i]
		sw[m.inst[i]] += w
		sy[m.inst[i]] += w * (m.y[i] - kep[i])
	}
	for j := range m.instr {
		x[base+j] = sy[j] / sw[j]
	}
	// Noise: white-noise jitter from the excess scatter; otherwise the
	// prior's centre (or a draw when unbounded).
	nb := m.noiseStart()
	for i := base + len(m.instr); i < nb; i++ {
		x[i] = 0 // trends start flat
	}
	_, white := m.noise.(*WhiteNoise)
	var exc float64
	if white {
		r := m.Residuals(x)
		v, vm := 0.0, 0.0
		for i := range r {
			v += r[i] * r[i]
			vm += m.v[i]
		}
		exc = math.Sqrt(math.Max(0, (v-vm)/float64(len(r))))
	}
	var own []float64
	if ns, ok := m.noise.(NoiseStarter); ok {
		own = ns.NoiseStart(st, rng)
	}
	for i := nb; i < len(x); i++ {
		pr := m.priors[i]
		if len(own) == len(x)-nb {
			x[i] = own[i-nb]
			if lo, hi := pr.Support(); !(x[i] > lo && x[i] < hi) {
				x[i] = 0.5 * (lo + hi)
				if math.IsInf(lo, 0) || math.IsInf(hi, 0) {
					x[i] = pr.Rand(rng)
				}
			}
			continue
		}
		lo, hi := pr.Support()
		switch {
		case white:
			x[i] = math.Max(exc, 0.1)
			if x[i] > hi {
				x[i] = 0.5 * (lo + hi)
			}
		case !math.IsInf(lo, 0) && !math.IsInf(hi, 0):
			x[i] = 0.5 * (lo + hi)
		default:
			x[i] = pr.Rand(rng)
		}
	}
	return x
}

func (m *Model) wrapTc(tc, P float64) float64 {
	k := math.Round((tc - m.tmid) / P)
	return tc - k*P
}

// scales returns each parameter's natural step at θ.
func (m *Model) scales(theta []float64) []float64 {
	T := 0.0
	if len(m.t) > 0 {
		lo, hi := m.t[0], m.t[0]
		for _, t := range m.t {
			lo, hi = math.Min(lo, t), math.Max(hi, t)
		}
		T = hi - lo
	}
	sig := 0.0
	for _, v := range m.v {
		sig += math.Sqrt(v)
	}
	sig /= float64(len(m.v))
	sc := make([]float64, len(theta))
	for p := 0; p < m.nPlanets; p++ {
		P := theta[5*p]
		sc[5*p] = 0.1 * P * P / math.Max(T, P)
		sc[5*p+1] = math.Max(0.1*theta[5*p+1], 0.5*sig)
		sc[5*p+2], sc[5*p+3] = 0.1, 0.1
		sc[5*p+4] = 0.02 * P
	}
	for i := 5 * m.nPlanets; i < len(theta); i++ {
		sc[i] = math.Max(0.5*sig, 0.1*math.Abs(theta[i]))
		if pr := m.priors[i]; pr != nil {
			if lo, hi := pr.Support(); !math.IsInf(lo, 0) && !math.IsInf(hi, 0) {
				sc[i] = math.Min(sc[i], 0.1*(hi-lo))
			}
		}
	}
	return sc
}

// wrap returns θ with each free tc wrapped into its one-period window
// (the posterior is periodic in tc).
func (m *Model) wrap(theta []float64) []float64 {
	th := append([]float64(nil), theta...)
	for p := 0; p < m.nPlanets; p++ {
		if m.tcFree[p] && th[5*p] > 0 {
			th[5*p+4] = m.wrapTc(th[5*p+4], th[5*p])
		}
	}
	return th
}

// wrappedLogPosterior is LogPosterior with each free tc wrapped first.
func (m *Model) wrappedLogPosterior(theta []float64) float64 {
	return m.LogPosterior(m.wrap(theta))
}

// space returns the fit's transformed coordinates: the eccentricity pair
// of each planet mapped onto the disk e < MaxEccentricity; a parameter
// whose prior has finite bounds within 10⁴ natural steps sc of each other
// logistic (Uniform, TruncatedGaussian, Beta) or logistic in ln x
// (LogUniform); the rest (periods, times of conjunction, wide offsets)
// free in units of sc, with the prior's walls.
func (m *Model) space(sc []float64) mapfit.Space {
	sp := make(mapfit.Space, len(m.names))
	for i, name := range m.names {
		sp[i] = mapfit.Param{Name: name, Kind: mapfit.Free, Scale: sc[i]}
		if i < 5*m.nPlanets {
			switch i % 5 {
			case 2:
				sp[i] = mapfit.Param{Name: name, Kind: mapfit.DiskPair, Hi: math.Sqrt(m.emax)}
				continue
			case 3:
				sp[i] = mapfit.Param{Name: name}
				continue
			case 0, 4:
				continue
			}
		}
		pr := m.priors[i]
		if pr == nil {
			continue
		}
		lo, hi := pr.Support()
		if math.IsInf(lo, 0) || math.IsInf(hi, 0) || hi-lo > 1e4*sc[i] {
			continue
		}
		if _, ok := pr.(LogUniform); ok {
			sp[i] = mapfit.Param{Name: name, Kind: mapfit.LogBounded, Lo: lo, Hi: hi}
		} else {
			sp[i] = mapfit.Param{Name: name, Kind: mapfit.Bounded, Lo: lo, Hi: hi}
		}
	}
	return sp
}

// finish fills the result at the MAP θ̂ with the Laplace approximation L.
func (m *Model) finish(out *FitResult, theta []float64, mstar float64, L *mapfit.Laplace) {
	out.Params = append([]float64(nil), theta...)
	out.LogPrior = m.LogPrior(theta)
	out.LogLikelihood, _ = m.LogLikelihood(theta)
	out.LogPosterior = out.LogPrior + out.LogLikelihood
	n := float64(len(m.t))
	out.BIC = BIC(out.LogLikelihood, len(theta), len(m.t))
	out.Residuals = m.Residuals(theta)
	if np, ok := m.noise.(NoisePredictor); ok {
		pred, err := np.PredictNoise(m.t, out.Residuals, m.v, m.inst, theta[m.noiseStart():])
		if err == nil && len(pred) == len(out.Residuals) {
			out.NoisePrediction = pred
			for i := range pred {
				out.Residuals[i] -= pred[i]
			}
		}
	}
	out.Time = append([]float64(nil), m.t...)
	out.RVErr = make([]float64, len(m.v))
	ss := 0.0
	for i, r := range out.Residuals {
		out.RVErr[i] = math.Sqrt(m.v[i])
		ss += r * r
	}
	out.ResidualRMS = math.Sqrt(ss / n)
	base := 5 * m.nPlanets
	out.Offsets = append([]float64(nil), theta[base:base+len(m.instr)]...)
	out.Trend = append([]float64(nil), theta[base+len(m.instr):m.noiseStart()]...)
	out.NoiseParams = append([]float64(nil), theta[m.noiseStart():]...)
	for _, kp := range m.Keplerians(theta) {
		pf := PlanetFit{Keplerian: kp, Tc: kp.Tc(), OmegaDeg: kp.Omega * 180 / math.Pi}
		pf.Tc = m.wrapTc(pf.Tc, kp.P)
		if mstar > 0 {
			pf.MinMass, _ = MinimumMass(kp.P, kp.K, kp.E, mstar)
			pf.SemiMajorAxis = SemiMajorAxis(kp.P, pf.MinMass, mstar)
		}
		out.Planets = append(out.Planets, pf)
	}
	out.Errors = nans(len(theta))
	out.Median, out.Lo, out.Hi = nans(len(theta)), nans(len(theta)), nans(len(theta))
	out.LogEvidence = math.NaN()
	if L != nil {
		out.HessianOK = L.PositiveDefinite
		copy(out.Errors, L.Errors)
		copy(out.Median, L.Median)
		copy(out.Lo, L.Lo)
		copy(out.Hi, L.Hi)
		for _, m := range L.Marginal {
			if m {
				out.Marginal = append([]bool(nil), L.Marginal...)
				break
			}
		}
		// The tc of the interval in the same one-period window as θ̂.
		for p := 0; p < m.nPlanets; p++ {
			if i := 5*p + 4; m.tcFree[p] && !math.IsNaN(out.Median[i]) {
				d := m.wrapTc(out.Median[i], theta[5*p]) - out.Median[i]
				out.Median[i] += d
				out.Lo[i] += d
				out.Hi[i] += d
			}
		}
		out.Covariance = L.Cov
		out.LogEvidence = L.LogEvidence
	}
}

func nans(n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = math.NaN()
	}
	return out
}

// LaplaceLogEvidence returns the Laplace estimate of the log evidence
//
//	ln Z ≈ ln[L π](x̂) + (d/2) ln 2π − ½ ln det H,  H = −∇∇ ln[L π](x̂)
//
// for an unnormalised log posterior logp with its maximum at xhat, every
// coordinate free in units of sc (its natural scale), through
// mapfit.LaplaceAt. ok is false (and lnZ NaN) when H is not positive
// definite. Reference: docs/methods.md (common practice); poor for
// multimodal posteriors.
func LaplaceLogEvidence(logp func([]float64) float64, xhat, sc []float64) (lnZ float64, ok bool) {
	sp := make(mapfit.Space, len(xhat))
	for i := range sp {
		sp[i] = mapfit.Param{Name: strconv.Itoa(i), Kind: mapfit.Free, Scale: sc[i]}
	}
	L, err := mapfit.LaplaceAt(&mapfit.Problem{Space: sp, LogPost: logp}, xhat)
	if err != nil || !L.PositiveDefinite {
		return math.NaN(), false
	}
	return L.LogEvidence, true
}

// BIC returns the Bayesian information criterion k ln n − 2 ln L̂ for k
// free parameters, n data and maximum log-likelihood logL (Schwarz 1978,
// Ann. Stat. 6, 461, from memory). ΔBIC > 10 is "very strong" evidence
// (Kass & Raftery 1995, JASA 90, 773, from memory).
func BIC(logL float64, k, n int) float64 {
	return float64(k)*math.Log(float64(n)) - 2*logL
}

// ResidualSeries returns the fit's residuals as a Series (RV = residual,
// same times, errors and instruments, no indicators), ready for Scan: the
// periodogram of what the fitted orbits leave behind.
func (r *FitResult) ResidualSeries() *Series {
	s := &Series{Name: "residuals", Time: append([]float64(nil), r.Time...), RV: append([]float64(nil), r.Residuals...), RVErr: append([]float64(nil), r.RVErr...)}
	for i := range r.Time {
		in := DefaultInstrument
		if r.model != nil {
			in = r.model.instr[r.model.inst[i]]
		}
		s.Instrument = append(s.Instrument, in)
	}
	return s
}
