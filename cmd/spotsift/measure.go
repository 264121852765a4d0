package main

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"spotsift/activity"
	"spotsift/indicators"
	"spotsift/rvfit"

	"spotsift/internal/worker"
)

// runMeasure is "spotsift measure": spectra to a per-epoch table.
func runMeasure(args []string, e *env) int {
	ctx, stop := interruptible()
	defer stop()
	var c common
	fs := newFlagSet(e, "measure", "--spectra DIR|GLOB --out TABLE [flags]", `
Measures every spectrum - RV and its photon-noise error from the
cross-correlation with a line mask, CCF FWHM, contrast, bisector span,
chromospheric indices (S, log R'HK with a star file's B-V, H-alpha, Na D),
per-order RVs and the chromatic slope - and writes one row per epoch (.csv
or .fits). Without --mask, a mask is built from the spectra themselves.
Spectra that fail are named on stderr and left out; so are the indices
that fail on an otherwise good spectrum.`)
	c.addStar(fs)
	c.addRun(fs)
	spectra := fs.String("spectra", "", "a `directory` of spectra (*.fits, *.fit, *.fts, *.txt, *.dat) or a glob")
	out := fs.String("out", "", "the per-epoch `table` to write (.csv or .fits)")
	mask := fs.String("mask", "", "line mask, a text `file` of wavelength and weight (default: built from the spectra)")
	scale := fs.String("scale", "file", "wavelength scale of the spectra: file (as the header says), air or vacuum")
	epochKey := fs.String("epoch-keyword", "", "header `keyword` holding the epoch in days (default: BJD_TDB, MJD-OBS, DATE-OBS)")
	bervKey := fs.String("berv-keyword", "", "header `keyword` holding the barycentric correction in km/s to add")
	instr := fs.String("instrument", "", "instrument `label` for every epoch (default: the INSTRUME keyword)")
	systemic := fs.String("systemic", "", "the star's barycentric systemic velocity in `km/s`, for a mask built from the spectra (default: found by identifying laboratory lines)")
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	if err := c.workersOK(); err != nil {
		return fail(e, exitUsage, err)
	}
	if *spectra == "" || *out == "" {
		return fail(e, exitUsage, errorf("measure: --spectra and --out are required"))
	}
	ro := &indicators.ReadOptions{EpochKeyword: *epochKey, BERVKeyword: *bervKey}
	if *bervKey != "" {
		ro.BERVUnit = 1000 // km/s
	}
	switch *scale {
	case "file":
	case "air":
		ro.Scale = indicators.ScaleAir
	case "vacuum":
		ro.Scale = indicators.ScaleVacuum
	default:
		return fail(e, exitUsage, errorf("measure: --scale %q: want file, air or vacuum", *scale))
	}
	paths, err := spectrumPaths(*spectra)
	if err != nil {
		return fail(e, exitUsage, err)
	}
	star, err := c.loadStar()
	if err != nil {
		return fail(e, exitUsage, err)
	}
	rep := &activity.MeasureReport{}
	opts := &activity.MeasureOptions{Read: ro, Star: star, Instrument: *instr, Workers: c.workers, Report: rep}
	if *systemic != "" {
		v, err := strconv.ParseFloat(*systemic, 64)
		if err != nil || math.IsNaN(v) || math.Abs(v) > 3000 {
			return fail(e, exitUsage, errorf("measure: --systemic %q: want a velocity in km/s, within ±3000", *systemic))
		}
		if *mask != "" {
			return fail(e, exitUsage, errorf("measure: --systemic sets the rest frame of a mask built from the spectra; a --mask file has rest wavelengths already"))
		}
		opts.MaskOptions = &indicators.MaskOptions{Systemic: v * 1000, FixedSystemic: true}
	}
	if *mask != "" {
		// A mask declares its own scale (its "# WAVESCAL" line): --scale
		// is about the spectra.
		m, err := indicators.ReadMaskFile(*mask, nil)
		if err != nil {
			return fail(e, exitUsage, err)
		}
		opts.Mask = m
		// The mask file may sit among the spectra.
		if mi, err := os.Stat(*mask); err == nil {
			kept := paths[:0]
			for _, p := range paths {
				if pi, err := os.Stat(p); err == nil && os.SameFile(mi, pi) {
					if !c.quiet {
						fmt.Fprintf(e.stderr, "spotsift: note: %s: skipped: it is the --mask file\n", p)
					}
					continue
				}
				kept = append(kept, p)
			}
			paths = kept
			if len(paths) == 0 {
				return fail(e, exitUsage, errorf("measure: --spectra %q holds no spectrum besides the mask", *spectra))
			}
		}
	}
	bar := newProgress(e.stderr, len(paths), "measuring", c.quiet)
	opts.Progress = bar.Set
	s, failures, err := activity.Measure(ctx, paths, opts)
	bar.Done()
	reportMeasure(e, rep, c.quiet)
	reportFailures(e, failures, c.quiet)
	err = interruptedErr(ctx, err, "measuring stopped before the last spectrum; nothing was written")
	if err != nil {
		if errors.Is(err, activity.ErrNoSpectra) && len(failures) > 0 {
			// Each file's reason is printed above; do not repeat one.
			err = errorf("measure: no spectrum could be measured from %s: the reason of each file is above", *spectra)
		}
		return fail(e, exitFailed, err)
	}
	if err := rvfit.WriteTable(*out, s, &rvfit.WriteOptions{Creator: "spotsift " + version()}); err != nil {
		return fail(e, exitFailed, err)
	}
	if c.json {
		return writeJSON(e, measureJSON(*out, s, len(paths), rep, failures))
	}
	if !c.quiet {
		skipped := ""
		if n := len(rep.Skipped); n > 0 {
			skipped = fmt.Sprintf(" (%d other files skipped)", n)
		}
		fmt.Fprintf(e.stderr, "spotsift: %d of %d spectra measured into %s%s\n", s.Len(), len(paths)-len(rep.Skipped), *out, skipped)
	}
	return exitOK
}

// reportMeasure prints what Measure noticed: files skipped as not spectra,
// how a built mask was made (its systemic velocity, the spectra left out,
// or why it has no rest frame), the barycentric conventions assumed and
// the warnings on kept spectra (up to five per kind). With quiet, nothing.
func reportMeasure(e *env, rep *activity.MeasureReport, quiet bool) {
	if quiet {
		return
	}
	for _, f := range rep.Skipped {
		msg := strings.TrimPrefix(f.Err.Error(), f.Path+": ")
		msg = strings.TrimPrefix(msg, indicators.ErrNotSpectrum.Error()+": ")
		fmt.Fprintf(e.stderr, "spotsift: note: %s: skipped, not a spectrum: %s\n", f.Path, msg)
	}
	if m := rep.Mask; m != nil && m.Build != nil {
		b := m.Build
		for _, l := range b.LeftOut {
			fmt.Fprintf(e.stderr, "spotsift: note: %s: left out of the mask: %s\n", l.Name, l.Reason)
		}
		scale := "air"
		if m.Vacuum {
			scale = "vacuum"
		}
		switch b.ZeroPoint {
		case indicators.ZeroLabLines:
			what := fmt.Sprintf("%d of %d laboratory lines", b.Identified, b.Candidates)
			if b.StrongOnly {
				what = fmt.Sprintf("the strong lines only (broad Ca II and Balmer troughs, then Na I D, Mg I b, Ca I; %d lines in the final estimate)", b.Identified)
			}
			fmt.Fprintf(e.stderr, "spotsift: mask of %d lines from %d spectra (%s); systemic velocity %+.3f ± %.3f km/s from %s (about 0.5 km/s systematic)\n",
				m.Len(), len(b.Spectra), scale, b.Systemic/1e3, b.SystemicSigma/1e3, what)
		case indicators.ZeroGiven:
			fmt.Fprintf(e.stderr, "spotsift: mask of %d lines from %d spectra (%s), at the given systemic velocity %+.3f km/s\n", m.Len(), len(b.Spectra), scale, b.Systemic/1e3)
		default:
			fmt.Fprintf(e.stderr, "spotsift: warning: the mask built from the spectra has no rest frame: %s.\n"+
				"  RVs are relative to %s, and S-index, log R'HK, H-alpha and Na D are left out.\n"+
				"  Give the star's systemic velocity (--systemic KM/S) or a mask of rest wavelengths (--mask FILE).\n", b.Problem, b.Spectra[0])
		}
	}
	for _, c := range rep.Conventions {
		fmt.Fprintf(e.stderr, "spotsift: note: barycentric correction: %s\n", c)
	}
	shown := map[string]int{}
	var kinds []string
	for _, w := range rep.Warnings {
		// The kind: the index and line, e.g. "S-index: Ca II K band off the line".
		kind := w.Err.Error()
		if i := strings.Index(kind, " line:"); i > 0 {
			kind = kind[:i+5]
		}
		if shown[kind] == 0 {
			kinds = append(kinds, kind)
		}
		shown[kind]++
		if shown[kind] <= 5 {
			fmt.Fprintf(e.stderr, "spotsift: warning: %s: %v\n", w.Path, w.Err)
		}
	}
	for _, k := range kinds {
		if n := shown[k]; n > 5 {
			fmt.Fprintf(e.stderr, "spotsift: warning: ... and %d more spectra with %q\n", n-5, k)
		}
	}
}

// reportFailures names the spectra that failed on stderr: every one that
// was left out, and the partial failures (an index missing on a spectrum
// kept) up to five per kind of problem, then a count. With quiet, partial
// failures are not shown.
func reportFailures(e *env, failures []activity.MeasureFailure, quiet bool) {
	shown := map[string]int{}
	var kinds []string
	for _, f := range failures {
		msg := strings.TrimPrefix(f.Err.Error(), f.Path+": ")
		if !f.Partial {
			fmt.Fprintf(e.stderr, "spotsift: %s: left out: %s\n", f.Path, msg)
			if pe := (*worker.PanicError)(nil); errors.As(f.Err, &pe) {
				debugPanic(e, pe.Debug())
			}
			continue
		}
		if quiet {
			continue
		}
		// The kind of problem: the message up to its first number.
		kind := msg
		if i := strings.IndexAny(kind, "0123456789"); i > 0 {
			kind = kind[:i]
		}
		if shown[kind] == 0 {
			kinds = append(kinds, kind)
		}
		shown[kind]++
		if shown[kind] <= 5 {
			fmt.Fprintf(e.stderr, "spotsift: warning: %s: kept without %s\n", f.Path, msg)
		}
	}
	for _, k := range kinds {
		if n := shown[k]; n > 5 {
			fmt.Fprintf(e.stderr, "spotsift: warning: ... and %d more spectra with %q\n", n-5, strings.TrimSpace(k))
		}
	}
}

// spectrumPaths lists the spectra of a folder, or the files of a glob, in
// name order.
func spectrumPaths(arg string) ([]string, error) {
	var paths []string
	if st, err := os.Stat(arg); err == nil && st.IsDir() {
		ents, err := os.ReadDir(arg)
		if err != nil {
			return nil, err
		}
		for _, en := range ents {
			switch strings.ToLower(filepath.Ext(en.Name())) {
			case ".fits", ".fit", ".fts", ".txt", ".dat":
				if !en.IsDir() {
					paths = append(paths, filepath.Join(arg, en.Name()))
				}
			}
		}
	} else {
		m, err := filepath.Glob(arg)
		if err != nil {
			return nil, fmt.Errorf("measure: --spectra %q: %v", arg, err)
		}
		paths = m
	}
	if len(paths) == 0 {
		return nil, fmt.Errorf("measure: --spectra %q: no spectra found", arg)
	}
	sort.Strings(paths)
	return paths, nil
}

// measureSummary is what "measure --json" prints: the table written and
// what happened to every file.
type measureSummary struct {
	Table    string        `json:"table"`
	Epochs   int           `json:"epochs"`
	Files    int           `json:"files"`
	Skipped  []fileProblem `json:"skipped,omitempty"`
	Failed   []fileProblem `json:"failed,omitempty"`
	Partial  []fileProblem `json:"partial,omitempty"`
	Warnings []fileProblem `json:"warnings,omitempty"`
	Columns  []string      `json:"columns"`
}

type fileProblem struct {
	Path  string `json:"path"`
	Error string `json:"error"`
}

func measureJSON(out string, s *rvfit.Series, files int, rep *activity.MeasureReport, failures []activity.MeasureFailure) measureSummary {
	sum := measureSummary{Table: out, Epochs: s.Len(), Files: files, Columns: []string{"time", "rv", "rv_err", "instrument"}}
	for _, ind := range s.Indicators {
		sum.Columns = append(sum.Columns, ind.Name)
	}
	conv := func(fs []activity.MeasureFailure) []fileProblem {
		var out []fileProblem
		for _, f := range fs {
			out = append(out, fileProblem{f.Path, f.Err.Error()})
		}
		return out
	}
	sum.Skipped, sum.Warnings = conv(rep.Skipped), conv(rep.Warnings)
	for _, f := range failures {
		if f.Partial {
			sum.Partial = append(sum.Partial, fileProblem{f.Path, f.Err.Error()})
		} else {
			sum.Failed = append(sum.Failed, fileProblem{f.Path, f.Err.Error()})
		}
	}
	return sum
}
