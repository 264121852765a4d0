package main

// runModel is "spotsift model": a joint Keplerian + activity-noise fit.
func runModel(args []string, e *env) int {
	var c common
	fs := newFlagSet(e, "model", "--data TABLE --planets N [flags]", `
Fits N Keplerian orbits together with per-instrument offsets and jitter, and
optionally Gaussian-process activity noise, and writes the parameters, their
uncertainties and the residuals.`)
	c.addData(fs)
	c.addStar(fs)
	c.addRun(fs)
	planets := fs.Int("planets", 1, "number of Keplerian signals to fit (0 or more)")
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	if *planets < 0 {
		return fail(e, exitUsage, errorf("model: --planets must be 0 or more, got %d", *planets))
	}
	if _, err := c.loadData(e, "model", 3+5**planets); err != nil {
		return fail(e, exitUsage, err)
	}
	return notBuilt(e, "model", "the orbit-fitting machinery")
}
