package mapfit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/optimize"

	"spotsift/internal/worker"
)

// ErrNoStart is returned when no start reached a finite posterior.
var ErrNoStart = errors.New("mapfit: no start reached a finite posterior")

// Problem is a MAP fit: a log-posterior over a Space and where to start.
type Problem struct {
	// Space gives the parameters and their transforms.
	Space Space
	// LogPost returns the unnormalised ln posterior at natural parameters
	// x; −Inf (or NaN) where it vanishes or cannot be evaluated. It must be
	// safe for concurrent use when Workers > 1.
	LogPost func(x []float64) float64
	// Grad, when not nil, returns ln posterior at x and stores its
	// gradient with respect to x in grad. Nil means central finite
	// differences in the transformed coordinates.
	Grad func(grad, x []float64) float64
	// Starts are the starting points in natural parameters (at least one).
	Starts [][]float64

	natural   bool            // Settings.NaturalMAP of the current fit
	marginals bool            // Settings.Marginals of the current fit
	workers   int             // Settings.Workers of the current fit (≥ 1)
	ctx       context.Context // Settings.Context of the current fit, or nil
}

// Settings controls Fit. A nil *Settings means the defaults.
type Settings struct {
	// MaxEvaluations caps the log-posterior evaluations per start; zero
	// means 2000 per parameter.
	MaxEvaluations int
	// NelderMead, when set, runs gonum's Nelder–Mead before the
	// quasi-Newton polish (for rough, multimodal posteriors such as
	// Keplerian ones).
	NelderMead bool
	// Workers runs starts (and the marginals of Marginals) in parallel;
	// zero means GOMAXPROCS. Results do not depend on it.
	Workers int
	// AgreeTol is the difference in ln posterior within which a start is
	// counted as reaching the best optimum; zero means 0.5.
	AgreeTol float64
	// NoLaplace skips the Laplace step.
	NoLaplace bool
	// NaturalMAP maximises the posterior of the natural parameters
	// themselves, scales included (by default a scale's optimum is that of
	// ln x; see Fit). For callers whose priors are flat in x.
	NaturalMAP bool
	// Marginals replaces the Laplace percentiles (Laplace.Median, Lo,
	// Hi) of every parameter whose posterior the Gaussian describes
	// badly by those of its marginal, integrated over the others by a
	// Laplace approximation at each of its values (see marginal.go):
	// two conditional optima per parameter to test, ten to thirty for a
	// parameter that fails the test (about half the fit's own cost for
	// the GP models of "model").
	Marginals bool
	// Context, when not nil, stops the fit soon after it is cancelled:
	// every later evaluation of the posterior is skipped (the optimisers
	// give up) and Fit returns the context's error. Nil: never cancelled.
	Context context.Context
}

// StartResult is the outcome of one start.
type StartResult struct {
	X       []float64 `json:"x"`
	LogPost float64   `json:"log_posterior"`
	// Status is gonum/optimize's termination status of the last stage.
	Status string `json:"status"`
	// Converged is true when the optimiser stopped on a convergence
	// criterion (gradient, function change, step or the method's own),
	// not on an evaluation limit or a failure.
	Converged   bool `json:"converged"`
	Evaluations int  `json:"evaluations"`

	score float64 // the maximised function (ln posterior with scales in ln x)
}

// Result is the outcome of Fit.
type Result struct {
	// Names are the parameter names, X the MAP in natural parameters and
	// LogPost its ln posterior.
	Names   []string  `json:"names"`
	X       []float64 `json:"x"`
	LogPost float64   `json:"log_posterior"`
	// Best indexes the winning start in Starts.
	Best   int           `json:"best_start"`
	Starts []StartResult `json:"starts"`
	// Agree counts the starts whose optimum lies within AgreeTol of the
	// best in ln posterior (the best included).
	Agree int `json:"starts_agreeing"`
	// Converged and Status are the winning start's.
	Converged bool   `json:"converged"`
	Status    string `json:"status"`
	// GradNorm is the largest component of the gradient of ln posterior in
	// the transformed coordinates at X over the parameters not at a bound:
	// small at a stationary point.
	GradNorm float64 `json:"grad_norm"`
	// AtBound flags parameters whose MAP lies on a bound.
	AtBound     []Bound `json:"at_bound"`
	Evaluations int     `json:"evaluations"`
	// Laplace is the curvature at the optimum (nil with NoLaplace).
	Laplace *Laplace `json:"laplace,omitempty"`
}

// Summary is a one-line account of convergence and agreement, e.g.
// "converged (GradientThreshold); 7 of 8 starts agree".
func (r *Result) Summary() string {
	c := "not converged"
	if r.Converged {
		c = "converged"
	}
	s := fmt.Sprintf("%s (%s); %d of %d starts agree", c, r.Status, r.Agree, len(r.Starts))
	var b []string
	for i, v := range r.AtBound {
		if v != Inside {
			b = append(b, fmt.Sprintf("%s at its %s", r.Names[i], v))
		}
	}
	for i, v := range b {
		if i == 0 {
			s += "; "
		} else {
			s += ", "
		}
		s += v
	}
	return s
}

// Fit maximises the posterior from every start and keeps the best (for
// the scale parameters, Positive and LogBounded, the posterior of ln x: a
// log-uniform prior is then flat and cannot pile the optimum up at its
// lower bound, common practice for scales); each
// start runs (optionally) Nelder–Mead and then BFGS with a More–Thuente
// line search (gonum/optimize) in the transformed coordinates, and the
// best optimum gets its Laplace approximation.
//
// Errors: ErrSpace for a bad space or a start outside it, ErrNoStart when
// no start reached a finite posterior, the context's error when
// Settings.Context is cancelled; a panic in the posterior (a bug) is
// returned as an error wrapping worker.ErrPanic, not raised.
func Fit(p *Problem, set *Settings) (*Result, error) {
	var s Settings
	if set != nil {
		s = *set
	}
	if err := p.Space.Validate(); err != nil {
		return nil, err
	}
	pc := *p
	pc.natural = s.NaturalMAP
	pc.ctx = s.Context
	pc.marginals = s.Marginals
	p = &pc
	d := len(p.Space)
	if len(p.Starts) == 0 {
		return nil, fmt.Errorf("%w: no starting point", ErrSpace)
	}
	if s.MaxEvaluations == 0 {
		s.MaxEvaluations = 2000 * max(d, 1)
	}
	if s.AgreeTol == 0 {
		s.AgreeTol = 0.5
	}
	u0 := make([][]float64, len(p.Starts))
	for i, x := range p.Starts {
		u, err := p.Space.ToU(nil, x)
		if err != nil {
			return nil, fmt.Errorf("start %d: %w", i, err)
		}
		u0[i] = u
	}
	res := &Result{Names: p.Space.Names(), Starts: make([]StartResult, len(p.Starts))}
	nw := s.Workers
	if nw <= 0 {
		nw = runtime.GOMAXPROCS(0)
	}
	p.workers = nw
	nw = min(nw, len(u0))
	jobs := make(chan int)
	var wg worker.Group
	for w := 0; w < nw; w++ {
		wg.Go(func() {
			for i := range jobs {
				res.Starts[i] = p.run(u0[i], &s)
			}
		})
	}
	wg.Feed(jobs, len(u0))
	if err := wg.Wait(); err != nil {
		return nil, err
	}
	if err := p.cancelled(); err != nil {
		return nil, err
	}
	res.Best = -1
	for i, st := range res.Starts {
		res.Evaluations += st.Evaluations
		if !math.IsInf(st.score, -1) && !math.IsNaN(st.score) && (res.Best < 0 || st.score > res.Starts[res.Best].score) {
			res.Best = i
		}
	}
	if res.Best < 0 {
		return res, ErrNoStart
	}
	b := res.Starts[res.Best]
	res.X = append([]float64(nil), b.X...)
	res.LogPost, res.Converged, res.Status = b.LogPost, b.Converged, b.Status
	for _, st := range res.Starts {
		if st.score >= b.score-s.AgreeTol {
			res.Agree++
		}
	}
	res.AtBound = p.Space.AtBound(res.X)
	ub, _ := p.Space.ToU(nil, res.X)
	res.GradNorm = p.interiorGrad(ub)
	if !s.NoLaplace {
		res.Laplace = p.laplace(res.X)
		if err := p.cancelled(); err != nil {
			return nil, err
		}
		if !res.Converged && res.Laplace.covU != nil && res.Laplace.PositiveDefinite {
			// The Newton decrement ½ gᵀH⁻¹g bounds what a further step
			// could gain in ln posterior (common practice); below 0.01 the
			// optimum is reached to well within its statistical error.
			g := make([]float64, d)
			p.gradU(g, ub, false)
			dec := 0.0
			for i := 0; i < d; i++ {
				for j := 0; j < d; j++ {
					dec += 0.5 * g[i] * res.Laplace.covU.At(i, j) * g[j]
				}
			}
			if dec < 0.01 {
				res.Converged = true
				res.Status = fmt.Sprintf("Newton decrement %.1g; gonum: %s", dec, res.Status)
			}
		}
	}
	return res, nil
}

// cancelled returns the fit's context's error, nil when it has none or
// goes on.
func (p *Problem) cancelled() error {
	if p.ctx == nil {
		return nil
	}
	return p.ctx.Err()
}

// objective returns the function minimised at u (+Inf where the posterior
// vanishes): without withJac, −[ln p(x) + Σ ln x_i over the scale
// parameters (Positive, LogBounded)], whose minimum is the MAP with every
// scale taken in ln x; with withJac, −ln q(u) = −[ln p(x) + ln|det dx/du|],
// the density the Laplace approximation expands.
func (p *Problem) objective(u []float64, withJac bool) float64 {
	if p.cancelled() != nil {
		return math.Inf(1)
	}
	x := p.Space.ToX(nil, u)
	v := p.LogPost(x)
	if math.IsNaN(v) || math.IsInf(v, 1) {
		return math.Inf(1)
	}
	if withJac {
		_, lj := p.Space.jacobian(u)
		v += lj
	} else if !p.natural {
		v += p.Space.logScale(x)
	}
	return -v
}

// gradU stores the gradient of −(ln posterior [+ ln|J|]) with respect to u
// in g and returns the objective.
func (p *Problem) gradU(g, u []float64, withJac bool) float64 {
	d := len(u)
	if p.Grad == nil {
		f := func(v []float64) float64 { return p.objective(v, withJac) }
		fd.Gradient(g, f, u, &fd.Settings{Formula: fd.Central, Step: 1e-5})
		for i := range g {
			if math.IsNaN(g[i]) || math.IsInf(g[i], 0) {
				g[i] = 0
			}
		}
		return p.objective(u, withJac)
	}
	if p.cancelled() != nil {
		clear(g)
		return math.Inf(1)
	}
	x := p.Space.ToX(nil, u)
	gx := make([]float64, d)
	v := p.Grad(gx, x)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		for i := range g {
			g[i] = 0
		}
		return math.Inf(1)
	}
	J, lj := p.Space.jacobian(u)
	if !withJac && !p.natural {
		for i, q := range p.Space {
			if q.Kind == Positive || q.Kind == LogBounded {
				gx[i] += 1 / x[i]
			}
		}
		v += p.Space.logScale(x)
	}
	for j := 0; j < d; j++ {
		s := 0.0
		for i := 0; i < d; i++ {
			s += gx[i] * J[i*d+j]
		}
		g[j] = -s
	}
	if withJac {
		// ∇ ln|J| by central differences of the closed form (cheap, smooth).
		uu := append([]float64(nil), u...)
		for j := range uu {
			h := 1e-5
			uu[j] = u[j] + h
			_, a := p.Space.jacobian(uu)
			uu[j] = u[j] - h
			_, b := p.Space.jacobian(uu)
			uu[j] = u[j]
			g[j] -= (a - b) / (2 * h)
		}
		v += lj
	}
	return -v
}

// stationary is the status of a start whose line search stopped where the
// gradient in the transformed coordinates is already below 1e-3 (finite-
// difference noise at the optimum): a converged start.
var stationary = optimize.NewStatus("Stationary", false, nil)

func converged(st optimize.Status) bool {
	switch st {
	case stationary, optimize.Success, optimize.FunctionConvergence, optimize.GradientThreshold, optimize.StepConvergence, optimize.MethodConverge, optimize.FunctionThreshold:
		return true
	}
	return false
}

// run optimises one start.
func (p *Problem) run(u0 []float64, s *Settings) StartResult {
	evals := 0
	f := func(u []float64) float64 { evals++; return p.objective(u, false) }
	out := StartResult{X: p.Space.ToX(nil, u0), LogPost: math.Inf(-1), Status: "not started", score: math.Inf(-1)}
	if math.IsInf(f(u0), 1) {
		out.Status = "start outside the support"
		out.Evaluations = evals
		return out
	}
	u := append([]float64(nil), u0...)
	fu := f(u)
	if s.NelderMead {
		// Quasi-Newton first, so that the simplex starts in the start's own
		// basin and can only improve on its optimum.
		u, fu, _, _ = p.bfgs(u, fu, f, &evals, s.MaxEvaluations/4)
		pr := optimize.Problem{Func: f}
		st := &optimize.Settings{FuncEvaluations: s.MaxEvaluations / 4, Converger: &optimize.FunctionConverge{Absolute: 1e-8, Relative: 1e-10, Iterations: 50 * len(u)}}
		if r, err := optimize.Minimize(pr, u, st, &optimize.NelderMead{}); r != nil && r.X != nil && r.F < fu && (err == nil || !math.IsInf(r.F, 1)) {
			u, fu = append([]float64(nil), r.X...), r.F
		}
	}
	u, fu, status, err := p.bfgs(u, fu, f, &evals, s.MaxEvaluations-evals)
	for restart := 0; restart < 2 && status == optimize.Failure && evals < s.MaxEvaluations; restart++ {
		// A failed line search often comes from a stale Hessian estimate:
		// restart from the point reached.
		u, fu, status, err = p.bfgs(u, fu, f, &evals, s.MaxEvaluations-evals)
	}
	// A line-search failure right at a stationary point (fd noise) is a
	// convergence: check the gradient directly.
	conv := converged(status)
	if !conv && err != nil && !math.IsInf(fu, 1) {
		if p.interiorGrad(u) < 1e-3 {
			conv = true
			status = stationary
		}
	}
	out.X = p.Space.ToX(nil, u)
	out.LogPost = p.LogPost(out.X)
	out.score = -fu
	out.Status = status.String()
	out.Converged = conv
	out.Evaluations = evals
	return out
}

// interiorGrad returns the largest component of the objective's gradient
// in u over the parameters not at a bound (a parameter at a bound has its
// optimum at infinity in u, where its gradient only fades).
func (p *Problem) interiorGrad(u []float64) float64 {
	g := make([]float64, len(u))
	p.gradU(g, u, false)
	ab := p.Space.AtBound(p.Space.ToX(nil, u))
	gm := 0.0
	for i, v := range g {
		if ab[i] == Inside {
			gm = math.Max(gm, math.Abs(v))
		}
	}
	return gm
}

// bfgs runs gonum's BFGS from u (objective fu) within maxEval evaluations
// and returns the better of u and its result. BFGS sees v = u/bfgsStep:
// gonum takes a first step of unit length along the steepest descent, and
// in v that is a change of bfgsStep in u, which keeps the first step
// inside the start's basin (a factor e in a scale would jump to a
// harmonic of a period); later steps are quasi-Newton and scale-free.
func (p *Problem) bfgs(u []float64, fu float64, f func([]float64) float64, evals *int, maxEval int) ([]float64, float64, optimize.Status, error) {
	const bfgsStep = 0.1
	toU := func(v []float64) []float64 {
		w := make([]float64, len(v))
		for i := range v {
			w[i] = bfgsStep * v[i]
		}
		return w
	}
	pr := optimize.Problem{
		Func: func(v []float64) float64 { return f(toU(v)) },
		Grad: func(g, v []float64) {
			if p.Grad == nil {
				*evals += 2 * len(v)
			} else {
				*evals++
			}
			p.gradU(g, toU(v), false)
			for i := range g {
				g[i] *= bfgsStep
			}
		},
	}
	st := &optimize.Settings{
		FuncEvaluations:   max(maxEval, 50),
		GradientThreshold: 1e-6 * bfgsStep,
		Converger:         &optimize.FunctionConverge{Absolute: 1e-9, Relative: 1e-12, Iterations: 20},
	}
	v0 := make([]float64, len(u))
	for i := range u {
		v0[i] = u[i] / bfgsStep
	}
	r, err := optimize.Minimize(pr, v0, st, &optimize.BFGS{})
	status := optimize.Failure
	if r != nil {
		status = r.Status
		if r.X != nil && r.F <= fu && !math.IsNaN(r.F) {
			u, fu = toU(r.X), r.F
		}
	}
	return u, fu, status, err
}
