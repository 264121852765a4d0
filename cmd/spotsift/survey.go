package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"syscall"

	"spotsift/activity"
	"spotsift/activity/survey"
)

// runSurvey is "spotsift survey": a whole stellar sample.
func runSurvey(args []string, e *env) int {
	if len(args) > 0 && args[0] == "merge" {
		return runSurveyMerge(args[1:], e)
	}
	var c common
	fs := newFlagSet(e, "survey", "--manifest FILE --out DIR [flags]\n       spotsift survey merge --out DIR SHARD_DIR...", `
Runs the diagnosis over every star of a manifest in parallel, resumably, and
writes one folder per star, a summary table, a catalogue and an index page.

The manifest (CSV, or TOML when its name ends in .toml) names each star's
data (an RV table or a folder of spectra), its star file or inline
parameters, and optionally the periods to judge. A star that fails is
recorded with its reason and never stops the others. A rerun skips the stars
whose inputs and settings are unchanged. Ctrl-C (or SIGTERM from a batch
scheduler) stops the survey: finished stars stay intact and the next run
picks up the rest.

With --shard K/N the survey takes a deterministic share of the manifest, for
a job array; "spotsift survey merge" then joins the shard folders.
Exit status: 0 every star done, 1 some stars failed or were not run (a
partial survey), 2 bad usage or a bad manifest.`)
	c.addRun(fs)
	c.addTableFlags(fs)
	manifest := fs.String("manifest", "", "the sample, a CSV or TOML `file`")
	out := fs.String("out", "", "output `directory`")
	shard := fs.String("shard", "", "process only share `K/N` of the manifest (1 <= K <= N)")
	noGP := fs.Bool("no-gp", false, "leave out the Gaussian-process fits (much faster, fewer tests)")
	force := fs.Bool("force", false, "reanalyse every star, changed or not")
	retry := fs.Bool("retry-failed", false, "reanalyse stars that failed before even when their inputs are unchanged")
	fap := fs.Float64("fap", 0, "false-alarm `probability` below which a peak is a signal (default 0.001)")
	maxSig := fs.Int("max-signals", 0, "most signals per star found by prewhitening (default 4)")
	starTimeout := fs.Duration("star-timeout", 0, "fail a star whose analysis and report take longer than this `duration` (e.g. 30m; default: no limit)")
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	if err := c.workersOK(); err != nil {
		return fail(e, exitUsage, err)
	}
	if err := countOK("--max-signals", *maxSig, "4"); err != nil {
		return fail(e, exitUsage, err)
	}
	if *starTimeout < 0 {
		return fail(e, exitUsage, fmt.Errorf("--star-timeout %v: give a positive duration such as 30m (leave it out for no limit)", *starTimeout))
	}
	if *manifest == "" || *out == "" {
		return fail(e, exitUsage, errors.New("survey: --manifest and --out are required"))
	}
	sh, err := survey.ParseShard(*shard)
	if err != nil {
		return fail(e, exitUsage, fmt.Errorf("--shard: %w", err))
	}
	m, err := survey.ReadManifest(*manifest)
	if err != nil {
		return fail(e, exitUsage, err)
	}
	if err := c.manifestDefaults(m); err != nil {
		return fail(e, exitUsage, err)
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	// The watcher ends, and is waited for, before runSurvey returns: it
	// must never write to stderr after that.
	finished, watcherDone := make(chan struct{}), make(chan struct{})
	defer func() {
		close(finished)
		<-watcherDone
	}()
	go func() {
		defer close(watcherDone)
		select {
		case <-ctx.Done():
			// A second Ctrl-C kills at once; every file is renamed into
			// place whole, so nothing half-written is left either way.
			stop()
			if !c.quiet {
				fmt.Fprintln(e.stderr, "\nspotsift: interrupted: keeping the finished stars and writing the catalogue (Ctrl-C again to quit now)")
			}
		case <-finished:
		}
	}()
	var bar *progress
	opts := &survey.Options{
		Workers: c.workers, Seed: c.seed, Shard: sh, SkipModels: *noGP, Force: *force, RetryFailed: *retry,
		Diagnose: &activity.Options{FAPThreshold: *fap, MaxSignals: *maxSig},
		Version:  version(), Command: "spotsift survey " + strings.Join(args, " "), StarTimeout: *starTimeout,
		Notify: func(msg string) {
			if !c.quiet {
				fmt.Fprintf(e.stderr, "spotsift: %s\n", msg)
			}
		},
		Progress: func(done, total int) {
			if bar == nil {
				bar = newProgress(e.stderr, total, "stars", c.quiet)
			}
			bar.Set(done, total)
		},
	}
	sum, err := survey.Run(ctx, m, *out, opts)
	if bar != nil {
		bar.Done()
	}
	if sum == nil {
		// Nothing was run: a bad manifest or options are bad input (2);
		// an output folder that cannot be locked or written, or an
		// interruption while waiting for the lock, a failure (1).
		if errors.Is(err, survey.ErrManifest) || errors.Is(err, survey.ErrShard) || errors.Is(err, survey.ErrOptions) {
			return fail(e, exitUsage, err)
		}
		return fail(e, exitFailed, err)
	}
	code := exitOK
	if err != nil {
		code = exitFailed
	}
	if c.json {
		enc := json.NewEncoder(e.stdout)
		enc.SetIndent("", "  ")
		if jerr := enc.Encode(sum); jerr != nil {
			return fail(e, exitFailed, jerr)
		}
	} else {
		printSurvey(e, sum, *out)
	}
	if err != nil && !c.quiet {
		fmt.Fprintf(e.stderr, "spotsift: %v\n", err)
	}
	return code
}

// printSurvey writes the readable summary of a survey run.
func printSurvey(e *env, sum *survey.Summary, out string) {
	r := sum.Run
	what := "survey"
	if r.Shard != "" {
		what = "survey shard " + r.Shard
	}
	fmt.Fprintf(e.stdout, "%s: %s: %d analysed, %d unchanged, %d failed, %d not run (%s)\n",
		what, plural(r.Stars, "star", "stars"), r.Analysed, r.Unchanged, r.Failed, r.NotRun, r.Status)
	for _, f := range sum.Failed() {
		if f.Status == survey.StatusFailed {
			fmt.Fprintf(e.stdout, "  failed: %s: %s\n", f.Name, f.Error)
			debugPanic(e, f.Debug)
		}
	}
	if r.NotRun > 0 {
		fmt.Fprintf(e.stdout, "this survey is partial: run the same command again to finish it (finished stars are kept)\n")
	}
	if r.Failed > 0 {
		fmt.Fprintf(e.stdout, "this survey is partial: mend the failed stars' inputs and run it again (--retry-failed retries the failures of unchanged stars)\n")
	}
	fmt.Fprintf(e.stdout, "outputs: %s (catalogue %s, summary %s)\n",
		filepath.Join(out, survey.IndexFile), filepath.Join(out, survey.CatalogueFile), filepath.Join(out, survey.SummaryCSV))
}

// runSurveyMerge is "spotsift survey merge": shard folders into one.
func runSurveyMerge(args []string, e *env) int {
	fs := newFlagSet(e, "survey merge", "--out DIR SHARD_DIR...", `
Joins the output folders of "spotsift survey --shard K/N" runs into one
folder: every star's report, one summary table, catalogue and index page.
The result holds the same stars, signals and evidence as one run over the
whole manifest. DIR may be one of the shard folders.`)
	out := fs.String("out", "", "the merged output `directory`")
	quiet := fs.Bool("quiet", false, "no messages on stderr")
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return exitOK
		}
		return exitUsage
	}
	if *out == "" || fs.NArg() == 0 {
		return fail(e, exitUsage, errors.New("survey merge: --out and at least one shard folder are required"))
	}
	if err := survey.Merge(*out, fs.Args()); err != nil {
		if errors.Is(err, survey.ErrMerge) {
			return fail(e, exitUsage, err)
		}
		return fail(e, exitFailed, err)
	}
	if !*quiet {
		fmt.Fprintf(e.stderr, "spotsift: merged %d shard folders into %s\n", fs.NArg(), filepath.Join(*out, survey.IndexFile))
	}
	return exitOK
}

// plural writes a count with the noun in the right number: "1 star",
// "2 stars".
func plural(n int, one, many string) string {
	if n == 1 {
		return "1 " + one
	}
	return fmt.Sprintf("%d %s", n, many)
}
