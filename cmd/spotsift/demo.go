package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"

	"spotsift/activity"
	"spotsift/activity/starsim"
	"spotsift/activity/survey"
	"spotsift/rvfit"
)

// demoSurveyDir is the survey folder inside the demo's output.
const demoSurveyDir = "survey"

// demoStateFile records what the demo's tables were made from, so that a
// rerun with the same settings reuses them.
const demoStateFile = "demo-state.json"

// demoState is the content of demoStateFile.
type demoState struct {
	Version string `json:"version"`
	Seed    uint64 `json:"seed"`
	// Spectra is true when the tables were measured from simulated
	// spectra, false for simulated tables (--tables-only).
	Spectra bool `json:"spectra"`
	// Stars maps each star's name to its survey entry and the SHA-256 of
	// its table.
	Stars map[string]demoStar `json:"stars"`
}

type demoStar struct {
	Data     string `json:"data"`
	StarFile string `json:"star_file"`
	SHA256   string `json:"sha256"`
}

// demoResult is what "demo --json" prints.
type demoResult struct {
	Out     string           `json:"out"`
	Index   string           `json:"index"`
	Reused  bool             `json:"reused"`
	Bytes   int64            `json:"bytes_on_disk"`
	Spectra string           `json:"spectra,omitempty"`
	Stars   []demoStarResult `json:"stars"`
	Caution string           `json:"caution"`
}

type demoStarResult struct {
	Name    string            `json:"name"`
	Epochs  int               `json:"epochs"`
	Table   string            `json:"table"`
	Report  string            `json:"report"`
	Verdict string            `json:"verdict_json"`
	Status  string            `json:"status"`
	Signals []activity.Signal `json:"signals"`
}

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
verdicts. The spectra (about 450 MB in all) are written to a temporary
folder 32 at a time, measured and deleted, so at most about 40 MB of
them are on disk at once; --keep-spectra keeps them all in the output
folder instead. The output folder holds about 15 MB. A rerun with the
same seed and version (the release and its build: spotsift version)
reuses the tables and the verdicts.`)
	c.addRun(fs)
	out := fs.String("out", "spotsift-demo", "output `directory`")
	tables := fs.Bool("tables-only", false, "simulate tables instead of spectra (faster; skips the measurement step)")
	keep := fs.Bool("keep-spectra", false, "keep the simulated spectra in the output folder (about 450 MB)")
	if code, ok := parseFlags(fs, args); !ok {
		return code
	}
	if err := c.workersOK(); err != nil {
		return fail(e, exitUsage, err)
	}
	if *tables && *keep {
		return fail(e, exitUsage, errorf("demo: --keep-spectra and --tables-only exclude each other: --tables-only simulates no spectra"))
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
	prev := readDemoState(filepath.Join(*out, demoStateFile))
	cur := &demoState{Version: version(), Seed: c.seed, Spectra: !*tables, Stars: map[string]demoStar{}}
	reused := 0
	for _, d := range demos {
		if ps, ok := reusable(prev, cur, *out, d.Scenario.Name); ok && !*keep {
			m.Stars = append(m.Stars, survey.Entry{Name: d.Scenario.Name, Data: ps.Data, StarFile: ps.StarFile})
			cur.Stars[d.Scenario.Name] = ps
			reused++
			continue
		}
		entry, err := demoStarRun(ctx, e, &c, d, *out, !*tables, *keep)
		if err != nil {
			return fail(e, exitFailed, fmt.Errorf("demo %s: %w", d.Name, err))
		}
		sum, err := activity.HashFile(filepath.Join(*out, entry.Data))
		if err != nil {
			return fail(e, exitFailed, err)
		}
		cur.Stars[entry.Name] = demoStar{Data: entry.Data, StarFile: entry.StarFile, SHA256: sum}
		m.Stars = append(m.Stars, entry)
	}
	if err := rvfit.WriteFileAtomic(filepath.Join(*out, demoStateFile), func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(cur)
	}); err != nil {
		return fail(e, exitFailed, err)
	}
	bar := newProgress(e.stderr, len(m.Stars), "vetting", c.quiet)
	// Without Force the survey skips every star whose table, star file,
	// settings and version are unchanged since its last run.
	sum, err := survey.Run(ctx, m, filepath.Join(*out, demoSurveyDir), &survey.Options{
		Workers: c.workers, Seed: c.seed, Progress: bar.Set, Version: version(), Command: demoCommand(c.seed, *tables)})
	bar.Done()
	if err != nil {
		return fail(e, exitFailed, err)
	}
	res := demoResult{Out: *out, Index: filepath.Join(*out, demoSurveyDir, survey.IndexFile), Caution: activity.Caution,
		Reused: reused == len(demos) && sum.Run.Unchanged == len(m.Stars)}
	if *keep {
		res.Spectra = filepath.Join(*out, "*", "simulated", starsim.SpectraDir)
	}
	for _, st := range sum.Stars {
		if st.Status != survey.StatusDone && st.Status != survey.StatusUnchanged {
			return fail(e, exitFailed, fmt.Errorf("demo %s: %s", st.Name, st.Error))
		}
		dir := filepath.Join(*out, demoSurveyDir, survey.StarsDir, st.Folder)
		dg, err := readVerdict(filepath.Join(dir, activity.VerdictFile))
		if err != nil {
			return fail(e, exitFailed, err)
		}
		res.Stars = append(res.Stars, demoStarResult{Name: dg.Star, Epochs: dg.NEpochs, Table: filepath.Join(*out, cur.Stars[st.Name].Data),
			Report: filepath.Join(dir, activity.HTMLFile), Verdict: filepath.Join(dir, activity.VerdictFile), Status: st.Status, Signals: dg.Signals})
	}
	res.Bytes = diskUse(*out)
	if c.json {
		return writeJSON(e, res)
	}
	for _, st := range res.Stars {
		how := "analysed"
		if st.Status == survey.StatusUnchanged {
			how = "unchanged since the last run: results reused"
		}
		fmt.Fprintf(e.stdout, "%s: %d epochs (%s), report %s\n", st.Name, st.Epochs, how, st.Report)
		for i, s := range st.Signals {
			fmt.Fprintf(e.stdout, "  S%d  P = %8.4g d  K = %s m/s (%s)  %-14s P(planet) %s  %s\n", i+1, float64(s.Period), activity.FormatValErr(float64(s.K), float64(s.KErr)), kFromText(s.KFrom), s.Verdict, activity.FormatProbability(float64(s.Probability)), s.Summary)
		}
	}
	fmt.Fprintf(e.stdout, "\nWrote %s (%s): per star the simulated table and star file (*/simulated/), the measured table (*/measured.csv); the survey with a report per star, summary tables, catalogue and index (%s/).\n",
		*out, humanBytes(res.Bytes), demoSurveyDir)
	switch {
	case *keep:
		fmt.Fprintf(e.stdout, "The simulated spectra are kept in %s.\n", res.Spectra)
	case !*tables && reused < len(demos):
		fmt.Fprintf(e.stdout, "The simulated spectra were written to a temporary folder %d at a time, measured and deleted (--keep-spectra keeps them).\n", demoBatch)
	}
	if res.Reused {
		fmt.Fprintln(e.stdout, "Nothing changed since the last run: the tables and verdicts were reused.")
	}
	fmt.Fprintf(e.stdout, "\nStart here: %s\n\n%s\n", res.Index, activity.Caution)
	return exitOK
}

// reusable returns the previous run's entry for a star when the settings
// match and its table is unchanged.
func reusable(prev, cur *demoState, out, name string) (demoStar, bool) {
	if prev == nil || prev.Version != cur.Version || prev.Seed != cur.Seed || prev.Spectra != cur.Spectra {
		return demoStar{}, false
	}
	ps, ok := prev.Stars[name]
	if !ok || ps.SHA256 == "" {
		return demoStar{}, false
	}
	if _, err := os.Stat(filepath.Join(out, ps.StarFile)); err != nil {
		return demoStar{}, false
	}
	sum, err := activity.HashFile(filepath.Join(out, ps.Data))
	if err != nil || sum != ps.SHA256 {
		return demoStar{}, false
	}
	return ps, true
}

// readDemoState reads the previous run's state; nil when absent or bad.
func readDemoState(path string) *demoState {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil
	}
	var st demoState
	if json.Unmarshal(b, &st) != nil {
		return nil
	}
	return &st
}

// demoStarRun simulates one demo star and measures its spectra; it
// returns the star's survey entry. Spectra go to a temporary folder that
// is deleted after measuring, unless keep.
func demoStarRun(ctx context.Context, e *env, c *common, d starsim.Demo, out string, spectra, keep bool) (survey.Entry, error) {
	simRel := filepath.Join(d.Name, "simulated")
	simDir := filepath.Join(out, simRel)
	sc := d.Scenario
	sc.Spectrum.Full = spectra
	res, err := starsim.Simulate(sc, c.seed, &starsim.Options{Workers: c.workers})
	if err != nil {
		return survey.Entry{}, err
	}
	// The tables and star file in the output folder (no spectra).
	tablesOnly := *res
	tsc := *res.Scenario
	tsc.Spectrum.Full = false
	tablesOnly.Scenario = &tsc
	if err := tablesOnly.WriteFiles(simDir, &starsim.WriteOptions{Workers: c.workers, Creator: "spotsift " + version()}); err != nil {
		return survey.Entry{}, err
	}
	entry := survey.Entry{Name: sc.Name, Data: filepath.Join(simRel, starsim.TableFile), StarFile: filepath.Join(simRel, starsim.StarFile)}
	if !spectra {
		return entry, nil
	}
	// The scenario file says what was simulated: the spectra too, and
	// where they went.
	where := "# The spectra (spectrum.full = true) were written to a temporary folder a batch at a time,\n# measured into ../measured.csv and deleted; spotsift demo --keep-spectra keeps them in spectra/.\n"
	if keep {
		where = "# The spectra (spectrum.full = true) are in spectra/, measured into ../measured.csv.\n"
	}
	if err := rvfit.WriteFileAtomic(filepath.Join(simDir, starsim.ScenarioFile), func(w io.Writer) error {
		if _, err := io.WriteString(w, where); err != nil {
			return err
		}
		return res.Scenario.EncodeTOML(w, res.Seed)
	}); err != nil {
		return survey.Entry{}, err
	}
	star, err := activity.ReadStar(filepath.Join(out, entry.StarFile))
	if err != nil {
		return survey.Entry{}, err
	}
	specDir := filepath.Join(simDir, starsim.SpectraDir)
	if !keep {
		tmp, err := os.MkdirTemp("", "spotsift-demo-spectra-")
		if err != nil {
			return survey.Entry{}, err
		}
		defer os.RemoveAll(tmp)
		specDir = tmp
	}
	bar := newProgress(e.stderr, res.Len(), d.Name+": simulating and measuring spectra", c.quiet)
	s, failures, err := measureInBatches(ctx, res, specDir, keep, &batchOptions{
		Batch: demoBatch, Workers: c.workers, Progress: bar.Set,
		Measure: activity.MeasureOptions{Star: star}})
	bar.Done()
	if err != nil {
		return survey.Entry{}, err
	}
	reportFailures(e, failures, c.quiet)
	entry.Data = filepath.Join(d.Name, "measured.csv")
	if err := rvfit.WriteTable(filepath.Join(out, entry.Data), s, &rvfit.WriteOptions{Creator: "spotsift " + version()}); err != nil {
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

// writeJSON writes v as indented JSON to stdout.
func writeJSON(e *env, v any) int {
	enc := json.NewEncoder(e.stdout)
	enc.SetIndent("", "  ")
	if err := enc.Encode(v); err != nil {
		return fail(e, exitFailed, err)
	}
	return exitOK
}

// diskUse returns the bytes of the regular files under dir.
func diskUse(dir string) int64 {
	var n int64
	filepath.WalkDir(dir, func(_ string, d fs.DirEntry, err error) error {
		if err == nil && d.Type().IsRegular() {
			if info, err := d.Info(); err == nil {
				n += info.Size()
			}
		}
		return nil
	})
	return n
}

// humanBytes writes a size in kB, MB or GB.
func humanBytes(n int64) string {
	switch {
	case n >= 1<<30:
		return fmt.Sprintf("%.1f GB", float64(n)/(1<<30))
	case n >= 1<<20:
		return fmt.Sprintf("%.1f MB", float64(n)/(1<<20))
	}
	return fmt.Sprintf("%.0f kB", float64(n)/(1<<10))
}

// demoCommand is the command line recorded in the verdicts' provenance:
// the options that shape the results (not --out or --workers, so that the
// same seed gives the same verdict files wherever the demo runs).
func demoCommand(seed uint64, tablesOnly bool) string {
	cmd := fmt.Sprintf("spotsift demo --seed %d", seed)
	if tablesOnly {
		cmd += " --tables-only"
	}
	return cmd
}
