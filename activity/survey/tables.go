package survey

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"

	"spotsift/activity"
	"spotsift/rvfit"
)

// readTables reads a star's table, or the tables of a data-set file, with
// the entry's options, applies its zero-point splits, and returns the
// series with what the reader noted and warned (and any likely
// unannounced zero-point step).
func readTables(path string, e *Entry) (*rvfit.Series, []string, error) {
	var tables []rvfit.DataTable
	if rvfit.IsDataSetFile(path) {
		ts, err := rvfit.ReadDataSetFile(path)
		if err != nil {
			return nil, nil, err
		}
		tables = ts
	} else {
		tables = []rvfit.DataTable{{Path: path, Options: *e.readOptions()}}
	}
	s, warns, err := rvfit.ReadTables(tables)
	if err != nil {
		return nil, nil, err
	}
	for _, sp := range e.Read.Split {
		label, at, err := rvfit.ParseSplit(sp)
		if err == nil {
			err = s.SplitAt(label, at)
		}
		if err != nil {
			return nil, nil, fmt.Errorf("%s: split: %w", path, err)
		}
	}
	notes := append(append([]string(nil), s.Notes...), warns...)
	for _, st := range rvfit.FindSteps(s) {
		notes = append(notes, st.String())
	}
	return s, notes, nil
}

// hashData hashes a star's data file; for a data-set file, its bytes and
// those of every table it names.
func hashData(path string) (string, error) {
	sum, err := activity.HashFile(path)
	if err != nil || !rvfit.IsDataSetFile(path) {
		return sum, err
	}
	tables, err := rvfit.ReadDataSetFile(path)
	if err != nil {
		return "", err
	}
	h := sha256.New()
	fmt.Fprintf(h, "dataset\t%s\n", sum)
	for _, t := range tables {
		ts, err := activity.HashFile(t.Path)
		if err != nil {
			return "", err
		}
		fmt.Fprintf(h, "%s\t%s\n", t.Path, ts)
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}
