package survey

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spotsift/activity"
	"spotsift/activity/starsim"
	"spotsift/rvfit/rvtest"
)

// TestSpectraFolder surveys a star whose data is a folder of simulated
// FITS spectra (measured with activity.Measure) beside one from a table.
func TestSpectraFolder(t *testing.T) {
	if testing.Short() {
		t.Skip("measures simulated spectra")
	}
	sc, err := starsim.DemoScenario("active-no-planet")
	if err != nil {
		t.Fatal(err)
	}
	sc.Spectrum.Full = true
	sc.Observing.MaxEpochs = 16
	res, err := starsim.Simulate(sc, 3, &starsim.Options{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := res.WriteFiles(dir, &starsim.WriteOptions{Workers: 2, Float32: true}); err != nil {
		t.Fatal(err)
	}
	m := &Manifest{File: "spectra manifest", Dir: dir, Stars: []Entry{
		{Name: "Corvane-3", Data: starsim.SpectraDir, StarFile: starsim.StarFile},
	}}
	out := t.TempDir()
	sum, err := Run(context.Background(), m, out, fastOpts())
	if err != nil {
		t.Fatal(err)
	}
	st, err := readState(filepath.Join(out, StarsDir, "Corvane-3"))
	if err != nil || st.NEpochs != 16 || st.Status != StatusDone {
		t.Fatalf("state %+v, %v", st, err)
	}
	// A new file in the folder reruns the star, and the file that is not
	// a spectrum is named in the star's notes.
	os.WriteFile(filepath.Join(dir, starsim.SpectraDir, "epoch-extra.txt"), []byte("not a spectrum\n"), 0o644)
	sum, err = Run(context.Background(), m, out, fastOpts())
	if err != nil || sum.Run.Analysed != 1 {
		t.Errorf("after adding a file: %v %+v", err, sum.Run)
	}
	st, _ = readState(filepath.Join(out, StarsDir, "Corvane-3"))
	if len(st.Notes) == 0 {
		t.Error("the unreadable spectrum is not noted")
	}
	// A malformed FITS spectrum among them (the header card NAXIS0 that
	// once crashed the measuring and the whole survey, from the
	// malformed-input corpus) is left out and named; the star is done.
	bad, err := os.ReadFile("../../testdata/malformed/spectra/card-naxis0/epoch-1.fits")
	if err != nil {
		t.Fatal(err)
	}
	os.WriteFile(filepath.Join(dir, starsim.SpectraDir, "epoch-zz.fits"), bad, 0o644)
	sum, err = Run(context.Background(), m, out, fastOpts())
	if err != nil || sum.Run.Analysed != 1 {
		t.Fatalf("with a malformed spectrum: %v %+v", err, sum.Run)
	}
	st, _ = readState(filepath.Join(out, StarsDir, "Corvane-3"))
	if !strings.Contains(strings.Join(st.Notes, "\n"), "epoch-zz.fits") {
		t.Errorf("the malformed spectrum is not named in the notes: %q", st.Notes)
	}
}

// TestInMemory runs a manifest whose data are series in memory, as
// spotsift demo does, and checks that a rerun skips them.
func TestInMemory(t *testing.T) {
	var m Manifest
	for i, name := range []string{"active-no-planet", "quiet-planet"} {
		sc, err := starsim.DemoScenario(name)
		if err != nil {
			t.Fatal(err)
		}
		res, err := starsim.Simulate(sc, uint64(i+1), &starsim.Options{Workers: 1})
		if err != nil {
			t.Fatal(err)
		}
		m.Stars = append(m.Stars, Entry{Name: sc.Name, Data: name, Series: res.Series(),
			Star: &activity.Star{Name: sc.Name, RotationPeriod: sc.Star.RotationPeriod}})
	}
	out := t.TempDir()
	sum, err := Run(context.Background(), &m, out, fastOpts())
	if err != nil || sum.Run.Analysed != 2 {
		t.Fatalf("%v %+v", err, sum)
	}
	sum, err = Run(context.Background(), &m, out, fastOpts())
	if err != nil || sum.Run.Unchanged != 2 {
		t.Fatalf("rerun: %v %+v", err, sum.Run)
	}
	m.Stars[1].Series.RV[0] += 1
	sum, err = Run(context.Background(), &m, out, fastOpts())
	if err != nil || sum.Run.Analysed != 1 || sum.Stars[1].Status != StatusDone {
		t.Fatalf("after a change: %v %+v", err, sum)
	}
}

// TestSpectraNotes: what measuring a star's spectra notices reaches the
// star's notes, as the measure command prints it: here the H-alpha band
// off its line (the line drawn 1.5 Å from its laboratory wavelength in
// every spectrum, beyond the check's 0.8 Å tolerance) and the barycentric
// convention assumed.
func TestSpectraNotes(t *testing.T) {
	if testing.Short() {
		t.Skip("writes and measures spectra")
	}
	dir := t.TempDir()
	spectra := filepath.Join(dir, "spectra")
	if err := os.Mkdir(spectra, 0o755); err != nil {
		t.Fatal(err)
	}
	rvtest.LabSpectra(t, spectra, activity.MinEpochs, -23e3, map[float64]float64{6562.797: 6562.797 + 1.5})
	m := &Manifest{File: "notes manifest", Dir: dir, Stars: []Entry{{Name: "Lab-1", Data: "spectra"}}}
	out := t.TempDir()
	o := fastOpts()
	if _, err := Run(context.Background(), m, out, o); err != nil {
		t.Fatal(err)
	}
	st, err := readState(filepath.Join(out, StarsDir, "Lab-1"))
	if err != nil || st.Status != StatusDone {
		t.Fatalf("state %+v, %v", st, err)
	}
	notes := strings.Join(st.Notes, "\n")
	for _, w := range []string{"spectrum sa.fits kept, to check: H-alpha: H-alpha band off the line", "barycentric correction: "} {
		if !strings.Contains(notes, w) {
			t.Errorf("the notes lack %q:\n%s", w, notes)
		}
	}
	if strings.Contains(notes, "Ca II") || strings.Contains(notes, "Na I") {
		t.Errorf("a band off its line besides H-alpha:\n%s", notes)
	}
}
