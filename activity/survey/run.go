package survey

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"sync/atomic"
	"time"

	"spotsift/activity"
	"spotsift/activity/photometry"
	"spotsift/rvfit"

	"spotsift/internal/worker"
)

// Options controls Run. A nil *Options gives the defaults.
type Options struct {
	// Workers bounds the number of stars analysed at once; zero means
	// runtime.GOMAXPROCS(0).
	Workers int
	// Seed is the survey seed; each star's seed is StarSeed(Seed, name).
	Seed uint64
	// Shard selects a share of the manifest; the zero value takes all.
	Shard Shard
	// Progress, when not nil, is called after each star (analysed,
	// unchanged or failed) with the number of stars finished and the
	// number in the shard, from one goroutine at a time.
	Progress func(done, total int)
	// SkipModels leaves out the Gaussian-process fits of the diagnosis
	// (activity.Options.SkipModels): much faster, fewer tests.
	SkipModels bool
	// Diagnose holds further settings of the diagnosis (FAPThreshold,
	// MaxSignals, PMin, PMax, Oversampling, Permutations); its Periods,
	// Star, Seed and SkipModels are set for each star. Nil means the
	// defaults.
	Diagnose *activity.Options
	// Force reanalyses every star, changed or not; RetryFailed reanalyses
	// the stars that failed last time even when their inputs are
	// unchanged (by default an unchanged failed star keeps its failure).
	Force, RetryFailed bool
	// Version is the program version, recorded in every output and part of
	// every star's input hash; "" means "dev".
	Version string
	// Command is the command line, recorded in the run's record.
	Command string
	// StarTimeout, when positive, limits the analysis and report of each
	// star: a star that takes longer fails with ErrTimeout as its reason.
	StarTimeout time.Duration
	// Notify, when not nil, receives a message when the run has to wait,
	// e.g. for another survey writing into the same folder.
	Notify func(msg string)
}

// settings returns the settings of the analysis that a merge requires to
// be the same in every shard, as one line.
func (o *Options) settings() string {
	var do activity.Options
	if o.Diagnose != nil {
		do = *o.Diagnose
	}
	return fmt.Sprintf("skip_models=%v fap=%v max_signals=%d pmin=%v pmax=%v oversampling=%v permutations=%d",
		o.SkipModels, do.FAPThreshold, do.MaxSignals, do.PMin, do.PMax, do.Oversampling, do.Permutations)
}

// Star statuses in a Summary.
const (
	// StatusDone: analysed in this run.
	StatusDone = "done"
	// StatusUnchanged: inputs and settings unchanged since the run that
	// analysed it; not analysed again.
	StatusUnchanged = "unchanged"
	// StatusFailed: the star could not be analysed; Error says why.
	StatusFailed = "failed"
	// StatusNotRun: the survey was interrupted before the star was
	// finished.
	StatusNotRun = "not-run"
)

// StarResult is the outcome of one star in a run.
type StarResult struct {
	Name   string `json:"name"`
	Folder string `json:"folder"`
	// Status is one of StatusDone, StatusUnchanged, StatusFailed,
	// StatusNotRun; Error is the reason of a failure.
	Status string `json:"status"`
	Error  string `json:"error,omitempty"`
	// Hash is the star's input hash (hex SHA-256; see InputHash).
	Hash string `json:"input_hash,omitempty"`
	// Signals is the number of signals judged.
	Signals int `json:"signals"`
	// Seconds is the wall time of the star's analysis and report in this
	// run.
	Seconds float64 `json:"seconds"`
	// Debug holds, for a star failed by a bug (a recovered panic), the
	// panic's value and stack: for debug output only, never saved.
	Debug string `json:"-"`
}

// Summary is the outcome of a run.
type Summary struct {
	Run RunRecord `json:"run"`
	// Stars are the stars of the shard, sorted by name.
	Stars []StarResult `json:"stars"`
}

// Failed returns the stars that failed or were not run.
func (s *Summary) Failed() []StarResult {
	var out []StarResult
	for _, r := range s.Stars {
		if r.Status == StatusFailed || r.Status == StatusNotRun {
			out = append(out, r)
		}
	}
	return out
}

// Run statuses of a RunRecord.
const (
	RunComplete    = "complete"
	RunPartial     = "partial"
	RunInterrupted = "interrupted"
)

// RunRecord describes one run of a survey into an output folder.
type RunRecord struct {
	// ID identifies the run: its start time (UTC) and shard.
	ID string `json:"id"`
	// Started and Finished are RFC 3339 UTC times.
	Started  string `json:"started"`
	Finished string `json:"finished"`
	Version  string `json:"version"`
	Seed     uint64 `json:"seed"`
	Shard    string `json:"shard,omitempty"`
	Workers  int    `json:"workers"`
	// SkipModels records whether the GP fits were left out.
	SkipModels bool   `json:"skip_models"`
	Command    string `json:"command,omitempty"`
	// Status is RunComplete, RunPartial (some stars failed) or
	// RunInterrupted.
	Status string `json:"status"`
	// Counts of the shard's stars by outcome.
	Stars     int `json:"stars"`
	Analysed  int `json:"analysed"`
	Unchanged int `json:"unchanged"`
	Failed    int `json:"failed"`
	NotRun    int `json:"not_run"`
}

// Output file and folder names inside a survey's output folder.
const (
	StarsDir       = "stars"
	StateFile      = "survey-star.json"
	SummaryCSV     = "summary.csv"
	SummaryFITS    = "summary.fits"
	CatalogueFile  = "catalogue.sqlite"
	IndexFile      = "index.html"
	RunsFile       = "runs.json"
	defaultVersion = "dev"
)

// Run analyses the stars of a manifest (the share of opts.Shard) into
// outDir, then writes the summary table, the catalogue and the index page
// of those stars (see the package documentation for the layout).
//
// Run holds outDir's advisory lock (LockFile) while it works, waiting
// for another survey or merge that holds it, and first removes what killed
// runs left.
//
// Each star is diagnosed by activity.Diagnose with the seed
// StarSeed(opts.Seed, name) and written by activity.WriteReport into a
// fresh hidden folder, its state file last (with the hash of the outputs),
// which is then renamed to stars/<Folder(name)>/: a kill at any moment
// leaves a star's folder old and whole, new and whole, or absent. A star
// whose input hash (InputHash) equals the one in its state file, and whose
// folder still hashes as its state says, is not analysed again. A star
// that fails - unreadable data, an input that is not a regular file, a bad
// star file, too few epochs, the time limit, even a panic in the analysis -
// is recorded with its reason and the others go on.
//
// When ctx is cancelled, no new star is started, stars in progress are
// abandoned (nothing of theirs is kept; a computation that ignores ctx ends
// in the background and is discarded) and the finished ones stay intact;
// the outputs are written for what is finished and the run is recorded as
// interrupted.
//
// Run returns the summary with an error wrapping ErrPartial when some
// stars failed or were not run (the outputs are written all the same),
// ctx.Err() as well when interrupted, and only an error without a summary
// when the manifest or options are bad or the outputs cannot be written.
func Run(ctx context.Context, m *Manifest, outDir string, opts *Options) (*Summary, error) {
	var o Options
	if opts != nil {
		o = *opts
	}
	if err := m.Check(); err != nil {
		return nil, err
	}
	if err := o.Shard.check(); err != nil {
		return nil, err
	}
	if o.Workers < 0 {
		return nil, fmt.Errorf("%w: %d workers", ErrOptions, o.Workers)
	}
	if o.Workers == 0 {
		o.Workers = runtime.GOMAXPROCS(0)
	}
	if o.Version == "" {
		o.Version = defaultVersion
	}
	if outDir == "" {
		return nil, fmt.Errorf("%w: no output folder", ErrOptions)
	}
	if err := os.MkdirAll(outDir, 0o755); err != nil {
		return nil, err
	}
	unlock, err := lockDir(ctx, outDir, o.Notify)
	if err != nil {
		return nil, err
	}
	defer unlock()
	if err := cleanLeftovers(outDir); err != nil {
		return nil, fmt.Errorf("survey: removing what an interrupted run left: %w", err)
	}
	if err := os.MkdirAll(filepath.Join(outDir, StarsDir), 0o755); err != nil {
		return nil, err
	}
	start := time.Now().UTC()
	rec := RunRecord{ID: runID(start, o.Shard), Started: start.Format(time.RFC3339), Version: o.Version, Seed: o.Seed,
		Shard: o.Shard.String(), Workers: o.Workers, SkipModels: o.SkipModels, Command: o.Command}

	pick := o.Shard.pick(m.Stars)
	results := make([]StarResult, len(pick))
	for i, j := range pick {
		results[i] = StarResult{Name: m.Stars[j].Name, Folder: Folder(m.Stars[j].Name), Status: StatusNotRun}
	}
	jobs := make(chan int)
	done := make(chan int)
	// runStar turns a star's panic into its failure; the group passes on
	// any other (a bug of the pool itself) once the pool has stopped.
	var wg worker.Group
	for w := 0; w < min(o.Workers, len(pick)); w++ {
		wg.Go(func() {
			for i := range jobs {
				results[i] = runStar(ctx, m, &m.Stars[pick[i]], outDir, &o, rec.ID)
				done <- i
			}
		})
	}
	go func() {
		defer close(jobs)
		for i := range pick {
			select {
			case jobs <- i:
			case <-ctx.Done():
				return
			case <-wg.Stopped():
				return
			}
		}
	}()
	go func() { wg.Wait(); close(done) }()
	n := 0
	for range done {
		n++
		if o.Progress != nil {
			o.Progress(n, len(pick))
		}
	}
	wg.Rethrow()
	interrupted := ctx.Err() != nil
	for i := range results {
		r := &results[i]
		if interrupted && r.Status != StatusDone && r.Status != StatusUnchanged && r.Status != StatusFailed {
			r.Status = StatusNotRun
		}
		switch r.Status {
		case StatusDone:
			rec.Analysed++
		case StatusUnchanged:
			rec.Unchanged++
		case StatusFailed:
			rec.Failed++
		default:
			rec.NotRun++
		}
	}
	rec.Stars = len(pick)
	rec.Status = RunComplete
	if rec.Failed > 0 {
		rec.Status = RunPartial
	}
	if interrupted {
		rec.Status = RunInterrupted
	}
	rec.Finished = time.Now().UTC().Format(time.RFC3339)

	runs, err := readRuns(outDir)
	if err != nil {
		return nil, err
	}
	rec.ID = uniqueID(rec.ID, runs)
	runs = append(runs, rec)
	if err := writeRuns(outDir, runs); err != nil {
		return nil, err
	}
	recs, err := collect(outDir, results)
	if err != nil {
		return nil, err
	}
	if err := writeOutputs(outDir, recs, runs); err != nil {
		return nil, err
	}
	sum := &Summary{Run: rec, Stars: results}
	switch {
	case interrupted:
		return sum, fmt.Errorf("%w: interrupted with %d of %d stars not run: %w", ErrPartial, rec.NotRun, rec.Stars, ctx.Err())
	case rec.Failed > 0:
		return sum, fmt.Errorf("%w: %d of %d stars failed", ErrPartial, rec.Failed, rec.Stars)
	}
	return sum, nil
}

// runID names a run by its start time and shard.
func runID(t time.Time, s Shard) string {
	id := t.Format("20060102T150405.000Z")
	if s.N > 0 {
		id += fmt.Sprintf("-shard%dof%d", s.K, s.N)
	}
	return id
}

// uniqueID returns id, with a suffix when runs already hold it.
func uniqueID(id string, runs []RunRecord) string {
	taken := map[string]bool{}
	for _, r := range runs {
		taken[r.ID] = true
	}
	out := id
	for k := 2; taken[out]; k++ {
		out = fmt.Sprintf("%s-%d", id, k)
	}
	return out
}

// outcome is what the analysis of one star gives.
type outcome struct {
	diag   *activity.Diagnosis
	series *rvfit.Series
	star   *activity.Star
	lc     *photometry.LightCurve
	notes  []string
	err    error
}

// runStar handles one star: hash, skip when unchanged, else analyse and
// write. The star's outputs are written into a fresh hidden folder, its
// state file last (with the hash of the outputs), and the folder is then
// renamed into place: a kill at any moment never leaves a verdict beside
// the state of other inputs. A panic anywhere in the star's handling
// becomes its failure.
func runStar(ctx context.Context, m *Manifest, e *Entry, outDir string, o *Options, runID string) (res StarResult) {
	res = StarResult{Name: e.Name, Folder: Folder(e.Name), Status: StatusNotRun}
	defer func() {
		if r := recover(); r != nil {
			pe := worker.Recovered(r)
			res.Status, res.Error, res.Debug = StatusFailed, oneLine(pe.Error()), pe.Debug()
		}
	}()
	if ctx.Err() != nil {
		return res
	}
	dir, err := starDir(outDir, e.Name)
	if err != nil {
		res.Status, res.Error = StatusFailed, oneLine(err.Error())
		return res
	}
	seed := StarSeed(o.Seed, e.Name)
	hash, inputs, herr := InputHash(m, e, o)
	res.Hash = hash
	old, _ := readState(dir)
	if herr == nil && old != nil && old.Hash == hash && !o.Force {
		switch {
		case old.Status == StatusDone && old.intact(dir):
			res.Status, res.Signals = StatusUnchanged, old.Signals
			return res
		case old.Status == StatusFailed && !o.RetryFailed:
			res.Status, res.Error = StatusFailed, old.Error
			return res
		}
	}
	nan := activity.Num(math.NaN())
	st := &state{Name: e.Name, Folder: res.Folder, Data: e.Data, Hash: hash, Seed: seed, Run: runID, Version: o.Version,
		SurveySeed: o.Seed, Settings: o.settings(),
		RVRMS: nan, MedianRVErr: nan, MeanSIndex: nan, MeanLogRHK: nan}
	t0 := time.Now()
	tmp, err := newStarDir(dir)
	if err != nil {
		res.Status, res.Error = StatusFailed, oneLine("creating the star's folder: "+err.Error())
		return res
	}
	var out outcome
	if herr != nil {
		out.err = herr
	} else {
		sctx, cancel := ctx, context.CancelFunc(func() {})
		if o.StarTimeout > 0 {
			sctx, cancel = context.WithTimeout(ctx, o.StarTimeout)
		}
		defer cancel()
		ch := make(chan outcome, 1)
		var abandoned atomic.Bool
		go func(tmp string) {
			r := produce(sctx, m, e, seed, o, inputs, tmp)
			if abandoned.Load() {
				// Nobody waits for it any more: drop what it wrote.
				os.RemoveAll(tmp)
			}
			ch <- r
		}(tmp)
		select {
		case out = <-ch:
			switch {
			case out.err == nil:
			case ctx.Err() != nil && errors.Is(out.err, ctx.Err()):
				os.RemoveAll(tmp)
				return res // interrupted: not run
			case errors.Is(out.err, context.DeadlineExceeded) && o.StarTimeout > 0:
				out.err = fmt.Errorf("%w: not finished after %v (--star-timeout); the star is left out of this run", ErrTimeout, o.StarTimeout)
				clearDir(tmp)
			}
		case <-sctx.Done():
			abandoned.Store(true)
			if ctx.Err() != nil {
				return res // interrupted: not run, nothing of it kept
			}
			out.err = fmt.Errorf("%w: not finished after %v (--star-timeout); the star is left out of this run", ErrTimeout, o.StarTimeout)
			if tmp, err = newStarDir(dir); err != nil {
				res.Status, res.Error = StatusFailed, oneLine(out.err.Error())
				return res
			}
		}
	}
	st.Seconds = time.Since(t0).Seconds()
	res.Seconds = st.Seconds
	if out.err != nil {
		// A failed star keeps only its state: no report of other inputs.
		if err := clearDir(tmp); err != nil {
			out.err = fmt.Errorf("%w (and clearing its folder: %v)", out.err, err)
		}
		st.Status, st.Error = StatusFailed, oneLine(out.err.Error())
		res.Status, res.Error = StatusFailed, st.Error
		if pe := (*worker.PanicError)(nil); errors.As(out.err, &pe) {
			res.Debug = pe.Debug()
		}
	} else {
		st.fill(out.diag, out.series, out.star)
		st.Notes = out.notes
		st.Status = StatusDone
		res.Status, res.Signals = StatusDone, len(out.diag.Signals)
	}
	if err := st.seal(tmp); err != nil {
		os.RemoveAll(tmp)
		res.Status, res.Error = StatusFailed, oneLine("writing the state file: "+err.Error())
		return res
	}
	if err := commitStarDir(dir, tmp); err != nil {
		os.RemoveAll(tmp)
		res.Status, res.Error = StatusFailed, oneLine("moving the star's outputs into place: "+err.Error())
	}
	return res
}

// clearDir removes everything inside dir.
func clearDir(dir string) error {
	ents, err := os.ReadDir(dir)
	if err != nil {
		return err
	}
	for _, d := range ents {
		if err := os.RemoveAll(filepath.Join(dir, d.Name())); err != nil {
			return err
		}
	}
	return nil
}

// oneLine joins the lines of a message.
func oneLine(s string) string { return strings.Join(strings.Fields(s), " ") }

// testHookAnalyse, when set by a test, is called at the start of every
// star's analysis.
var testHookAnalyse atomic.Pointer[func(ctx context.Context, name string)]

// produce analyses one star and writes its report into dir; a panic
// (its own or one a worker goroutine passed on) becomes an error, a
// *worker.PanicError.
func produce(ctx context.Context, m *Manifest, e *Entry, seed uint64, o *Options, inputs []activity.InputHash, dir string) (out outcome) {
	defer func() {
		if r := recover(); r != nil {
			out = outcome{err: worker.Recovered(r)}
		}
	}()
	if h := testHookAnalyse.Load(); h != nil {
		(*h)(ctx, e.Name)
	}
	out = analyse(ctx, m, e, seed, o, inputs)
	if out.err != nil {
		return out
	}
	if err := ctx.Err(); err != nil {
		return outcome{err: err}
	}
	if err := activity.WriteReport(dir, &activity.Report{Diagnosis: out.diag, Series: out.series, Star: out.star, LightCurve: out.lc}); err != nil {
		return outcome{err: fmt.Errorf("writing the report: %w", err)}
	}
	return out
}

// analyse loads and diagnoses one star; a panic becomes an error.
func analyse(ctx context.Context, m *Manifest, e *Entry, seed uint64, o *Options, inputs []activity.InputHash) (out outcome) {
	defer func() {
		if r := recover(); r != nil {
			out = outcome{err: worker.Recovered(r)}
		}
	}()
	star, err := loadStar(m, e)
	if err != nil {
		return outcome{err: err}
	}
	s, notes, err := loadSeries(ctx, m, e, star)
	if err != nil {
		return outcome{err: err}
	}
	var do activity.Options
	if o.Diagnose != nil {
		do = *o.Diagnose
	}
	do.Periods = append([]float64(nil), e.Periods...)
	do.Star = star
	do.Seed = seed
	do.SkipModels = o.SkipModels
	if do.LightCurve, err = loadLightCurve(m, e); err != nil {
		return outcome{err: err}
	}
	dg, err := activity.Diagnose(ctx, s, &do)
	if err != nil {
		return outcome{err: err}
	}
	dg.Star = e.Name
	dg.Provenance = starProvenance(m, e, o, seed, inputs)
	return outcome{diag: dg, series: s, star: star, lc: do.LightCurve, notes: notes}
}

// starProvenance records how a survey star was analysed: the survey's
// full command line, the manifest's hash beside the star's own inputs, and
// the settings that shape the result.
func starProvenance(m *Manifest, e *Entry, o *Options, seed uint64, inputs []activity.InputHash) activity.Provenance {
	cmd := o.Command
	if cmd == "" {
		cmd = "survey (run as a library call)"
	}
	ins := append([]activity.InputHash(nil), inputs...)
	if m != nil && m.File != "" {
		if sum, err := activity.HashFile(m.File); err == nil {
			ins = append([]activity.InputHash{{Path: m.File, SHA256: sum}}, ins...)
		}
	}
	var do activity.Options
	if o.Diagnose != nil {
		do = *o.Diagnose
	}
	g := func(x float64) string {
		if x == 0 {
			return "default"
		}
		return strconv.FormatFloat(x, 'g', -1, 64)
	}
	n := func(k int) string {
		if k == 0 {
			return "default"
		}
		return strconv.Itoa(k)
	}
	set := map[string]string{
		"survey_seed":   strconv.FormatUint(o.Seed, 10),
		"star_seed":     strconv.FormatUint(seed, 10) + " (derived from the survey seed and the star's name)",
		"manifest_name": e.Name,
		"skip_models":   strconv.FormatBool(o.SkipModels),
		"fap_threshold": g(do.FAPThreshold),
		"max_signals":   n(do.MaxSignals),
		"period_min":    g(do.PMin),
		"period_max":    g(do.PMax),
		"oversampling":  g(do.Oversampling),
		"permutations":  n(do.Permutations),
	}
	if sh := o.Shard.String(); sh != "" {
		set["shard"] = sh
	}
	return activity.Provenance{Version: o.Version, Seed: seed, Command: cmd, Inputs: ins, Settings: set}
}

// loadStar reads the star file and applies the inline parameters; it
// returns a star with at least the name.
func loadStar(m *Manifest, e *Entry) (*activity.Star, error) {
	st := &activity.Star{}
	if e.StarFile != "" {
		f, err := activity.ReadStar(m.path(e.StarFile))
		if err != nil {
			return nil, fmt.Errorf("star file: %w", err)
		}
		st = f
	}
	if in := e.Star; in != nil {
		set := func(dst *float64, v float64) {
			if v != 0 {
				*dst = v
			}
		}
		set(&st.BV, in.BV)
		set(&st.Mass, in.Mass)
		set(&st.Teff, in.Teff)
		set(&st.VSinI, in.VSinI)
		set(&st.RotationPeriod, in.RotationPeriod)
		set(&st.RotationPeriodErr, in.RotationPeriodErr)
		if in.SIndex != (activity.SCalibration{}) {
			st.SIndex = in.SIndex
		}
		st.Vacuum = st.Vacuum || in.Vacuum
	}
	st.Name = e.Name
	return st, nil
}

// spectrumExts are the file extensions taken from a folder of spectra.
var spectrumExts = map[string]bool{".fits": true, ".fit": true, ".fts": true, ".txt": true, ".dat": true}

// spectrumFiles lists the spectra of a folder, sorted.
func spectrumFiles(dir string) ([]string, error) {
	ents, err := os.ReadDir(dir)
	if err != nil {
		return nil, err
	}
	var out []string
	for _, d := range ents {
		if d.IsDir() || strings.HasPrefix(d.Name(), ".") || !spectrumExts[strings.ToLower(filepath.Ext(d.Name()))] {
			continue
		}
		p := filepath.Join(dir, d.Name())
		if err := regularFile(p, "spectrum"); err != nil {
			return nil, err
		}
		out = append(out, p)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("%w: %s holds no spectra (.fits, .fit, .fts, .txt, .dat)", activity.ErrNoSpectra, dir)
	}
	return out, nil
}

// measureNotes are what measuring a star's spectra noticed, as the star's
// notes (what the measure command prints): spectra left out or kept with
// indices missing, files skipped as not spectra, spectra left out of the
// mask, a mask without a rest frame, the barycentric conventions assumed
// and the warnings on kept spectra (an index band off its line).
func measureNotes(fails []activity.MeasureFailure, rep *activity.MeasureReport) []string {
	var notes []string
	for _, f := range fails {
		what := "left out"
		if f.Partial {
			what = "kept, some indicators missing"
		}
		notes = append(notes, fmt.Sprintf("spectrum %s %s: %v", filepath.Base(f.Path), what, f.Err))
	}
	for _, f := range rep.Skipped {
		notes = append(notes, fmt.Sprintf("file %s skipped, not a spectrum: %v", filepath.Base(f.Path), f.Err))
	}
	if m := rep.Mask; m != nil && m.Build != nil {
		for _, l := range m.Build.LeftOut {
			notes = append(notes, fmt.Sprintf("spectrum %s left out of the mask: %s", filepath.Base(l.Name), l.Reason))
		}
		if m.Build.Problem != "" && len(m.Build.Spectra) > 0 {
			notes = append(notes, fmt.Sprintf("the mask built from the spectra has no rest frame (%s): RVs are relative to %s, and S-index, log R'HK, H-alpha and Na D are left out",
				m.Build.Problem, filepath.Base(m.Build.Spectra[0])))
		}
	}
	for _, c := range rep.Conventions {
		notes = append(notes, "barycentric correction: "+c)
	}
	for _, f := range rep.Warnings {
		notes = append(notes, fmt.Sprintf("spectrum %s kept, to check: %v", filepath.Base(f.Path), f.Err))
	}
	return notes
}

// loadSeries reads the star's data: in memory, a table, or a folder of
// spectra. Reader warnings and spectra left out come back as notes.
func loadSeries(ctx context.Context, m *Manifest, e *Entry, star *activity.Star) (*rvfit.Series, []string, error) {
	if e.Series != nil {
		s := e.Series.Clone()
		return s, nil, s.Require(activity.MinEpochs, "the diagnosis")
	}
	p := m.path(e.Data)
	fi, err := os.Stat(p)
	if err != nil {
		return nil, nil, fmt.Errorf("data: %w", err)
	}
	if !fi.IsDir() {
		if err := regularFile(p, "data"); err != nil {
			return nil, nil, err
		}
	}
	var s *rvfit.Series
	var notes []string
	if fi.IsDir() {
		files, err := spectrumFiles(p)
		if err != nil {
			return nil, nil, err
		}
		var fails []activity.MeasureFailure
		var rep activity.MeasureReport
		s, fails, err = activity.Measure(ctx, files, &activity.MeasureOptions{Star: star, Workers: 1, Report: &rep})
		if err != nil {
			return nil, nil, fmt.Errorf("measuring the spectra of %s: %w", p, err)
		}
		notes = measureNotes(fails, &rep)
	} else {
		s, notes, err = readTables(p, e)
		if err != nil {
			return nil, nil, err
		}
	}
	if err := s.Require(activity.MinEpochs, "the diagnosis"); err != nil {
		return nil, nil, fmt.Errorf("%s: %w", p, err)
	}
	return s, notes, nil
}
