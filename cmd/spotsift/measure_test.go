package main

import (
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"spotsift/indicators"
	"spotsift/rvfit/rvtest"
)

// labSpectra writes n spectra of lab lines at systemic velocity vsys
// (rvtest.LabSpectra).
func labSpectra(t *testing.T, dir string, n int, vsys float64) {
	rvtest.LabSpectra(t, dir, n, vsys, nil)
}

// TestMeasureMessages checks what measure says: a mask without its
// air/vacuum line is refused with what to write and where (exit 2); a mask
// and notes among the spectra are skipped with a note; the systemic
// velocity found is reported; band warnings appear, and --quiet silences
// all of it.
func TestMeasureMessages(t *testing.T) {
	if testing.Short() {
		t.Skip("writes and measures spectra")
	}
	dir := t.TempDir()
	spec := filepath.Join(dir, "spectra")
	if err := os.Mkdir(spec, 0o755); err != nil {
		t.Fatal(err)
	}
	labSpectra(t, spec, 3, -23e3)
	out := filepath.Join(dir, "m.csv")

	undeclared := write(t, spec, "lines.txt", "5000.12 0.5\n5100.34 0.7\n")
	code, _, stderr := runCmd("measure", "--spectra", spec, "--out", out, "--mask", undeclared)
	want := `add the line "# WAVESCAL = air" (or "# WAVESCAL = vacuum") at the top of the file, before the first wavelength`
	if code != 2 || !strings.Contains(stderr, undeclared+":1: ") || !strings.Contains(stderr, want) {
		t.Errorf("undeclared mask: exit %d, stderr %q", code, stderr)
	}

	// The same list, declared, is usable as a mask and is skipped as a
	// spectrum; so are the notes.
	write(t, spec, "lines.txt", "# WAVESCAL = air\n"+maskRows())
	write(t, spec, "notes.txt", "Observed by A. N. Other.\n")
	code, _, stderr = runCmd("measure", "--spectra", spec, "--out", out)
	for _, w := range []string{
		"notes.txt: skipped, not a spectrum: text without columns of numbers",
		"lines.txt: skipped, not a spectrum: a line list such as a mask",
		"systemic velocity -2", "km/s from 106 of 106 laboratory lines",
		"spotsift: 3 of 3 spectra measured into " + out + " (2 other files skipped)",
	} {
		if !strings.Contains(stderr, w) {
			t.Errorf("stderr lacks %q:\n%s", w, stderr)
		}
	}
	if code != 0 || strings.Contains(stderr, "left out") {
		t.Errorf("exit %d, stderr:\n%s", code, stderr)
	}
	// A systemic velocity 150 km/s off: the bands miss the lines.
	code, _, stderr = runCmd("measure", "--spectra", spec, "--out", out, "--systemic", "127")
	if code != 0 || !strings.Contains(stderr, "warning: ") || !strings.Contains(stderr, "band off the line") {
		t.Errorf("wrong systemic: exit %d, stderr:\n%s", code, stderr)
	}
	code, _, stderr = runCmd("measure", "--spectra", spec, "--out", out, "--systemic", "127", "--quiet")
	if code != 0 || stderr != "" {
		t.Errorf("--quiet: exit %d, stderr:\n%s", code, stderr)
	}
}

func maskRows() string {
	var b strings.Builder
	for _, l := range indicators.LabLines {
		b.WriteString(strconv.FormatFloat(l.Air, 'f', -1, 64) + " 0.5\n")
	}
	return b.String()
}
