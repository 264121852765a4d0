package main

import (
	"encoding/json"
	"errors"

	"spotsift/activity"
	"spotsift/rvfit"
)

// runScan is "spotsift scan": periodograms of RV and every indicator.
func runScan(args []string, e *env) int {
	var c common
	fs := newFlagSet(e, "scan", "--data TABLE [flags]", `
Computes the generalised Lomb-Scargle periodogram of the RVs (with one
offset per instrument) and of every indicator column on one frequency grid,
with the spectral window, the strongest peaks, their false-alarm
probabilities (Baluev 2008, and a bootstrap on request) and their likely
aliases, and prewhitens the RVs signal by signal. Prints the peak list;
--json prints everything, --out writes the periodograms as CSV.`)
	c.addData(fs)
	c.addRun(fs)
	pmin := fs.Float64("pmin", 0, "shortest period, `days` (default 1.05, as vet)")
	pmax := fs.Float64("pmax", 0, "longest period, `days` (default: the baseline, as vet)")
	over := fs.Float64("oversampling", 0, "grid points per 1/baseline (default 10)")
	fast := fs.Bool("fast", false, "use the fast (non-uniform FFT) engine, accurate to about 1e-9 in power")
	boot := fs.Int("bootstrap", 0, "number of bootstrap resamplings for empirical false-alarm probabilities")
	peaks := fs.Int("peaks", 0, "peaks listed per periodogram (default 5)")
	out := fs.String("out", "", "write every periodogram to this CSV `file`")
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	if err := c.workersOK(); err != nil {
		return fail(e, exitUsage, err)
	}
	if err := periodRangeOK(*pmin, *pmax); err != nil {
		return fail(e, exitUsage, err)
	}
	for _, f := range []struct {
		name string
		n    int
		def  string
	}{{"--bootstrap", *boot, "none"}, {"--peaks", *peaks, "5"}} {
		if err := countOK(f.name, f.n, f.def); err != nil {
			return fail(e, exitUsage, err)
		}
	}
	s, err := c.loadData(e, "scan", 4)
	if err != nil {
		return fail(e, exitUsage, err)
	}
	// One default period range for scan and vet: activity.DefaultPMin to
	// the baseline.
	if *pmin == 0 {
		*pmin = activity.DefaultPMin
	}
	if *pmax == 0 {
		*pmax = s.Baseline()
	}
	res, err := rvfit.Scan(s, &rvfit.ScanOptions{Grid: &rvfit.GridOptions{PMin: *pmin, PMax: *pmax, Oversampling: *over},
		Fast: *fast, Bootstrap: *boot, NPeaks: *peaks, Seed: c.seed, Workers: c.workers})
	if err != nil {
		if errors.Is(err, rvfit.ErrBadGrid) || errors.Is(err, rvfit.ErrGridOutOfReach) || errors.Is(err, rvfit.ErrBadOption) || errors.Is(err, rvfit.ErrTooFewEpochs) {
			return fail(e, exitUsage, err)
		}
		return fail(e, exitFailed, err)
	}
	if *out != "" {
		if err := rvfit.WriteFileAtomic(*out, res.WritePeriodograms); err != nil {
			return fail(e, exitFailed, err)
		}
	}
	if c.json {
		enc := json.NewEncoder(e.stdout)
		if err := enc.Encode(res); err != nil {
			return fail(e, exitFailed, err)
		}
		return exitOK
	}
	if err := res.WritePeaks(e.stdout); err != nil {
		return fail(e, exitFailed, err)
	}
	for _, sk := range res.Skipped {
		warnf(e, c.quiet, "%s", sk)
	}
	return exitOK
}
