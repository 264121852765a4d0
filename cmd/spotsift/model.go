package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat"

	"spotsift/activity"
	"spotsift/gp"
	"spotsift/rvfit"
	"spotsift/rvfit/rvgp"
)

// runModel is "spotsift model": a joint Keplerian + activity-noise fit.
func runModel(args []string, e *env) int {
	var c common
	fs := newFlagSet(e, "model", "--data TABLE --planets N [flags]", `
Fits N Keplerian orbits together with one offset and one jitter per
instrument and, with --activity, Gaussian-process activity noise, by
maximum a posteriori from several starts seeded by the periodogram peaks.
Prints the parameters with their Laplace uncertainties, ln L, BIC and the
Laplace evidence; --json prints everything including the residuals, and
--residuals writes them as CSV.

Activity models: none (white noise), rotation (two damped oscillators at P
and P/2, fast), qp (the quasi-periodic kernel), multi (one latent
quasi-periodic process and its derivative driving RV, a chromospheric index
and the bisector span at once, Rajpaul et al. 2015; needs log_rhk, s_index
or halpha and/or bis columns with errors; slow). The GP's period takes a
Gaussian prior around the star file's rotation period when it has one.
--sample N then draws N steps of an ensemble MCMC (Goodman & Weare 2010)
from the fit and reports medians and 16th/84th percentiles, with the
autocorrelation time and convergence.`)
	c.addData(fs)
	c.addStar(fs)
	c.addRun(fs)
	planets := fs.Int("planets", 1, "number of Keplerian signals to fit (0 or more)")
	activityKind := fs.String("activity", "none", "activity `model`: none, rotation or qp")
	starts := fs.Int("starts", 0, "optimiser starts (default 8)")
	periods := fs.String("period", "", "comma-separated starting `periods` in days, one per planet (default: periodogram peaks)")
	resid := fs.String("residuals", "", "write the residuals to this CSV `file`")
	sample := fs.Int("sample", 0, "after the fit, run an ensemble MCMC of this many `steps` (0: none)")
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	if *planets < 0 {
		return fail(e, exitUsage, errorf("model: --planets must be 0 or more, got %d", *planets))
	}
	if err := c.workersOK(); err != nil {
		return fail(e, exitUsage, err)
	}
	ps, err := parsePeriods(*periods)
	if err != nil {
		return fail(e, exitUsage, err)
	}
	if ps != nil && len(ps) != *planets {
		return fail(e, exitUsage, errorf("model: --period gives %d periods for %d planets", len(ps), *planets))
	}
	star, err := c.loadStar()
	if err != nil {
		return fail(e, exitUsage, err)
	}
	s, err := c.loadData(e, "model", 3+5**planets)
	if err != nil {
		return fail(e, exitUsage, err)
	}
	noise, priors, err := activityNoise(*activityKind, s, star)
	if err != nil {
		return fail(e, exitUsage, err)
	}
	opts := &rvfit.FitOptions{Starts: *starts, Seed: c.seed, Workers: c.workers, Periods: ps, Model: &rvfit.ModelOptions{Priors: priors}}
	if star != nil {
		opts.StarMass = star.Mass
	}
	fit, err := rvfit.FitModel(s, *planets, noise, opts)
	if err != nil {
		if errors.Is(err, rvfit.ErrTooManyParams) || errors.Is(err, rvfit.ErrGridOutOfReach) || errors.Is(err, rvfit.ErrBadOption) || errors.Is(err, rvfit.ErrBadPrior) {
			return fail(e, exitUsage, err)
		}
		return fail(e, exitFailed, err)
	}
	if *resid != "" {
		if err := rvfit.WriteFileAtomic(*resid, fit.WriteResiduals); err != nil {
			return fail(e, exitFailed, err)
		}
	}
	var post *rvfit.Posterior
	if *sample < 0 {
		return fail(e, exitUsage, errorf("model: --sample must be 0 or more, got %d", *sample))
	}
	if *sample > 0 {
		so := &rvfit.SampleOptions{Steps: *sample, Seed: c.seed, Workers: c.workers}
		if star != nil {
			so.StarMass = star.Mass
		}
		if post, err = rvfit.SampleModel(fit, so); err != nil {
			return fail(e, exitFailed, err)
		}
	}
	if c.json {
		out := struct {
			Fit       *rvfit.FitResult `json:"fit"`
			Posterior *rvfit.Posterior `json:"posterior,omitempty"`
		}{fit, post}
		if err := json.NewEncoder(e.stdout).Encode(out); err != nil {
			return fail(e, exitFailed, err)
		}
		return exitOK
	}
	if err := fit.WriteParams(e.stdout); err != nil {
		return fail(e, exitFailed, err)
	}
	if post != nil {
		fmt.Fprintf(e.stdout, "\nposterior: %d walkers x %d steps, burn-in %d, thinning %d, autocorrelation time %.1f, converged %v\n",
			post.Walkers, post.Steps, post.Burn, post.Thin, post.TauMax, post.Converged)
		fmt.Fprintf(e.stdout, "%-20s %16s %16s %16s\n", "parameter", "median", "-1 sigma", "+1 sigma")
		for _, sm := range append(append([]rvfit.Summary(nil), post.Params...), post.Derived...) {
			fmt.Fprintf(e.stdout, "%-20s %16.8g %16.4g %16.4g\n", sm.Name, sm.Median, sm.Median-sm.Lo, sm.Hi-sm.Median)
		}
	}
	return exitOK
}

// activityNoise builds the noise model of --activity with its priors:
// nil for white noise (rvfit's default), else a GP whose amplitude is
// log-uniform up to ten times the RV scatter, whose period is a truncated
// Gaussian about the star file's rotation period (10% wide unless the star
// file gives an error) or else uniform between 2 d and half the baseline,
// and whose evolution time lies between half a period and ten baselines.
func activityNoise(kind string, s *rvfit.Series, star *activity.Star) (rvfit.NoiseModel, map[string]rvfit.Prior, error) {
	if kind == "none" || kind == "" {
		return nil, nil, nil
	}
	T := s.Baseline()
	_, sd := stat.PopMeanStdDev(s.RV, nil)
	sd = math.Max(sd, 1e-3)
	pLo, pHi, p0 := 2.0, math.Max(T/2, 3), math.Min(20, T/4)
	var pPrior rvfit.Prior = rvfit.Uniform{Min: pLo, Max: pHi}
	if star != nil && star.RotationPeriod > 0 {
		p0 = star.RotationPeriod
		pe := star.RotationPeriodErr
		if !(pe > 0) {
			pe = 0.1 * p0
		}
		pLo, pHi = math.Max(0.5, p0-4*pe), p0+4*pe
		pPrior = rvfit.TruncatedGaussian{Mu: p0, Sigma: pe, Min: pLo, Max: pHi}
	}
	instruments := s.Instruments()
	priors := map[string]rvfit.Prior{}
	for _, in := range instruments {
		priors["jitter_"+in] = rvfit.Uniform{Min: 0, Max: 5 * sd}
	}
	var k gp.Kernel
	var names []string
	switch kind {
	case "rotation":
		k = gp.RotationSHO{Amp: sd, Period: p0, Quality: 1, QualityGap: 1, Mix: 0.5}
		names = []string{"gp_sigma", "gp_period", "gp_q0", "gp_dq", "gp_f"}
		priors["gp_sigma"] = rvfit.LogUniform{Min: 1e-3 * sd, Max: 10 * sd}
		priors["gp_period"] = pPrior
		priors["gp_q0"] = rvfit.LogUniform{Min: 0.05, Max: 30}
		priors["gp_dq"] = rvfit.LogUniform{Min: 0.01, Max: 30}
		priors["gp_f"] = rvfit.Uniform{Min: 0, Max: 1}
	case "qp":
		k = gp.QuasiPeriodic{Eta1: sd, Eta2: 3 * p0, Eta3: p0, Eta4: 0.5}
		names = []string{"gp_eta1", "gp_eta2", "gp_eta3", "gp_eta4"}
		priors["gp_eta1"] = rvfit.LogUniform{Min: 1e-3 * sd, Max: 10 * sd}
		priors["gp_eta2"] = rvfit.LogUniform{Min: pLo / 2, Max: 10 * T}
		priors["gp_eta3"] = pPrior
		priors["gp_eta4"] = rvfit.LogUniform{Min: 0.1, Max: 5}
	case "multi":
		return multiNoise(s, priors, pPrior, pLo, T, sd)
	default:
		return nil, nil, fmt.Errorf("model: --activity %q: want none, rotation or qp", kind)
	}
	n, err := rvgp.New(k, names, instruments, gp.AutoSolver)
	if err != nil {
		return nil, nil, err
	}
	return n, priors, nil
}

// multiNoise builds the multi-output model of --activity multi on the
// series' chromospheric index (log_rhk, else s_index, else halpha) and
// bisector span, with priors scaled by each series' scatter. Vc is taken
// positive, which fixes the sign of the latent process.
func multiNoise(s *rvfit.Series, priors map[string]rvfit.Prior, pPrior rvfit.Prior, pLo, T, sd float64) (rvfit.NoiseModel, map[string]rvfit.Prior, error) {
	index := ""
	for _, name := range []string{"log_rhk", "s_index", "halpha"} {
		if ind := s.Indicator(name); ind != nil && ind.Err != nil {
			index = name
			break
		}
	}
	bis := ""
	if ind := s.Indicator("bis"); ind != nil && ind.Err != nil {
		bis = "bis"
	}
	n, err := rvgp.NewMultiNoise(s, index, bis)
	if err != nil {
		return nil, nil, fmt.Errorf("model: --activity multi: %w", err)
	}
	scatter := func(name string) float64 {
		ind := s.Indicator(name)
		var v []float64
		for i := range ind.Value {
			if ind.Valid(i) {
				v = append(v, ind.Value[i])
			}
		}
		_, sd := stat.PopMeanStdDev(v, nil)
		return math.Max(sd, 1e-9)
	}
	priors["gp_lambda_e"] = rvfit.LogUniform{Min: pLo / 2, Max: 10 * T}
	priors["gp_period"] = pPrior
	priors["gp_lambda_p"] = rvfit.LogUniform{Min: 0.1, Max: 5}
	priors["gp_vc"] = rvfit.Uniform{Min: 0, Max: 10 * sd}
	priors["gp_vr"] = rvfit.Uniform{Min: -10 * sd * T, Max: 10 * sd * T}
	for _, c := range []struct{ key, col string }{{"gp_lc", index}, {"gp_bc", bis}, {"gp_br", bis}} {
		w := 1.0
		if c.col != "" {
			w = 10 * scatter(c.col)
		}
		if c.key == "gp_br" {
			w *= T
		}
		priors[c.key] = rvfit.Uniform{Min: -w, Max: w}
	}
	for _, col := range []string{index, bis} {
		if col != "" {
			priors["jitter_"+col] = rvfit.Uniform{Min: 0, Max: 5 * scatter(col)}
		}
	}
	return n, priors, nil
}
