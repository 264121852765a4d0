package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"path/filepath"
	"strings"

	"spotsift/activity/photometry"
	"spotsift/activity/starsim"
)

// runSimulate is "spotsift simulate": synthetic spectra of spotted stars.
func runSimulate(args []string, e *env) int {
	var c common
	fs := newFlagSet(e, "simulate", "--scenario FILE --out DIR [flags]", `
Simulates a rotating, spotted star observed with a precise spectrograph, as
described by a scenario file, and writes the spectra, the per-epoch table and
the truth.

Files written in DIR: scenario.toml (the scenario with every default filled
in and the seed: it reproduces the run by itself), truth.csv (per epoch: the
activity RV, each planet's RV, spot and facular filling factors, noise-free
indicators), star.toml (the star's parameters as a --star file for the
other commands), epochs.csv (the simulated measurements: time, rv, rv_err,
instrument, fwhm, bis, s_index with errors) and, when the scenario asks for
them (spectrum.full) or --spectra is given, spectra/epoch-NNNN.fits (1-D,
log-linear air wavelengths, flux in photo-electrons), and lightcurve.csv: the
star's disk-integrated flux over the observing window (time, flux, flux_err,
sector; 30-minute cadence, sectors of 27 d with 1-d gaps, the RV seasons,
10% outages, white noise of --lc-noise), a --photometry file for vet.`)
	c.addRun(fs)
	scenario := fs.String("scenario", "", "the scenario, a TOML `file`")
	demo := fs.String("demo", "", "use a built-in demo scenario instead: "+demoNames())
	out := fs.String("out", "", "output `directory`")
	spectra := fs.Bool("spectra", false, "write FITS spectra even if the scenario asks for tables only")
	float32 := fs.Bool("float32", false, "write spectra with 32-bit float flux (half the size)")
	lcNoise := fs.Float64("lc-noise", 5e-4, "white noise per point of the light curve, relative `flux`")
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	seedGiven := false
	fs.Visit(func(f *flag.Flag) { seedGiven = seedGiven || f.Name == "seed" })
	if err := c.workersOK(); err != nil {
		return fail(e, exitUsage, err)
	}
	if *out == "" {
		return fail(e, exitUsage, errorf("simulate: --out is required"))
	}
	if (*scenario == "") == (*demo == "") {
		return fail(e, exitUsage, errorf("simulate: give exactly one of --scenario and --demo"))
	}
	var sc *starsim.Scenario
	var err error
	if *scenario != "" {
		sc, err = starsim.ReadScenario(*scenario)
	} else {
		sc, err = starsim.DemoScenario(*demo)
	}
	if err != nil {
		return fail(e, exitUsage, err)
	}
	if seedGiven {
		// An explicit --seed wins over the seed a scenario file may carry.
		sc.Seed = 0
	}
	if *spectra {
		sc.Spectrum.Full = true
	}
	res, err := starsim.Simulate(sc, c.seed, &starsim.Options{Workers: c.workers})
	if err != nil {
		return fail(e, exitUsage, err)
	}
	var prog *progress
	if res.Scenario.Spectrum.Full {
		prog = newProgress(e.stderr, res.Len(), "spectra", c.quiet)
	}
	wopts := &starsim.WriteOptions{Workers: c.workers, Creator: "spotsift " + version(), Float32: *float32}
	if prog != nil {
		wopts.Progress = prog.Set
	}
	err = res.WriteFiles(*out, wopts)
	if prog != nil {
		prog.Done()
	}
	if err != nil {
		return fail(e, exitFailed, err)
	}
	if !(*lcNoise > 0) {
		return fail(e, exitUsage, errorf("simulate: --lc-noise must be positive"))
	}
	if err := writeLightCurve(res, filepath.Join(*out, lightCurveFile), *lcNoise); err != nil {
		return fail(e, exitFailed, err)
	}
	files := []string{starsim.ScenarioFile, starsim.TruthFile, starsim.StarFile, starsim.TableFile, lightCurveFile}
	if res.Scenario.Spectrum.Full {
		files = append(files, filepath.Join(starsim.SpectraDir, "epoch-*.fits"))
	}
	if c.json {
		enc := json.NewEncoder(e.stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(map[string]any{
			"star": res.Scenario.Name, "seed": res.Seed, "epochs": res.Len(),
			"spectra": res.Scenario.Spectrum.Full, "out": *out, "files": files, "version": version(),
		}); err != nil {
			return fail(e, exitFailed, err)
		}
	}
	if !c.quiet {
		what := "tables"
		if res.Scenario.Spectrum.Full {
			what = "tables and spectra"
		}
		fmt.Fprintf(e.stderr, "spotsift simulate: %s: %d epochs, %s in %s (seed %d)\n", res.Scenario.Name, res.Len(), what, *out, res.Seed)
	}
	return exitOK
}

// demoNames lists the built-in demo scenarios for the help text.
func demoNames() string {
	ds, err := starsim.DemoScenarios()
	if err != nil {
		return "(none)"
	}
	var names []string
	for _, d := range ds {
		names = append(names, d.Name)
	}
	return strings.Join(names, ", ")
}

// lightCurveFile is the simulated light curve's name in simulate's folder.
const lightCurveFile = "lightcurve.csv"

// writeLightCurve writes the simulated star's light curve.
func writeLightCurve(res *starsim.Result, path string, noise float64) error {
	lc, err := res.LightCurve(&starsim.Photometry{Noise: noise})
	if err != nil {
		return err
	}
	return photometry.Write(path, &photometry.LightCurve{Name: path, Time: lc.Time, Flux: lc.Flux, Err: lc.Err, Sector: lc.Sector}, "spotsift "+version())
}
