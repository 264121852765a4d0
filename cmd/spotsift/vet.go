package main

// runVet is "spotsift vet": the full diagnosis of each signal.
func runVet(args []string, e *env) int {
	var c common
	fs := newFlagSet(e, "vet", "--data TABLE [--star FILE] [--period P[,P...]] [flags]", `
Judges each signal - the periods given with --period, or else the significant
periodogram peaks - against the star's activity: rotation period, harmonics
and aliases, indicator periodograms and correlations, coherence over time,
activity-noise models and chromaticity. Prints a summary with the verdict of
each signal (planet-like, activity-like or inconclusive) and the evidence
behind it. The verdict is a statistical diagnosis: it informs, and does not
replace, the team's scientific judgement.`)
	c.addData(fs)
	c.addStar(fs)
	c.addRun(fs)
	fs.String("period", "", "comma-separated candidate `periods` in days (default: significant peaks)")
	fs.String("out", "", "write the verdict JSON and the report into this `directory`")
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	if _, err := c.loadStar(); err != nil {
		return fail(e, exitUsage, err)
	}
	if _, err := c.loadData(e, "vet", 8); err != nil {
		return fail(e, exitUsage, err)
	}
	return notBuilt(e, "vet", "the diagnosis")
}
