package main

// runScan is "spotsift scan": periodograms of RV and every indicator.
func runScan(args []string, e *env) int {
	var c common
	fs := newFlagSet(e, "scan", "--data TABLE [flags]", `
Computes the generalised Lomb-Scargle periodogram of the RVs and of every
indicator column on one frequency grid, with the spectral window, the peaks,
their false-alarm probabilities and their likely aliases.`)
	c.addData(fs)
	c.addRun(fs)
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	if _, err := c.loadData(e, "scan", 4); err != nil {
		return fail(e, exitUsage, err)
	}
	return notBuilt(e, "scan", "the periodogram machinery")
}
