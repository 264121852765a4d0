package activity

import (
	"bytes"
	"flag"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"spotsift/activity/photometry"
	"spotsift/rvfit"
)

// update rewrites the golden figures: go test ./activity -run TestFigureGolden -update
var update = flag.Bool("update", false, "rewrite the golden SVG files in testdata/figures")

// goldenCase is a small two-instrument star with a hand-made diagnosis
// (no fit, no randomness beyond the seeded noise), so that the golden
// figures change only when the drawing code does.
func goldenCase() (*rvfit.Series, *Diagnosis) {
	rng := rand.New(rand.NewPCG(18, 1))
	s := &rvfit.Series{Name: "golden"}
	fw := rvfit.Indicator{Name: "fwhm", Unit: "km/s"}
	bis := rvfit.Indicator{Name: "bis", Unit: "m/s"}
	t := 2460003.0
	for i := 0; i < 48; i++ {
		t += 0.6 + 1.7*rng.Float64()
		if i == 24 {
			t += 20 // a gap between seasons
		}
		in, off := "NORTH-1", 0.0
		if i%3 == 2 {
			in, off = "SOUTH-2", 120
		}
		sig := 3 * math.Sin(2*math.Pi*t/7.3+0.4)
		s.Time = append(s.Time, t)
		s.RV = append(s.RV, off+sig+rng.NormFloat64())
		s.RVErr = append(s.RVErr, 1+0.2*rng.Float64())
		s.Instrument = append(s.Instrument, in)
		fw.Value, fw.Err = append(fw.Value, 7+off/100+0.01*rng.NormFloat64()), append(fw.Err, 0.01)
		bis.Value, bis.Err = append(bis.Value, 2*rng.NormFloat64()), append(bis.Err, 2)
	}
	s.Indicators = []rvfit.Indicator{fw, bis}
	inst, _ := groupIndex(s.Instrument)
	own := make([]float64, s.Len())
	comp := make([]float64, s.Len())
	for i, ti := range s.Time {
		comp[i] = 3 * math.Sin(2*math.Pi*ti/7.3+0.4)
		own[i] = s.RV[i] - []float64{0, 120}[inst[i]]
	}
	det := signalDetails{freq: 1 / 7.3, own: own, comp: comp,
		seasons: []seasonPoint{{tMid: 2460030, amp: 3.1, ampErr: 0.3, phase: 0.4, phaseErr: 0.1, n: 24}, {tMid: 2460080, amp: 2.8, ampErr: 0.35, phase: 0.45, phaseErr: 0.12, n: 24}}}
	st := &stackedCurve{n0: 10}
	for n := 10; n <= 48; n++ {
		x := float64(n)
		st.obs = append(st.obs, 0.02*x)
		st.med = append(st.med, 0.019*x)
		st.lo, st.hi = append(st.lo, 0.015*x), append(st.hi, 0.023*x)
	}
	det.stacked = st
	dg := &Diagnosis{Star: "golden", NEpochs: s.Len(), Baseline: Num(s.Baseline()), Caution: Caution,
		Rotation: Rotation{Period: 25, Err: 2.5, Source: "star file"},
		Signals: []Signal{{Period: 7.3, Freq: Num(1 / 7.3), Verdict: PlanetLike, Amplitude: 3, AmplitudeErr: 0.2,
			Evidence: []Evidence{{Name: "stacked_growth", Reason: "the power grows as a strictly periodic signal's would as epochs are added (Monte Carlo p = 0.4)"}}}},
		details: &details{grid: rvfit.Grid{FMin: 1.0 / 120, DF: 0.004, N: 240}, signals: []signalDetails{det}},
	}
	return s, dg
}

// goldenFigures returns every figure of the golden case.
func goldenFigures(t *testing.T) []*figure {
	s, dg := goldenCase()
	z := fitZeroPoints(s, dg)
	pg, err := figPeriodograms(s, dg)
	if err != nil {
		t.Fatal(err)
	}
	fc, _ := figCorrelations(s, dg, z)
	// The GP figure from a made-up smooth model.
	det := &dg.details.signals[0]
	y := make([]float64, s.Len())
	at := make([]float64, s.Len())
	for i, ti := range s.Time {
		y[i] = det.own[i] - det.comp[i]
		at[i] = 0.5 * math.Sin(2*math.Pi*ti/25)
	}
	var grid, mean, sd []float64
	for x := s.Time[0]; x <= s.Time[s.Len()-1]; x += 0.5 {
		grid, mean, sd = append(grid, x), append(mean, 0.5*math.Sin(2*math.Pi*x/25)), append(sd, 0.3)
	}
	return []*figure{figTimeSeries(s, z), pg, fc, figFolded(s, dg, z), drawGP(s, z, 0, y, at, grid, mean, sd), figCoherence(s, dg), goldenPhotometry(dg)}
}

// goldenPhotometry draws the light-curve figure of a made-up light curve
// (a 25 d spot modulation with seeded noise, two sectors).
func goldenPhotometry(dg *Diagnosis) *figure {
	rng := rand.New(rand.NewPCG(18, 2))
	lc := &photometry.LightCurve{Name: "golden"}
	for i := 0; i < 700; i++ {
		ti := 2460003 + 0.1*float64(i)
		if i >= 350 {
			ti += 40 // a second sector
		}
		lc.Time = append(lc.Time, ti)
		lc.Flux = append(lc.Flux, 1+0.004*math.Sin(2*math.Pi*ti/25)+5e-4*rng.NormFloat64())
		lc.Err = append(lc.Err, 5e-4)
	}
	d := *dg
	d.Rotation.Estimates = append([]RotationEstimate{{Method: lightCurveMethod + " (ACF)", Period: 24.6, Err: 0.8}}, d.Rotation.Estimates...)
	return figPhotometry(lc, &d)
}

// TestFigureGolden compares each figure's SVG with its golden file in
// testdata/figures (gonum/plot's own habit for plot tests). After a
// deliberate change to the drawing, look at the new files and rewrite them
// with -update.
func TestFigureGolden(t *testing.T) {
	for _, f := range goldenFigures(t) {
		if f == nil {
			t.Fatal("a figure of the golden case is missing")
		}
		got, err := f.svg()
		if err != nil {
			t.Fatal(err)
		}
		path := filepath.Join("testdata", "figures", f.name+".svg")
		if *update {
			if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
				t.Fatal(err)
			}
			if err := os.WriteFile(path, got, 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		want, err := os.ReadFile(path)
		if err != nil {
			t.Fatalf("%v (create the golden files with go test ./activity -run TestFigureGolden -update)", err)
		}
		if !bytes.Equal(got, want) {
			out := filepath.Join(t.TempDir(), f.name+".svg")
			os.WriteFile(out, got, 0o644)
			t.Errorf("figure %s differs from %s (new drawing in %s; if the change is intended, rerun with -update)", f.name, path, out)
		}
	}
}

// BenchmarkFigures draws the golden case's six figures as SVG and PNG.
func BenchmarkFigures(b *testing.B) {
	t := &testing.T{}
	for i := 0; i < b.N; i++ {
		for _, f := range goldenFigures(t) {
			if _, err := f.svg(); err != nil {
				b.Fatal(err)
			}
			if _, err := f.png(); err != nil {
				b.Fatal(err)
			}
		}
	}
}

// A figure too tall for a page at full width is split into parts that
// each fit (at most maxAspect), keeping every panel once, in order, the
// key, and an x-axis label under each part.
func TestSplitTall(t *testing.T) {
	s, _ := goldenCase()
	for k := 0; k < 9; k++ {
		ind := s.Indicators[1]
		ind.Name = "extra_" + string(rune('a'+k))
		s.Indicators = append(s.Indicators, ind)
	}
	_, dg := goldenCase()
	f := figTimeSeries(s, fitZeroPoints(s, dg))
	if len(f.plots) != 12 || f.h <= maxAspect*f.w {
		t.Fatalf("the test figure has %d rows, aspect %.2f: not tall", len(f.plots), float64(f.h/f.w))
	}
	parts := splitTall(f)
	if len(parts) < 2 || parts[0].name != "timeseries" || parts[1].name != "timeseries-2" {
		t.Fatalf("%d parts", len(parts))
	}
	n := 0
	for _, p := range parts {
		if p.h > maxAspect*p.w {
			t.Errorf("%s: aspect %.2f", p.name, float64(p.h/p.w))
		}
		if len(p.key) != len(f.key) {
			t.Errorf("%s: key lost", p.name)
		}
		for _, row := range p.plots {
			if row[0] != f.plots[n][0] {
				t.Errorf("%s: panel %d out of order", p.name, n)
			}
			n++
		}
		if p.plots[len(p.plots)-1][0].X.Label.Text == "" {
			t.Errorf("%s: no time axis label under the part", p.name)
		}
		if _, err := p.svg(); err != nil {
			t.Errorf("%s: %v", p.name, err)
		}
	}
	if n != len(f.plots) {
		t.Errorf("%d panels in the parts, want %d", n, len(f.plots))
	}
	// A figure that fits stays whole.
	s0, dg0 := goldenCase()
	if g := figTimeSeries(s0, fitZeroPoints(s0, dg0)); len(splitTall(g)) != 1 {
		t.Error("a short figure was split")
	}
}
