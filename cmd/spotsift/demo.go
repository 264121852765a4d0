package main

import (
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"spotsift/activity"
	"spotsift/activity/starsim"
	"spotsift/rvfit"
)

// runDemo is "spotsift demo": the whole job on invented stars.
func runDemo(args []string, e *env) int {
	var c common
	fs := newFlagSet(e, "demo", "[--out DIR] [flags]", `
Runs the whole job on two invented stars: a quiet G dwarf with a planet and
an active K dwarf with none. It simulates their spectra (FITS), measures
them into per-epoch tables, vets every signal, and writes a report per star
(HTML, PDF, figures, verdict JSON). The same seed gives the same verdicts.`)
	c.addRun(fs)
	out := fs.String("out", "spotsift-demo", "output `directory`")
	tables := fs.Bool("tables-only", false, "simulate tables instead of spectra (faster; skips the measurement step)")
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	if err := c.workersOK(); err != nil {
		return fail(e, exitUsage, err)
	}
	demos, err := starsim.DemoScenarios()
	if err != nil {
		return fail(e, exitFailed, err)
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return fail(e, exitFailed, err)
	}
	var reports []string
	for _, d := range demos {
		dg, report, err := demoStar(e, &c, d, *out, !*tables)
		if err != nil {
			return fail(e, exitFailed, fmt.Errorf("demo %s: %w", d.Name, err))
		}
		reports = append(reports, report)
		if !c.quiet {
			fmt.Fprintf(e.stdout, "%s (%s): %d epochs\n", dg.Star, d.Name, dg.NEpochs)
			for i, s := range dg.Signals {
				fmt.Fprintf(e.stdout, "  S%d  P = %8.4g d  K = %6.3g m/s  %-14s %s\n", i+1, float64(s.Period), float64(s.Amplitude), s.Verdict, s.Summary)
			}
		}
	}
	sort.Strings(reports)
	fmt.Fprintf(e.stdout, "\nReports:\n")
	for _, r := range reports {
		fmt.Fprintf(e.stdout, "  %s\n", r)
	}
	fmt.Fprintf(e.stdout, "\n%s\n", activity.Caution)
	return exitOK
}

// demoStar simulates, measures and vets one demo star; it returns the
// diagnosis and the path of its HTML report.
func demoStar(e *env, c *common, d starsim.Demo, out string, spectra bool) (*activity.Diagnosis, string, error) {
	dir := filepath.Join(out, d.Name)
	simDir := filepath.Join(dir, "simulated")
	sc := d.Scenario
	sc.Spectrum.Full = spectra
	res, err := starsim.Simulate(sc, c.seed, &starsim.Options{Workers: c.workers})
	if err != nil {
		return nil, "", err
	}
	bar := newProgress(e.stderr, res.Len(), d.Name+": simulating", c.quiet || !spectra)
	if err := res.WriteFiles(simDir, &starsim.WriteOptions{Workers: c.workers, Progress: bar.Set, Creator: "spotsift " + version, Float32: true}); err != nil {
		return nil, "", err
	}
	bar.Done()
	starPath := filepath.Join(simDir, starsim.StarFile)
	star, err := activity.ReadStar(starPath)
	if err != nil {
		return nil, "", err
	}
	var s *rvfit.Series
	dataPath := filepath.Join(simDir, starsim.TableFile)
	if spectra {
		paths, err := spectrumPaths(filepath.Join(simDir, starsim.SpectraDir))
		if err != nil {
			return nil, "", err
		}
		mbar := newProgress(e.stderr, len(paths), d.Name+": measuring", c.quiet)
		var failures []activity.MeasureFailure
		s, failures, err = activity.Measure(paths, &activity.MeasureOptions{Star: star, Workers: c.workers, Progress: mbar.Set})
		mbar.Done()
		if err != nil {
			return nil, "", err
		}
		reportFailures(e, failures, c.quiet)
		dataPath = filepath.Join(dir, "measured.csv")
		if err := rvfit.WriteTable(dataPath, s, &rvfit.WriteOptions{Creator: "spotsift " + version}); err != nil {
			return nil, "", err
		}
	} else {
		s = res.Series()
	}
	dg, err := activity.Diagnose(s, &activity.Options{Star: star, Seed: c.seed})
	if err != nil {
		return nil, "", err
	}
	argv := []string{"demo", "--seed", fmt.Sprint(c.seed)}
	dg.Provenance = provenance(*c, []string{dataPath, starPath}, argv)
	// Provenance paths relative to the output folder keep the verdicts the
	// same wherever the demo runs.
	for i := range dg.Provenance.Inputs {
		if rel, err := filepath.Rel(out, dg.Provenance.Inputs[i].Path); err == nil {
			dg.Provenance.Inputs[i].Path = filepath.ToSlash(rel)
		}
	}
	repDir := filepath.Join(dir, "report")
	if err := activity.WriteReport(repDir, &activity.Report{Diagnosis: dg, Series: s, Star: star}); err != nil {
		return nil, "", err
	}
	return dg, strings.TrimPrefix(filepath.Join(repDir, activity.HTMLFile), "./"), nil
}
