package main

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"spotsift/activity"
	"spotsift/activity/starsim"
	"spotsift/rvfit"
)

// TestMeasureInBatches checks the demo's way of measuring its spectra: a
// batch at a time through FITS files on disk, deleted after measuring.
// The series must be exactly the one activity.Measure gives for the whole
// folder of the same FITS files (same mask, same epochs, same numbers),
// never more than one batch may be on disk, and nothing may be left.
func TestMeasureInBatches(t *testing.T) {
	sc, err := starsim.DemoScenario("active-no-planet")
	if err != nil {
		t.Fatal(err)
	}
	sc.Spectrum = starsim.SpectrumPlan{Full: true, Pixels: 60000, LambdaMin: 3850, LambdaMax: 6700, Lines: 800}
	sc.Observing.MaxEpochs = 31
	res, err := starsim.Simulate(sc, 5, &starsim.Options{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	star := &activity.Star{Name: sc.Name, BV: 1.0}
	const batch = 6 // the first batch holds maskSpectra (20) spectra

	kept := t.TempDir()
	got, fails, err := measureInBatches(context.Background(), res, kept, true, &batchOptions{Batch: batch, Workers: 2, Measure: activity.MeasureOptions{Star: star}})
	if err != nil {
		t.Fatalf("batches: %v", err)
	}
	paths, err := activity.SpectrumFiles(kept)
	if err != nil || len(paths) != res.Len() {
		t.Fatalf("kept spectra: %d of %d (%v)", len(paths), res.Len(), err)
	}
	want, wfails, err := activity.Measure(context.Background(), paths, &activity.MeasureOptions{Star: star, Workers: 2})
	if err != nil {
		t.Fatalf("whole folder: %v", err)
	}
	// Spectra kept with a quantity missing (here log R'HK of the quietest
	// epochs) are named alike.
	if !reflect.DeepEqual(fails, wfails) {
		t.Errorf("failures in batches %v, whole folder %v", fails, wfails)
	}
	sameSeries(t, "kept", got, want)

	// Deleted as measured: at most one batch on disk while measuring.
	tmp := t.TempDir()
	peak := 0
	got2, _, err := measureInBatches(context.Background(), res, tmp, false, &batchOptions{Batch: batch, Workers: 2,
		Measure: activity.MeasureOptions{Star: star}, Progress: func(int, int) {
			ents, _ := os.ReadDir(tmp)
			peak = max(peak, len(ents))
		}})
	if err != nil {
		t.Fatal(err)
	}
	sameSeries(t, "deleted", got2, want)
	if ents, _ := os.ReadDir(tmp); len(ents) != 0 {
		t.Errorf("%d files left in %s", len(ents), tmp)
	}
	if peak == 0 || peak > maskSpectra {
		t.Errorf("at most %d spectra on disk at once expected, saw %d", maskSpectra, peak)
	}
	if _, err := os.Stat(filepath.Join(kept, starsim.SpectrumFile(res.Len()-1))); err != nil {
		t.Errorf("the last spectrum was not kept: %v", err)
	}
}

// sameSeries fails unless a and b hold the same epochs, instruments and
// columns, NaN where the other has NaN.
func sameSeries(t *testing.T, what string, a, b *rvfit.Series) {
	t.Helper()
	eq := func(x, y []float64) bool {
		if len(x) != len(y) {
			return false
		}
		for i := range x {
			if x[i] != y[i] && !(math.IsNaN(x[i]) && math.IsNaN(y[i])) {
				return false
			}
		}
		return true
	}
	if !eq(a.Time, b.Time) || !eq(a.RV, b.RV) || !eq(a.RVErr, b.RVErr) || !reflect.DeepEqual(a.Instrument, b.Instrument) {
		t.Fatalf("%s: epochs differ", what)
	}
	if len(a.Indicators) != len(b.Indicators) {
		t.Fatalf("%s: %d indicator columns, want %d", what, len(a.Indicators), len(b.Indicators))
	}
	for k := range a.Indicators {
		x, y := a.Indicators[k], b.Indicators[k]
		if x.Name != y.Name || x.Unit != y.Unit || !eq(x.Value, y.Value) || !eq(x.Err, y.Err) {
			t.Errorf("%s: column %d (%s) differs from %s", what, k, x.Name, y.Name)
		}
	}
}
