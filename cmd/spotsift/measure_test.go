package main

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"spotsift/indicators"
)

// labSpectra writes n FITS spectra of a star at vsys m/s whose lines are the
// laboratory lines of indicators.LabLines (σ = 3 km/s) and broad Ca II,
// Na D and H-alpha lines, with photon noise, into dir.
func labSpectra(t *testing.T, dir string, n int, vsys float64) {
	t.Helper()
	rng := rand.New(rand.NewPCG(2, 2))
	type line struct{ lambda, depth, sigma float64 }
	var lines []line
	for _, l := range indicators.LabLines {
		lines = append(lines, line{l.Air, 0.3 + 0.5*rng.Float64(), 3000})
	}
	for _, c := range []float64{3933.663, 3968.468, 5889.951, 5895.924, 6562.797} {
		lines = append(lines, line{c, 0.8, 40e3})
	}
	const lo, step = 3880.0, 6e-6
	npix := int(math.Log(6600/lo) / step)
	for k := 0; k < n; k++ {
		berv := 20e3 * math.Cos(float64(k))
		d := indicators.DopplerFactor(vsys) / indicators.DopplerFactor(berv)
		o := indicators.Order{Wavelength: make([]float64, npix), Flux: make([]float64, npix)}
		for i := range o.Wavelength {
			o.Wavelength[i] = lo * math.Exp(step*float64(i))
			o.Flux[i] = 1
		}
		for _, l := range lines {
			c := l.lambda * d
			for i := max(0, int(math.Log(c*(1-8*l.sigma/indicators.C)/lo)/step)); i < npix && o.Wavelength[i] < c*(1+8*l.sigma/indicators.C); i++ {
				u := indicators.C * math.Log(o.Wavelength[i]/c) / l.sigma
				o.Flux[i] *= 1 - l.depth*math.Exp(-0.5*u*u)
			}
		}
		for i, f := range o.Flux {
			o.Flux[i] = math.Max(0, 1e4*f+100*f*rng.NormFloat64())
		}
		s := &indicators.Spectrum{Orders: []indicators.Order{o}, BJD: 2460000.5 + 3*float64(k), BERV: berv}
		if err := indicators.WriteFITSFile(filepath.Join(dir, "s"+string(rune('a'+k))+".fits"), s); err != nil {
			t.Fatal(err)
		}
	}
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
