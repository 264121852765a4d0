package rvfit

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"strconv"
)

// SampleOptions controls SampleModel. The zero value (or nil) gives the
// defaults.
type SampleOptions struct {
	// Walkers is the ensemble size; zero means max(4·d, 24) rounded up to
	// an even number (d parameters).
	Walkers int
	// Steps, A, Seed, Workers: see EnsembleOptions (Steps zero means 3000).
	Steps   int
	A       float64
	Seed    uint64
	Workers int
	// InitScale is the radius of the starting ball in units of the MAP's
	// Laplace uncertainties (or natural scales where those are missing);
	// zero means 0.1.
	InitScale float64
	// StarMass (solar masses) adds the minimum mass and semi-major axis
	// of each planet to the derived quantities; zero leaves them out.
	StarMass float64
}

// Summary is the marginal posterior of one quantity.
type Summary struct {
	Name string `json:"name"`
	// Median and the 16th/84th percentiles (Lo, Hi); Mean and Std.
	Median float64 `json:"median"`
	Lo     float64 `json:"p16"`
	Hi     float64 `json:"p84"`
	Mean   float64 `json:"mean"`
	Std    float64 `json:"std"`
	// TauInt is the integrated autocorrelation time in steps (0 for
	// derived quantities) and RHat the split-chain Gelman–Rubin statistic
	// over walkers.
	TauInt float64 `json:"tau_int"`
	RHat   float64 `json:"rhat"`
}

// Posterior is the outcome of SampleModel.
type Posterior struct {
	// Params summarises each parameter of the model, Derived the physical
	// quantities of each planet: e<n>, omega<n>_deg, tp<n> and, with a star
	// mass, msini<n>_mjup and a<n>_au.
	Params  []Summary `json:"params"`
	Derived []Summary `json:"derived"`
	// Walkers, Steps, Burn and Thin describe the chain; Burn = ⌈2 τ_max⌉
	// and Thin = max(1, ⌊τ_min/2⌋) (common practice for ensemble
	// samplers), Burn capped at half the chain.
	Walkers int `json:"walkers"`
	Steps   int `json:"steps"`
	Burn    int `json:"burn"`
	Thin    int `json:"thin"`
	// TauMax is the largest autocorrelation time; Converged reports
	// whether Steps ≥ 50 TauMax and every R̂ < 1.1.
	TauMax    float64 `json:"tau_max"`
	Converged bool    `json:"converged"`
	// AcceptanceFraction of the stretch moves; NEffective ≈
	// (Steps − Burn)·Walkers/TauMax.
	AcceptanceFraction float64 `json:"acceptance_fraction"`
	NEffective         float64 `json:"n_effective"`
	// Samples holds the thinned post-burn-in draws, one row per draw.
	Samples [][]float64 `json:"-"`
	// Chain is the full run.
	Chain *Chain `json:"-"`
}

// SampleModel samples the posterior of fit's model with SampleEnsemble,
// from a small ball around the MAP scaled by its Laplace uncertainties,
// and summarises it.
//
// Errors: ErrBadOption for bad options, ErrBadWalkers when no finite
// starting ball can be found, and SampleEnsemble's errors.
func SampleModel(fit *FitResult, opts *SampleOptions) (*Posterior, error) {
	var o SampleOptions
	if opts != nil {
		o = *opts
	}
	if fit == nil || fit.model == nil {
		return nil, fmt.Errorf("%w: no fitted model", ErrBadOption)
	}
	m := fit.model
	d := m.NumParams()
	if o.Walkers == 0 {
		o.Walkers = max(4*d, 24)
		o.Walkers += o.Walkers % 2
	}
	if o.Steps == 0 {
		o.Steps = 3000
	}
	if o.InitScale == 0 {
		o.InitScale = 0.1
	}
	if !(o.InitScale > 0) || o.Walkers < 2*d || o.Walkers%2 != 0 || o.Steps < 0 {
		return nil, fmt.Errorf("%w: walkers %d, steps %d, init scale %g", ErrBadOption, o.Walkers, o.Steps, o.InitScale)
	}
	sc := m.scales(fit.Params)
	for i := range sc {
		if e := fit.Errors[i]; e > 0 && !math.IsInf(e, 1) {
			sc[i] = fit.Errors[i]
		}
	}
	rng := rand.New(rand.NewPCG(o.Seed, 1))
	init := make([][]float64, o.Walkers)
	for w := range init {
		ok := false
		for try := 0; try < 1000 && !ok; try++ {
			x := make([]float64, d)
			// Parameters held on a prior bound at the MAP (zero Laplace
			// error) use their natural scale; draws outside the support
			// are rejected.
			for i := range x {
				x[i] = fit.Params[i] + o.InitScale*sc[i]*rng.NormFloat64()
			}
			if lp := m.LogPosterior(x); !math.IsInf(lp, 0) && !math.IsNaN(lp) {
				init[w], ok = x, true
			}
		}
		if !ok {
			return nil, fmt.Errorf("%w: no finite starting point near the MAP for walker %d", ErrBadWalkers, w)
		}
	}
	ch, err := SampleEnsemble(m.LogPosterior, init, &EnsembleOptions{Steps: o.Steps, A: o.A, Seed: o.Seed, Workers: o.Workers})
	if err != nil {
		return nil, err
	}
	return summarize(m, ch, o.StarMass), nil
}

func summarize(m *Model, ch *Chain, mstar float64) *Posterior {
	d := ch.Dim
	p := &Posterior{Walkers: ch.NWalkers, Steps: ch.NSteps, AcceptanceFraction: ch.AcceptanceFraction, Chain: ch}
	taus := make([]float64, d)
	tmax, tmin := 0.0, math.Inf(1)
	for i := 0; i < d; i++ {
		// Estimate τ on the second half (after any burn-in).
		tau, _ := AutocorrTime(ch.Trace(i, ch.NSteps/2, 1), 5)
		taus[i] = tau
		tmax = math.Max(tmax, tau)
		tmin = math.Min(tmin, tau)
	}
	p.TauMax = tmax
	p.Burn = min(int(math.Ceil(2*tmax)), ch.NSteps/2)
	p.Thin = max(1, int(tmin/2))
	rows := 0
	for s := p.Burn; s < ch.NSteps; s += p.Thin {
		for w := 0; w < ch.NWalkers; w++ {
			p.Samples = append(p.Samples, append([]float64(nil), ch.At(s, w)...))
			rows++
		}
	}
	if tmax > 0 {
		p.NEffective = float64(ch.NSteps-p.Burn) * float64(ch.NWalkers) / tmax
	}
	p.Converged = float64(ch.NSteps) >= 50*tmax
	names := m.ParamNames()
	col := make([]float64, len(p.Samples))
	for i := 0; i < d; i++ {
		for r, x := range p.Samples {
			col[r] = x[i]
		}
		sm := summary(names[i], col)
		sm.TauInt = taus[i]
		sm.RHat = splitRHat(ch.Trace(i, p.Burn, 1))
		if !(sm.RHat < 1.1) {
			p.Converged = false
		}
		if math.IsNaN(sm.RHat) {
			sm.RHat = 0 // too short to tell; JSON cannot carry NaN
		}
		p.Params = append(p.Params, sm)
	}
	// Derived quantities per planet.
	for pl := 0; pl < m.nPlanets; pl++ {
		k := strconv.Itoa(pl + 1)
		der := map[string][]float64{}
		order := []string{"e" + k, "omega" + k + "_deg", "tp" + k}
		if mstar > 0 {
			order = append(order, "msini"+k+"_mjup", "a"+k+"_au")
		}
		for _, x := range p.Samples {
			kp := m.Keplerians(x)[pl]
			der[order[0]] = append(der[order[0]], kp.E)
			der[order[1]] = append(der[order[1]], kp.Omega*180/math.Pi)
			der[order[2]] = append(der[order[2]], kp.Tp)
			if mstar > 0 {
				mm, _ := MinimumMass(kp.P, math.Abs(kp.K), kp.E, mstar)
				der[order[3]] = append(der[order[3]], mm)
				der[order[4]] = append(der[order[4]], SemiMajorAxis(kp.P, mm, mstar))
			}
		}
		for _, nm := range order {
			sm := summary(nm, der[nm])
			sm.RHat = math.NaN()
			p.Derived = append(p.Derived, sm)
		}
	}
	// JSON cannot carry NaN; derived R̂ is not computed.
	for i := range p.Derived {
		p.Derived[i].RHat = 0
	}
	return p
}

// splitRHat returns R̂ over the walkers' chains, each split in halves.
func splitRHat(chains [][]float64) float64 {
	var split [][]float64
	for _, c := range chains {
		h := len(c) / 2
		if h < 2 {
			return math.NaN()
		}
		split = append(split, c[:h], c[h:2*h])
	}
	return GelmanRubin(split)
}

// summary returns the median, 16th and 84th percentiles (linear
// interpolation between order statistics), mean and standard deviation.
func summary(name string, x []float64) Summary {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	mu, v := 0.0, 0.0
	for _, a := range s {
		mu += a
	}
	mu /= float64(len(s))
	for _, a := range s {
		v += (a - mu) * (a - mu)
	}
	return Summary{Name: name, Median: quantile(s, 0.5), Lo: quantile(s, 0.15865525393145707), Hi: quantile(s, 0.8413447460685429), Mean: mu, Std: math.Sqrt(v / float64(max(1, len(s)-1)))}
}

// quantile returns the q-quantile of sorted s by linear interpolation.
func quantile(s []float64, q float64) float64 {
	if len(s) == 0 {
		return math.NaN()
	}
	h := q * float64(len(s)-1)
	i := int(h)
	if i >= len(s)-1 {
		return s[len(s)-1]
	}
	return s[i] + (h-float64(i))*(s[i+1]-s[i])
}
