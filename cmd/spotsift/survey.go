package main

// runSurvey is "spotsift survey": a whole stellar sample.
func runSurvey(args []string, e *env) int {
	var c common
	fs := newFlagSet(e, "survey", "--manifest FILE --out DIR [flags]", `
Runs the diagnosis over every star of a manifest in parallel, resumably, and
writes one folder per star, a summary table, a catalogue and an index page.`)
	c.addRun(fs)
	fs.String("manifest", "", "the sample, a CSV or TOML `file`")
	fs.String("out", "", "output `directory`")
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	return notBuilt(e, "survey", "the survey runner")
}
