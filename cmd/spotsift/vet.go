package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"path/filepath"
	"strconv"
	"strings"

	"spotsift/activity"
	"spotsift/rvfit"
)

// runVet is "spotsift vet": the full diagnosis of each signal.
func runVet(args []string, e *env) int {
	ctx, stop := interruptible()
	defer stop()
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
	periods := fs.String("period", "", "comma-separated candidate `periods` in days (default: significant periodogram peaks)")
	out := fs.String("out", "", "write the verdict JSON (and the report) into this `directory`")
	fap := fs.Float64("fap", 0, "false-alarm `probability` below which a peak is a signal (default 0.001)")
	maxSig := fs.Int("max-signals", 0, "most signals to find by prewhitening (default 4)")
	pmin := fs.Float64("pmin", 0, "shortest period searched, `days` (default 1.05, as scan)")
	pmax := fs.Float64("pmax", 0, "longest period searched, `days` (default: the baseline, as scan)")
	noGP := fs.Bool("no-gp", false, "leave out the Gaussian-process fits (faster, fewer tests)")
	var phot photometryFlags
	phot.add(fs)
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	if err := c.workersOK(); err != nil {
		return fail(e, exitUsage, err)
	}
	if err := periodRangeOK(*pmin, *pmax); err != nil {
		return fail(e, exitUsage, err)
	}
	if err := countOK("--max-signals", *maxSig, "4"); err != nil {
		return fail(e, exitUsage, err)
	}
	ps, err := parsePeriods(*periods)
	if err != nil {
		return fail(e, exitUsage, err)
	}
	star, err := c.loadStar()
	if err != nil {
		return fail(e, exitUsage, err)
	}
	s, err := c.loadData(e, "vet", activity.MinEpochs)
	if err != nil {
		return fail(e, exitUsage, err)
	}
	lc, err := phot.load(e, c.quiet)
	if err != nil {
		return fail(e, exitUsage, err)
	}
	opts := &activity.Options{Periods: ps, FAPThreshold: *fap, MaxSignals: *maxSig, PMin: *pmin, PMax: *pmax,
		Star: star, Seed: c.seed, SkipModels: *noGP, LightCurve: lc}
	dg, err := activity.Diagnose(ctx, s, opts)
	if err = interruptedErr(ctx, err, "the diagnosis stopped before its end; nothing was written"); err != nil {
		if errors.Is(err, activity.ErrPeriodOutOfReach) || errors.Is(err, activity.ErrBadOption) || errors.Is(err, rvfit.ErrTooFewEpochs) || errors.Is(err, rvfit.ErrGridOutOfReach) {
			return fail(e, exitUsage, err)
		}
		return fail(e, exitFailed, err)
	}
	if dg.Star == "" {
		dg.Star = strings.TrimSuffix(filepath.Base(c.data), filepath.Ext(c.data))
	}
	dg.Provenance = provenance(c, append(append([]string{c.data}, nonEmpty(c.star)...), nonEmpty(phot.file)...), append([]string{"vet"}, args...))
	// The K to quote: the orbital solution's for planet-like and
	// inconclusive signals (the report shows the same solution).
	activity.AdoptK(dg, s, star)
	if ctx.Err() != nil {
		return fail(e, exitFailed, interruptedErr(ctx, ctx.Err(), "the diagnosis was done but nothing was written"))
	}
	if *out != "" {
		if err := activity.WriteReport(*out, &activity.Report{Diagnosis: dg, Series: s, Star: star, LightCurve: lc}); err != nil {
			return fail(e, exitFailed, err)
		}
	}
	if c.json {
		enc := json.NewEncoder(e.stdout)
		enc.SetIndent("", "  ")
		if err := enc.Encode(dg); err != nil {
			return fail(e, exitFailed, err)
		}
		return exitOK
	}
	printDiagnosis(e.stdout, dg)
	if *out != "" && !c.quiet {
		fmt.Fprintf(e.stderr, "spotsift: report in %s (open %s)\n", *out, filepath.Join(*out, activity.HTMLFile))
	}
	return exitOK
}

// parsePeriods reads "12.3,45".
func parsePeriods(s string) ([]float64, error) {
	if strings.TrimSpace(s) == "" {
		return nil, nil
	}
	var out []float64
	for _, f := range strings.Split(s, ",") {
		p, err := strconv.ParseFloat(strings.TrimSpace(f), 64)
		if err != nil {
			return nil, fmt.Errorf("--period: %q is not a number of days", strings.TrimSpace(f))
		}
		out = append(out, p)
	}
	return out, nil
}

func nonEmpty(s string) []string {
	if s == "" {
		return nil
	}
	return []string{s}
}

// provenance records the version, seed, command line and input hashes.
func provenance(c common, inputs, argv []string) activity.Provenance {
	p := activity.Provenance{Version: version(), Seed: c.seed, Command: "spotsift " + strings.Join(argv, " ")}
	for _, in := range inputs {
		h, err := activity.HashFile(in)
		if err != nil {
			continue
		}
		p.Inputs = append(p.Inputs, activity.InputHash{Path: in, SHA256: h})
	}
	return p
}

// printDiagnosis writes the readable summary.
func printDiagnosis(w io.Writer, dg *activity.Diagnosis) {
	fmt.Fprintf(w, "%s: %d epochs over %.1f days\n", dg.Star, dg.NEpochs, float64(dg.Baseline))
	r := dg.Rotation
	if float64(r.Period) > 0 {
		fmt.Fprintf(w, "rotation: %.3g ± %.2g d (%s); %s\n", float64(r.Period), float64(r.Err), r.Source, r.Agreement)
	} else {
		fmt.Fprintf(w, "rotation: unknown (%s)\n", r.Agreement)
	}
	for _, n := range dg.Notes {
		fmt.Fprintf(w, "note: %s\n", n)
	}
	for i, s := range dg.Signals {
		fmt.Fprintf(w, "\nsignal %d: P = %.5g d, K = %s m/s (%s), false-alarm probability %.2g (%s)\n",
			i+1, float64(s.Period), activity.FormatValErr(float64(s.K), float64(s.KErr)), kFromText(s.KFrom), float64(s.FAP), s.Source)
		fmt.Fprintf(w, "  verdict: %s (score %+.2f, P(planet) %s, %.0f%% of the tests ran)\n", s.Verdict, s.Score, activity.FormatProbability(float64(s.Probability)), 100*s.Coverage)
		fmt.Fprintf(w, "  because: %s\n", s.Summary)
		for _, ev := range s.Evidence {
			fmt.Fprintf(w, "    %-8s %+5.2f  %s\n", ev.Points, ev.Weight, ev.Reason)
		}
		for _, sk := range s.Skipped {
			fmt.Fprintf(w, "    skipped  %s: %s\n", sk.Name, sk.Why)
		}
	}
	fmt.Fprintf(w, "\n%s\n", dg.Caution)
}

// kFromText names the model a signal's adopted K comes from.
func kFromText(from string) string {
	if from == activity.KFromKeplerian {
		return "Keplerian fit"
	}
	return "sinusoid fit"
}
