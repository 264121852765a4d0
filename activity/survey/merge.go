package survey

import (
	"fmt"
	"io"
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
// The merged catalogue holds the same stars, signals and evidence rows as
// one run over the whole manifest with the same seed and settings.
func Merge(outDir string, shardDirs []string) error {
	if len(shardDirs) == 0 {
		return fmt.Errorf("%w: no shard folders given", ErrMerge)
	}
	if err := os.MkdirAll(filepath.Join(outDir, StarsDir), 0o755); err != nil {
		return err
	}
	absOut, _ := filepath.Abs(outDir)
	type found struct {
		dir string
		st  *state
	}
	stars := map[string]found{}
	var runs []RunRecord
	seenRun := map[string]bool{}
	for _, sd := range shardDirs {
		rs, err := readRuns(sd)
		if err != nil {
			return err
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
			if !d.IsDir() || strings.HasPrefix(d.Name(), ".") {
				continue
			}
			dir := filepath.Join(sd, StarsDir, d.Name())
			st, err := readState(dir)
			if err == errStateMissing {
				continue // a star abandoned by an interrupted run
			}
			if err != nil {
				return err
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
	names := make([]string, 0, len(stars))
	for n := range stars {
		names = append(names, n)
	}
	sort.Strings(names)
	var results []StarResult
	for _, n := range names {
		f := stars[n]
		dst := filepath.Join(outDir, StarsDir, f.st.Folder)
		absSrc, _ := filepath.Abs(f.dir)
		absDst := filepath.Join(absOut, StarsDir, f.st.Folder)
		if absSrc != absDst {
			if err := copyDir(dst, f.dir); err != nil {
				return fmt.Errorf("survey: copying star %q: %w", n, err)
			}
		}
		status := f.st.Status
		if status == StatusDone {
			status = StatusUnchanged
		}
		results = append(results, StarResult{Name: n, Folder: f.st.Folder, Status: status, Error: f.st.Error, Hash: f.st.Hash})
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

// copyDir replaces dst by a copy of the folder src: the copy is made
// beside dst and renamed onto it.
func copyDir(dst, src string) error {
	tmp := filepath.Join(filepath.Dir(dst), "."+filepath.Base(dst)+".merge-tmp")
	if err := os.RemoveAll(tmp); err != nil {
		return err
	}
	if err := os.CopyFS(tmp, os.DirFS(src)); err != nil {
		os.RemoveAll(tmp)
		return err
	}
	if err := os.RemoveAll(dst); err != nil {
		return err
	}
	return os.Rename(tmp, dst)
}
