package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"

	"spotsift/activity"
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
rotation process and its derivative driving RV, a chromospheric index and
the bisector span at once, Rajpaul et al. 2015, solved in O(N); needs
log_rhk, s_index or halpha and/or bis columns with errors). The GP's period takes a
Gaussian prior around the star file's rotation period when it has one, and
its starts come from that period and the periodograms of the RVs and
indicators. Every fit reports the optimiser's status, how many starts
agree, and flags a parameter at a bound of its prior; unknown errors print
as "—" (null in JSON). Residuals (shown and --residuals) are those of the
full model, GP prediction included.
--sample N then draws N steps of an ensemble MCMC (Goodman & Weare 2010)
from the fit and reports medians and 16th/84th percentiles, with the
autocorrelation time and convergence.`)
	c.addData(fs)
	c.addStar(fs)
	c.addRun(fs)
	planets := fs.Int("planets", 1, "number of Keplerian signals to fit (0 or more)")
	activityKind := fs.String("activity", "none", "activity `model`: none, rotation, qp or multi")
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
	var ao rvgp.ActivityOptions
	if star != nil {
		ao = rvgp.ActivityOptions{Rotation: star.RotationPeriod, RotationErr: star.RotationPeriodErr}
	}
	if *activityKind == rvgp.Rotation || *activityKind == rvgp.Multi {
		// The first start: the optimum of the activity model alone with its
		// linear terms profiled and an analytic gradient (cheap).
		gm := activity.GPRotation
		if *activityKind == rvgp.Multi {
			gm = activity.GPMulti
		}
		if g, err := activity.FitGPActivity(s, &activity.GPActivityOptions{Model: gm, Rotation: ao.Rotation, RotationErr: ao.RotationErr, Workers: c.workers}); err == nil {
			ao.Start = map[string]float64{}
			for i, n := range g.Names {
				ao.Start[n] = g.Params[i]
			}
		}
	}
	noise, priors, err := rvgp.NewActivity(*activityKind, s, ao)
	if err != nil {
		return fail(e, exitUsage, fmt.Errorf("model: --activity: %w", err))
	}
	opts := &rvfit.FitOptions{Starts: *starts, Seed: c.seed, Workers: c.workers, Periods: ps, Model: &rvfit.ModelOptions{Priors: priors}, Marginals: true}
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
		fmt.Fprintf(e.stdout, "%-20s %20s %12s %12s\n", "parameter", "median", "-1 sigma", "+1 sigma")
		for _, sm := range append(append([]rvfit.Summary(nil), post.Params...), post.Derived...) {
			lo, hi := sm.Median-sm.Lo, sm.Hi-sm.Median
			med, _ := rvfit.RoundToError(sm.Median, math.Min(lo, hi))
			_, l := rvfit.RoundToError(sm.Median, lo)
			_, h := rvfit.RoundToError(sm.Median, hi)
			fmt.Fprintf(e.stdout, "%-20s %20s %12s %12s\n", sm.Name, med, l, h)
		}
	}
	return exitOK
}
