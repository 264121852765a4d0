package rvfit

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sync"

	"gonum.org/v1/gonum/mat"
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
}

// FitResult is the outcome of FitModel: the maximum a posteriori (MAP)
// parameters with Laplace-approximation uncertainties, residuals and model
// comparison statistics.
type FitResult struct {
	// ParamNames names the elements of Params, Errors and Covariance.
	ParamNames []string `json:"param_names"`
	// Params is the MAP parameter vector θ̂ (see Model for the layout).
	Params []float64 `json:"params"`
	// Errors holds the one-sigma uncertainties sqrt(diag Σ), Σ the inverse
	// of the Hessian H = −∇∇ ln[L π] at θ̂ (central finite differences);
	// all zero when H is not positive definite (then HessianOK is false),
	// and zero for a parameter whose MAP sits on a prior bound (such as a
	// jitter of zero), which is held fixed.
	Errors     []float64   `json:"errors"`
	Covariance [][]float64 `json:"covariance,omitempty"`
	HessianOK  bool        `json:"hessian_ok"`
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
	// LogEvidence is the Laplace estimate
	// ln Z ≈ ln L(θ̂) + ln π(θ̂) + (d/2) ln 2π − ½ ln det H (docs/methods.md §9,
	// common practice); 0 when HessianOK is false.
	LogEvidence float64 `json:"log_evidence_laplace"`
	// Time, Residuals (observed − Keplerians − offsets, m/s; a GP noise
	// model's prediction is not subtracted) and RVErr per epoch;
	// ResidualRMS is their unweighted rms.
	Time        []float64 `json:"time"`
	Residuals   []float64 `json:"residuals"`
	RVErr       []float64 `json:"rv_err"`
	ResidualRMS float64   `json:"residual_rms"`
	// NObs is the number of epochs, Evaluations the number of
	// log-posterior evaluations over all starts, BestStart the start that
	// won and StartLogPosteriors the optimum reached by each start.
	NObs               int       `json:"n_obs"`
	Evaluations        int       `json:"evaluations"`
	BestStart          int       `json:"best_start"`
	StartLogPosteriors []float64 `json:"start_log_posteriors"`

	model *Model
}

// Model returns the model that was fitted.
func (r *FitResult) Model() *Model { return r.model }

// PlanetFit is one fitted orbit with derived quantities.
type PlanetFit struct {
	Keplerian
	// Tc is the time of inferior conjunction (BJD_TDB d).
	Tc float64 `json:"tc"`
	// OmegaDeg is ω in degrees.
	OmegaDeg float64 `json:"omega_deg"`
	// MinMass is m sin i in Jupiter masses and SemiMajorAxis a in au; both
	// zero when no star mass was given.
	MinMass       float64 `json:"min_mass_mjup"`
	SemiMajorAxis float64 `json:"a_au"`
}

// FitModel fits nPlanets Keplerians plus per-instrument offsets and the
// noise model (nil means WhiteNoise) to s by maximum a posteriori, from
// several starts seeded by iterative prewhitening of GLS periodograms:
// each start runs Nelder–Mead and then BFGS with central-difference
// gradients in coordinates scaled to each parameter's
// natural step, and the best optimum wins. It is the library side of
// "spotsift model".
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
	type outcome struct {
		x     []float64
		f     float64
		evals int
	}
	res := make([]outcome, o.Starts)
	var wg sync.WaitGroup
	jobs := make(chan int)
	for w := 0; w < min(workers(o.Workers), o.Starts); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for st := range jobs {
				rng := rand.New(rand.NewPCG(o.Seed, uint64(st)))
				x0 := m.startVector(s, cands, st, rng)
				x, f, n := m.optimize(x0, o.MaxEvaluations)
				res[st] = outcome{x, f, n}
			}
		}()
	}
	for st := 0; st < o.Starts; st++ {
		jobs <- st
	}
	close(jobs)
	wg.Wait()
	best := -1
	out := &FitResult{ParamNames: m.ParamNames(), model: m, Instruments: m.Instruments(), NObs: len(m.t)}
	for st, r := range res {
		out.Evaluations += r.evals
		out.StartLogPosteriors = append(out.StartLogPosteriors, r.f)
		if !math.IsInf(r.f, -1) && (best < 0 || r.f > res[best].f) {
			best = st
		}
	}
	if best < 0 {
		return nil, fmt.Errorf("%s: %w: no start reached a finite posterior", s.Name, ErrNoConvergence)
	}
	for i, v := range out.StartLogPosteriors {
		if math.IsInf(v, -1) {
			out.StartLogPosteriors[i] = -math.MaxFloat64
		}
	}
	out.BestStart = best
	m.finish(out, res[best].x, o.StarMass)
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
			for _, k := range localMaxima(pg.Power, g, 1/T, 3) {
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
	for i := nb; i < len(x); i++ {
		pr := m.priors[i]
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

// objective returns −ln posterior at θ = θ0 + sc∘x, with each free tc
// wrapped into its one-period window (the posterior is periodic in tc).
func (m *Model) objective(theta0, sc []float64) (func([]float64) float64, func([]float64) []float64) {
	toTheta := func(x []float64) []float64 {
		th := make([]float64, len(x))
		for i := range x {
			th[i] = theta0[i] + sc[i]*x[i]
		}
		for p := 0; p < m.nPlanets; p++ {
			if m.tcFree[p] && th[5*p] > 0 {
				th[5*p+4] = m.wrapTc(th[5*p+4], th[5*p])
			}
		}
		return th
	}
	f := func(x []float64) float64 {
		lp := m.LogPosterior(toTheta(x))
		if math.IsInf(lp, -1) || math.IsNaN(lp) {
			return math.Inf(1)
		}
		return -lp
	}
	return f, toTheta
}

func (m *Model) optimize(theta0 []float64, maxEval int) ([]float64, float64, int) {
	sc := m.scales(theta0)
	f, toTheta := m.objective(theta0, sc)
	evals := 0
	fc := func(x []float64) float64 { evals++; return f(x) }
	x := make([]float64, len(theta0))
	if math.IsInf(fc(x), 1) {
		return theta0, math.Inf(-1), evals
	}
	best, bestF := x, fc(x)
	// Nelder–Mead twice (a restart around the first optimum escapes
	// collapsed simplices), then BFGS to polish.
	for rep := 0; rep < 2; rep++ {
		xb, fb, _ := nelderMead(fc, best, maxEval/3, 1e-9, 1e-4)
		if fb < bestF {
			best, bestF = xb, fb
		}
	}
	if xb, fb, _ := bfgs(fc, best, maxEval/3, 1e-6); fb < bestF {
		best, bestF = xb, fb
	}
	return toTheta(best), -bestF, evals
}

// finish fills the result at the MAP θ̂.
func (m *Model) finish(out *FitResult, theta []float64, mstar float64) {
	out.Params = append([]float64(nil), theta...)
	out.LogPrior = m.LogPrior(theta)
	out.LogLikelihood, _ = m.LogLikelihood(theta)
	out.LogPosterior = out.LogPrior + out.LogLikelihood
	n := float64(len(m.t))
	out.BIC = BIC(out.LogLikelihood, len(theta), len(m.t))
	out.Residuals = m.Residuals(theta)
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
	cov, logdetH, ok := m.laplace(theta)
	out.HessianOK = ok
	out.Errors = make([]float64, len(theta))
	if ok {
		out.Covariance = cov
		for i := range theta {
			out.Errors[i] = math.Sqrt(cov[i][i])
		}
		out.LogEvidence = out.LogPosterior + 0.5*float64(nFree(theta, m.LogPosterior, m.scales(theta)))*math.Log(2*math.Pi) - 0.5*logdetH
	}
}

// laplace returns Σ = H⁻¹ and ln det H for H = −∇∇ ln[Lπ] at θ, and
// whether H is positive definite.
func (m *Model) laplace(theta []float64) ([][]float64, float64, bool) {
	return laplaceAt(m.LogPosterior, theta, m.scales(theta))
}

// laplaceAt returns the covariance Σ = H⁻¹ and ln det H of the Hessian
// H = −∇∇ logp at x, by central finite differences in the coordinates
// u = (x − x̂)/sc (step 1e-3), and whether H is positive definite.
// Coordinates whose ±step leaves the support (a MAP on a prior bound, such
// as a jitter of zero) are held fixed: their rows are dropped from H and
// their variances are zero.
func laplaceAt(logp func([]float64) float64, x, sc []float64) ([][]float64, float64, bool) {
	d := len(x)
	th := make([]float64, d)
	f := func(u []float64) float64 {
		for i := range u {
			th[i] = x[i] + sc[i]*u[i]
		}
		return -logp(th)
	}
	const h = 1e-3
	u := make([]float64, d)
	var free []int
	for i := 0; i < d; i++ {
		u[i] = h
		fp := f(u)
		u[i] = -h
		fm := f(u)
		u[i] = 0
		if !math.IsInf(fp, 0) && !math.IsInf(fm, 0) && !math.IsNaN(fp) && !math.IsNaN(fm) {
			free = append(free, i)
		}
	}
	nf := len(free)
	if nf == 0 {
		return nil, 0, false
	}
	f0 := f(u)
	H := mat.NewSymDense(nf, nil)
	for a, i := range free {
		u[i] = h
		fp := f(u)
		u[i] = -h
		fm := f(u)
		u[i] = 0
		H.SetSym(a, a, (fp-2*f0+fm)/(h*h))
		for b := 0; b < a; b++ {
			j := free[b]
			var v [4]float64
			for k, sg := range [4][2]float64{{1, 1}, {1, -1}, {-1, 1}, {-1, -1}} {
				u[i], u[j] = sg[0]*h, sg[1]*h
				v[k] = f(u)
			}
			u[i], u[j] = 0, 0
			H.SetSym(a, b, (v[0]-v[1]-v[2]+v[3])/(4*h*h))
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(H) {
		return nil, 0, false
	}
	var inv mat.SymDense
	if err := ch.InverseTo(&inv); err != nil {
		return nil, 0, false
	}
	logdet := ch.LogDet()
	cov := make([][]float64, d)
	for i := range cov {
		cov[i] = make([]float64, d)
	}
	for a, i := range free {
		for b, j := range free {
			cov[i][j] = inv.At(a, b) * sc[i] * sc[j]
		}
		logdet -= 2 * math.Log(sc[i])
	}
	return cov, logdet, true
}

// LaplaceLogEvidence returns the Laplace estimate of the log evidence
//
//	ln Z ≈ ln[L π](x̂) + (d/2) ln 2π − ½ ln det H,  H = −∇∇ ln[L π](x̂)
//
// for an unnormalised log posterior logp with its maximum at xhat, using
// central second differences with steps sc (natural scales of each
// coordinate). ok is false when H is not positive definite. Reference:
// docs/methods.md §9 [common practice]; poor for multimodal posteriors.
func LaplaceLogEvidence(logp func([]float64) float64, xhat, sc []float64) (lnZ float64, ok bool) {
	_, logdet, ok := laplaceAt(logp, xhat, sc)
	if !ok {
		return 0, false
	}
	return logp(xhat) + 0.5*float64(nFree(xhat, logp, sc))*math.Log(2*math.Pi) - 0.5*logdet, true
}

// BIC returns the Bayesian information criterion k ln n − 2 ln L̂ for k
// free parameters, n data and maximum log-likelihood logL (Schwarz 1978,
// Ann. Stat. 6, 461, from memory). ΔBIC > 10 is "very strong" evidence
// (Kass & Raftery 1995, JASA 90, 773, from memory).
func BIC(logL float64, k, n int) float64 {
	return float64(k)*math.Log(float64(n)) - 2*logL
}

// nFree counts the coordinates laplaceAt does not hold fixed.
func nFree(x []float64, logp func([]float64) float64, sc []float64) int {
	th := append([]float64(nil), x...)
	n := 0
	for i := range x {
		th[i] = x[i] + 1e-3*sc[i]
		a := logp(th)
		th[i] = x[i] - 1e-3*sc[i]
		b := logp(th)
		th[i] = x[i]
		if !math.IsInf(a, 0) && !math.IsInf(b, 0) && !math.IsNaN(a) && !math.IsNaN(b) {
			n++
		}
	}
	return n
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
