package survey

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"spotsift/rvfit"
)

// writeOutputs writes the sample-wide outputs of recs (sorted by name):
// summary.csv, summary.fits, catalogue.sqlite and index.html, each
// written whole or not at all.
func writeOutputs(outDir string, recs []record, runs []RunRecord) error {
	creator := "spotsift survey"
	if n := len(runs); n > 0 {
		creator = "spotsift " + runs[n-1].Version
	}
	rows := summaryRows(recs)
	if err := rvfit.WriteFileAtomic(filepath.Join(outDir, SummaryCSV), func(w io.Writer) error { return writeSummaryCSV(w, rows, creator) }); err != nil {
		return fmt.Errorf("survey: %s: %w", SummaryCSV, err)
	}
	if err := rvfit.WriteFileAtomic(filepath.Join(outDir, SummaryFITS), func(w io.Writer) error { return writeSummaryFITS(w, rows, ascii(creator)) }); err != nil {
		return fmt.Errorf("survey: %s: %w", SummaryFITS, err)
	}
	if err := writeCatalogue(filepath.Join(outDir, CatalogueFile), recs, runs); err != nil {
		return err
	}
	if err := rvfit.WriteFileAtomic(filepath.Join(outDir, IndexFile), func(w io.Writer) error { return writeIndex(w, outDir, recs, creator) }); err != nil {
		return fmt.Errorf("survey: %s: %w", IndexFile, err)
	}
	return nil
}

// Merge combines the output folders of shard runs (Run with
// Options.Shard) into outDir: it copies every star folder, joins the run
// histories, and writes one summary table, catalogue and index page of all
// the stars. outDir may be one of the shard folders. A star found in two
// shard folders with different input hashes is an error (wrapping
// ErrMerge); with equal hashes the copies are the same analysis and the
// first is kept.
//
// Every shard is checked before anything is written: a star's state file
// must belong to the folder it lies in (its name gives that folder, see
// Folder), a finished star's outputs must match the hash its state file
// records, and every star must have been analysed with the same survey
// seed, settings and program version; otherwise Merge refuses (ErrMerge)
// and leaves outDir untouched. The folders written or replaced are
// derived from outDir and the sanitised star names alone, never from a
// path read from a state file. Merge takes outDir's lock, like Run.
//
// The merged catalogue holds the same stars, signals and evidence rows as
// one run over the whole manifest with the same seed and settings.
func Merge(outDir string, shardDirs []string) (err error) {
	if len(shardDirs) == 0 {
		return fmt.Errorf("%w: no shard folders given", ErrMerge)
	}
	type found struct {
		dir string
		st  *state
	}
	stars := map[string]found{}
	var runs []RunRecord
	seenRun := map[string]bool{}
	var first *found
	for _, sd := range shardDirs {
		rs, err := readRuns(sd)
		if err != nil {
			return fmt.Errorf("%w: %v", ErrMerge, err)
		}
		if rs == nil {
			return fmt.Errorf("%w: %s holds no %s: not a survey folder", ErrMerge, sd, RunsFile)
		}
		for _, r := range rs {
			if !seenRun[r.ID] {
				seenRun[r.ID] = true
				runs = append(runs, r)
			}
		}
		ents, err := os.ReadDir(filepath.Join(sd, StarsDir))
		if err != nil {
			return fmt.Errorf("%w: %v", ErrMerge, err)
		}
		for _, d := range ents {
			if !d.Type().IsDir() || strings.HasPrefix(d.Name(), ".") {
				continue // hidden leftovers of a killed run, symbolic links, files
			}
			dir := filepath.Join(sd, StarsDir, d.Name())
			st, err := readState(dir)
			if err == errStateMissing {
				continue // a star abandoned by an interrupted run
			}
			if err != nil {
				return fmt.Errorf("%w: %v", ErrMerge, err)
			}
			if strings.TrimSpace(st.Name) == "" || Folder(st.Name) != d.Name() || st.Folder != d.Name() {
				return fmt.Errorf("%w: %s: the state file names star %q with folder %q, which does not belong in folder %q: the shard folder was edited or damaged; run that shard again",
					ErrMerge, filepath.Join(dir, StateFile), st.Name, st.Folder, d.Name())
			}
			if st.Status == StatusDone && st.Outputs != "" && !st.intact(dir) {
				return fmt.Errorf("%w: %s: the star's outputs do not match its state file (damaged or edited); run that shard again", ErrMerge, dir)
			}
			if first == nil {
				first = &found{dir, st}
			} else if f := first.st; f.SurveySeed != st.SurveySeed || f.Settings != st.Settings || f.Version != st.Version {
				return fmt.Errorf("%w: %s and %s were analysed differently (seed %d, version %s, %s; and seed %d, version %s, %s): run every shard with the same seed, settings and version",
					ErrMerge, first.dir, dir, f.SurveySeed, f.Version, orNone(f.Settings), st.SurveySeed, st.Version, orNone(st.Settings))
			}
			if prev, ok := stars[st.Name]; ok {
				if prev.st.Hash != st.Hash || prev.st.Status != st.Status {
					return fmt.Errorf("%w: star %q is in %s and %s with different inputs or outcomes", ErrMerge, st.Name, prev.dir, dir)
				}
				continue
			}
			stars[st.Name] = found{dir, st}
		}
	}
	if err := os.MkdirAll(outDir, 0o755); err != nil {
		return err
	}
	unlock, err := lockDir(context.Background(), outDir, nil)
	if err != nil {
		return err
	}
	defer unlock()
	if err := cleanLeftovers(outDir); err != nil {
		return fmt.Errorf("survey: removing what an interrupted run left: %w", err)
	}
	starsDir := filepath.Join(outDir, StarsDir)
	if _, serr := os.Stat(starsDir); errors.Is(serr, fs.ErrNotExist) {
		defer func() {
			if err != nil {
				os.Remove(starsDir) // only when still empty
			}
		}()
	}
	if err := os.MkdirAll(starsDir, 0o755); err != nil {
		return err
	}
	names := make([]string, 0, len(stars))
	for n := range stars {
		names = append(names, n)
	}
	sort.Strings(names)
	var results []StarResult
	for _, n := range names {
		f := stars[n]
		dst, err := starDir(outDir, n)
		if err != nil {
			return err
		}
		absSrc, err1 := filepath.Abs(f.dir)
		absDst, err2 := filepath.Abs(dst)
		if err1 != nil || err2 != nil {
			return fmt.Errorf("survey: star %q: %v %v", n, err1, err2)
		}
		if absSrc != absDst {
			if err := copyDir(dst, f.dir); err != nil {
				return fmt.Errorf("survey: copying star %q: %w", n, err)
			}
		}
		status := f.st.Status
		if status == StatusDone {
			status = StatusUnchanged
		}
		results = append(results, StarResult{Name: n, Folder: Folder(n), Status: status, Error: f.st.Error, Hash: f.st.Hash})
	}
	if err := writeRuns(outDir, runs); err != nil {
		return err
	}
	recs, err := collect(outDir, results)
	if err != nil {
		return err
	}
	return writeOutputs(outDir, recs, runs)
}

func orNone(s string) string {
	if s == "" {
		return "settings not recorded"
	}
	return s
}

// copyDir replaces the star folder dst by a copy of the folder src: the
// copy is made in a fresh hidden folder beside dst and renamed into place
// (commitStarDir). Symbolic links in src are refused.
func copyDir(dst, src string) error {
	tmp, err := newStarDir(dst)
	if err != nil {
		return err
	}
	if err := os.CopyFS(tmp, os.DirFS(src)); err != nil {
		os.RemoveAll(tmp)
		return err
	}
	if err := commitStarDir(dst, tmp); err != nil {
		os.RemoveAll(tmp)
		return err
	}
	return nil
}
