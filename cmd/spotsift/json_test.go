package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestMeasureJSON checks that measure honours --json: a summary of the
// table written and of every file skipped or failed, on stdout.
func TestMeasureJSON(t *testing.T) {
	if testing.Short() {
		t.Skip("writes and measures spectra")
	}
	dir := t.TempDir()
	spec := filepath.Join(dir, "spectra")
	if err := os.Mkdir(spec, 0o755); err != nil {
		t.Fatal(err)
	}
	labSpectra(t, spec, 3, -23e3)
	write(t, spec, "notes.txt", "Observed by A. N. Other.\n")
	out := filepath.Join(dir, "m.csv")
	code, stdout, stderr := runCmd("measure", "--spectra", spec, "--out", out, "--json", "--quiet")
	var sum measureSummary
	if code != exitOK || json.Unmarshal([]byte(stdout), &sum) != nil {
		t.Fatalf("measure --json: exit %d\n%s\n%s", code, stdout, stderr)
	}
	if sum.Table != out || sum.Epochs != 3 || sum.Files != 4 || len(sum.Skipped) != 1 || !strings.HasSuffix(sum.Skipped[0].Path, "notes.txt") {
		t.Errorf("summary %+v", sum)
	}
	if len(sum.Columns) < 5 || sum.Columns[1] != "rv" {
		t.Errorf("columns %v", sum.Columns)
	}
}
