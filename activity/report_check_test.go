package activity

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// twoInstrumentFixture diagnoses a quiet star with a 3 m/s planet at 7.3 d
// observed by two instruments whose RV zero points differ by 130 m/s and
// whose FWHM and contrast zero points differ too: pooled without the
// offsets, RV and the indicators correlate almost perfectly; within each
// instrument they do not correlate at all.
func twoInstrumentFixture(t *testing.T, dir string) (*Report, []corrPanel) {
	t.Helper()
	s := synth(31, 1.0, sine(3, 7.3, 0.4), map[string]func(float64) float64{"fwhm": noise, "contrast": noise},
		map[string]float64{"fwhm": 3, "contrast": 0.05})
	s.Name = "Two-instrument test star"
	half := s.Len() / 2
	for i := range s.Time {
		if i >= half {
			s.Instrument[i] = "SOUTH-2"
			s.RV[i] += 130
			s.Indicator("fwhm").Value[i] -= 60
			s.Indicator("contrast").Value[i] += 2
		}
	}
	star := &Star{Name: s.Name, BV: 0.65, Mass: 0.9, RotationPeriod: 25}
	dg, err := Diagnose(context.Background(), s, &Options{Star: star, Seed: 31})
	if err != nil {
		t.Fatal(err)
	}
	dg.Provenance = Provenance{Version: "test", Seed: 31, Command: "spotsift vet --data two.csv --star two.toml --out out"}
	r := &Report{Diagnosis: dg, Series: s, Star: star}
	if err := WriteReport(dir, r); err != nil {
		t.Fatal(err)
	}
	_, info, err := reportFigures(r)
	if err != nil {
		t.Fatal(err)
	}
	return r, info
}

var ownRVr = regexp.MustCompile(`against the signal's own RVs r = (-?[0-9.]+)`)

// evidenceOwnR returns the r the evidence quotes for the correlation of an
// indicator with a signal's own RVs.
func evidenceOwnR(sg *Signal, ind string) (string, bool) {
	e := evidence(sg, "indicator_correlation:"+ind)
	if e == nil {
		return "", false
	}
	m := ownRVr.FindStringSubmatch(e.Reason)
	if m == nil {
		return "", false
	}
	return m[1], true
}

// TestCorrelationsAsTheEvidence checks that the correlation figure removes
// the instrument offsets and quotes the r of the evidence table.
func TestCorrelationsAsTheEvidence(t *testing.T) {
	dir := t.TempDir()
	if d := os.Getenv("SPOTSIFT_REPORT_DIR"); d != "" {
		dir = d // to look at the report by hand
	}
	r, info := twoInstrumentFixture(t, dir)
	s, dg := r.Series, r.Diagnosis
	// The fixture is meaningful: pooled, the offsets make r ≈ ±1.
	if c := Pearson(s.RV, s.Indicator("fwhm").Value); math.Abs(c.R) < 0.9 {
		t.Fatalf("pooled r(rv, fwhm) = %.2f; the fixture should make it near ±1", c.R)
	}
	if len(dg.Signals) == 0 || len(info) == 0 {
		t.Fatalf("%d signals, %d correlation panels", len(dg.Signals), len(info))
	}
	for _, p := range info {
		if p.signal < 0 {
			t.Fatalf("panel %s without a signal", p.indicator)
		}
		want, ok := evidenceOwnR(&dg.Signals[p.signal], p.indicator)
		if !ok {
			t.Errorf("S%d %s: no r in the evidence", p.signal+1, p.indicator)
			continue
		}
		if got := strconv.FormatFloat(p.r.R, 'f', 2, 64); got != want {
			t.Errorf("S%d %s: figure r = %s, evidence r = %s", p.signal+1, p.indicator, got, want)
		}
		if math.Abs(p.r.R) > 0.5 {
			t.Errorf("S%d %s: r = %.2f with the offsets removed; the indicator is pure noise", p.signal+1, p.indicator, p.r.R)
		}
	}
	html, _ := os.ReadFile(filepath.Join(dir, HTMLFile))
	if !strings.Contains(string(html), "computed as the evidence computes them") {
		t.Error("the correlation figure does not say how its r is computed")
	}
}
