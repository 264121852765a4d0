package main

// runMeasure is "spotsift measure": spectra to a per-epoch table.
func runMeasure(args []string, e *env) int {
	var c common
	fs := newFlagSet(e, "measure", "--spectra DIR|GLOB --out TABLE [flags]", `
Measures every spectrum - RV and its photon-noise error, CCF FWHM, contrast,
bisector span, chromospheric indices, per-order RVs - and writes one row per
epoch. Spectra that fail are named and left out.`)
	c.addStar(fs)
	c.addRun(fs)
	fs.String("spectra", "", "a `directory` or glob of spectra (FITS or text)")
	fs.String("out", "", "the per-epoch `table` to write (.csv or .fits)")
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	return notBuilt(e, "measure", "spectrum measurement")
}
