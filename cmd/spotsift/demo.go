package main

import (
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"

	"spotsift/activity"
	"spotsift/activity/starsim"
	"spotsift/activity/survey"
	"spotsift/rvfit"
)

// demoSurveyDir is the survey folder inside the demo's output.
const demoSurveyDir = "survey"

// runDemo is "spotsift demo": the whole job on invented stars.
func runDemo(args []string, e *env) int {
	ctx, stop := interruptible()
	defer stop()
	var c common
	fs := newFlagSet(e, "demo", "[--out DIR] [flags]", `
Runs the whole job on two invented stars: a quiet G dwarf with a planet and
an active K dwarf with none. It simulates their spectra (FITS), measures
them into per-epoch tables, and vets every signal as a small survey: a
report per star (HTML, PDF, figures, verdict JSON), a summary table, a
catalogue and an index page to start from. The same seed gives the same
verdicts.`)
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
	// Paths in the manifest are relative to the output folder, so the
	// verdicts' provenance is the same wherever the demo runs.
	m := &survey.Manifest{File: "demo", Dir: *out}
	for _, d := range demos {
		entry, err := demoStar(ctx, e, &c, d, *out, !*tables)
		if err != nil {
			return fail(e, exitFailed, fmt.Errorf("demo %s: %w", d.Name, err))
		}
		m.Stars = append(m.Stars, entry)
	}
	bar := newProgress(e.stderr, len(m.Stars), "vetting", c.quiet)
	sum, err := survey.Run(ctx, m, filepath.Join(*out, demoSurveyDir), &survey.Options{
		Workers: c.workers, Seed: c.seed, Progress: bar.Set, Version: version, Command: "spotsift demo", Force: true})
	bar.Done()
	if err != nil {
		return fail(e, exitFailed, err)
	}
	for _, st := range sum.Stars {
		if st.Status != survey.StatusDone {
			return fail(e, exitFailed, fmt.Errorf("demo %s: %s", st.Name, st.Error))
		}
		dir := filepath.Join(*out, demoSurveyDir, survey.StarsDir, st.Folder)
		dg, err := readVerdict(filepath.Join(dir, activity.VerdictFile))
		if err != nil {
			return fail(e, exitFailed, err)
		}
		fmt.Fprintf(e.stdout, "%s: %d epochs, report %s\n", dg.Star, dg.NEpochs, filepath.Join(dir, activity.HTMLFile))
		for i, s := range dg.Signals {
			fmt.Fprintf(e.stdout, "  S%d  P = %8.4g d  K = %6.3g m/s  %-14s %s\n", i+1, float64(s.Period), float64(s.Amplitude), s.Verdict, s.Summary)
		}
	}
	fmt.Fprintf(e.stdout, "\nStart here: %s\n\n%s\n", filepath.Join(*out, demoSurveyDir, survey.IndexFile), activity.Caution)
	return exitOK
}

// demoStar simulates one demo star and measures its spectra; it returns
// the star's survey entry.
func demoStar(ctx context.Context, e *env, c *common, d starsim.Demo, out string, spectra bool) (survey.Entry, error) {
	simRel := filepath.Join(d.Name, "simulated")
	simDir := filepath.Join(out, simRel)
	sc := d.Scenario
	sc.Spectrum.Full = spectra
	res, err := starsim.Simulate(sc, c.seed, &starsim.Options{Workers: c.workers})
	if err != nil {
		return survey.Entry{}, err
	}
	bar := newProgress(e.stderr, res.Len(), d.Name+": simulating", c.quiet || !spectra)
	err = res.WriteFiles(simDir, &starsim.WriteOptions{Workers: c.workers, Progress: bar.Set, Creator: "spotsift " + version, Float32: true})
	bar.Done()
	if err != nil {
		return survey.Entry{}, err
	}
	entry := survey.Entry{Name: sc.Name, Data: filepath.Join(simRel, starsim.TableFile), StarFile: filepath.Join(simRel, starsim.StarFile)}
	if !spectra {
		return entry, nil
	}
	star, err := activity.ReadStar(filepath.Join(out, entry.StarFile))
	if err != nil {
		return survey.Entry{}, err
	}
	paths, err := spectrumPaths(filepath.Join(simDir, starsim.SpectraDir))
	if err != nil {
		return survey.Entry{}, err
	}
	mbar := newProgress(e.stderr, len(paths), d.Name+": measuring", c.quiet)
	s, failures, err := activity.Measure(ctx, paths, &activity.MeasureOptions{Star: star, Workers: c.workers, Progress: mbar.Set})
	mbar.Done()
	if err != nil {
		return survey.Entry{}, err
	}
	reportFailures(e, failures, c.quiet)
	entry.Data = filepath.Join(d.Name, "measured.csv")
	if err := rvfit.WriteTable(filepath.Join(out, entry.Data), s, &rvfit.WriteOptions{Creator: "spotsift " + version}); err != nil {
		return survey.Entry{}, err
	}
	return entry, nil
}

// readVerdict reads a star's verdict JSON.
func readVerdict(path string) (*activity.Diagnosis, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var dg activity.Diagnosis
	if err := json.Unmarshal(b, &dg); err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	return &dg, nil
}
