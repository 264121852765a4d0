package main

// runSimulate is "spotsift simulate": synthetic spectra of spotted stars.
func runSimulate(args []string, e *env) int {
	var c common
	fs := newFlagSet(e, "simulate", "--scenario FILE --out DIR [flags]", `
Simulates a rotating, spotted star observed with a precise spectrograph, as
described by a scenario file, and writes the spectra, the per-epoch table and
the truth.`)
	c.addRun(fs)
	fs.String("scenario", "", "the scenario, a TOML `file`")
	fs.String("out", "", "output `directory`")
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	return notBuilt(e, "simulate", "the simulator")
}
