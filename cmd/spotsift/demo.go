package main

// runDemo is "spotsift demo": the whole job on invented stars.
func runDemo(args []string, e *env) int {
	var c common
	fs := newFlagSet(e, "demo", "[--out DIR]", `
Simulates two invented stars - a quiet planet host and an active star with no
planet - as spectra, measures them, vets their signals and writes the reports.`)
	c.addRun(fs)
	fs.String("out", "spotsift-demo", "output `directory`")
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	return notBuilt(e, "demo", "the end-to-end demo")
}
