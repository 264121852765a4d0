package activity

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"spotsift/rvfit"
)

// nightly returns epochs of two 150-night seasons a year apart, one visit a
// night at about the same sidereal time, with about a third of the nights
// lost to weather (seeded).
func nightly(rng *rand.Rand) []float64 {
	var t []float64
	for _, start := range []float64{0, 365} {
		for night := 0.0; night < 150; night++ {
			if rng.Float64() < 0.35 {
				continue
			}
			t = append(t, 2460000+start+night+0.05*rng.NormFloat64())
		}
	}
	return t
}

// synth builds a series from signal functions of time: rv(t), and one
// function per indicator; white noise of the given errors is added.
func synth(seed uint64, rvErr float64, rv func(t float64) float64, inds map[string]func(t float64) float64, indErr map[string]float64) *rvfit.Series {
	rng := rand.New(rand.NewPCG(seed, 7))
	t := nightly(rng)
	s := &rvfit.Series{Name: "synthetic"}
	for _, ti := range t {
		s.Time = append(s.Time, ti)
		s.RV = append(s.RV, rv(ti)+rvErr*rng.NormFloat64())
		s.RVErr = append(s.RVErr, rvErr)
		s.Instrument = append(s.Instrument, "NORTH-1")
	}
	for _, name := range sortedKeysOf(inds) {
		f := inds[name]
		ind := rvfit.Indicator{Name: name, Value: make([]float64, len(t)), Err: make([]float64, len(t))}
		for i, ti := range t {
			ind.Value[i] = f(ti) + indErr[name]*rng.NormFloat64()
			ind.Err[i] = indErr[name]
		}
		s.Indicators = append(s.Indicators, ind)
	}
	return s
}

func noise(float64) float64 { return 0 }

func sine(amp, period, phase float64) func(float64) float64 {
	return func(t float64) float64 { return amp * math.Sin(2*math.Pi*t/period+phase) }
}

func evidence(sig *Signal, name string) *Evidence {
	for i := range sig.Evidence {
		if sig.Evidence[i].Name == name {
			return &sig.Evidence[i]
		}
	}
	return nil
}

var star25 = &Star{Name: "Test-25", BV: 0.65, RotationPeriod: 25, RotationPeriodErr: 1}

// A stable sinusoid unrelated to rotation, indicators flat: planet-like.
func TestDiagnosePlanet(t *testing.T) {
	s := synth(1, 1.0, sine(5, 7.3, 0.4), map[string]func(float64) float64{"fwhm": noise, "bis": noise}, map[string]float64{"fwhm": 2, "bis": 1})
	dg, err := Diagnose(context.Background(), s, &Options{Star: star25, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if len(dg.Signals) == 0 {
		t.Fatal("no signal found")
	}
	sig := dg.Signals[0]
	if math.Abs(float64(sig.Period)-7.3) > 0.05 {
		t.Errorf("period %v, want 7.3", sig.Period)
	}
	if sig.Verdict != PlanetLike {
		t.Errorf("verdict %s (score %.2f), want planet-like\n%s", sig.Verdict, sig.Score, dump(sig))
	}
	if e := evidence(&sig, "rotation_match"); e == nil || e.Points != TowardPlanet {
		t.Errorf("rotation_match: %+v", e)
	}
}

// RV and FWHM share a perfect sinusoid at P_rot/2: activity-like, and the
// indicator test must point to activity.
func TestDiagnoseSharedSinusoidAtHalfRotation(t *testing.T) {
	s := synth(2, 1.0, sine(6, 12.5, 0), map[string]func(float64) float64{"fwhm": sine(15, 12.5, 0), "bis": noise}, map[string]float64{"fwhm": 2, "bis": 1})
	dg, err := Diagnose(context.Background(), s, &Options{Star: star25, Seed: 2})
	if err != nil {
		t.Fatal(err)
	}
	sig := dg.Signals[0]
	if sig.Verdict != ActivityLike {
		t.Errorf("verdict %s (score %.2f), want activity-like\n%s", sig.Verdict, sig.Score, dump(sig))
	}
	e := evidence(&sig, "rotation_match")
	if e == nil || e.Points != TowardActivity || !strings.Contains(e.Reason, "P_rot/2") {
		t.Errorf("rotation_match at P_rot/2: %+v", e)
	}
	if e := evidence(&sig, "indicator_power:fwhm"); e == nil || e.Points != TowardActivity {
		t.Errorf("indicator_power:fwhm: %+v", e)
	}
	if e := evidence(&sig, "indicator_power:bis"); e == nil || e.Points == TowardActivity {
		t.Errorf("indicator_power:bis should not point to activity: %+v", e)
	}
}

// A signal whose phase flips between the two seasons fails the coherence
// test.
func TestDiagnosePhaseFlip(t *testing.T) {
	flip := func(t float64) float64 {
		ph := 0.0
		if t > 2460200 {
			ph = math.Pi
		}
		return 6 * math.Sin(2*math.Pi*t/9.1+ph)
	}
	s := synth(3, 1.0, flip, nil, nil)
	dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{9.1}, Seed: 3, SkipModels: true})
	if err != nil {
		t.Fatal(err)
	}
	sig := dg.Signals[0]
	if e := evidence(&sig, "season_coherence"); e == nil || e.Points != TowardActivity {
		t.Errorf("season_coherence: %+v", e)
	}
	if e := evidence(&sig, "stacked_growth"); e == nil || e.Points != TowardActivity {
		t.Errorf("stacked_growth: %+v", e)
	}
	// No indicators and no rotation: the tests that could not run are
	// listed, and the verdict claims nothing.
	if sig.Verdict == PlanetLike {
		t.Errorf("verdict %s on a phase-flipping signal", sig.Verdict)
	}
	var names []string
	for _, sk := range sig.Skipped {
		names = append(names, sk.Name)
	}
	for _, want := range []string{"rotation_match", "indicator_power", "chromaticity", "model_comparison"} {
		if !strings.Contains(strings.Join(names, " "), want) {
			t.Errorf("skipped tests %v lack %s", names, want)
		}
	}
}

// Pure noise: no signal, and a note saying so.
func TestDiagnoseNoSignal(t *testing.T) {
	s := synth(4, 1.0, noise, map[string]func(float64) float64{"fwhm": noise}, map[string]float64{"fwhm": 2})
	dg, err := Diagnose(context.Background(), s, &Options{Seed: 4, SkipModels: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(dg.Signals) != 0 || len(dg.Notes) == 0 {
		t.Errorf("signals %d, notes %q; want none and a note", len(dg.Signals), dg.Notes)
	}
	// A given period on noise: inconclusive.
	dg, err = Diagnose(context.Background(), s, &Options{Periods: []float64{5}, Seed: 4, SkipModels: true})
	if err != nil {
		t.Fatal(err)
	}
	if v := dg.Signals[0].Verdict; v != Inconclusive {
		t.Errorf("verdict on noise at a given period: %s", v)
	}
}

func TestDiagnoseBadInput(t *testing.T) {
	s := synth(5, 1.0, sine(5, 7.3, 0), nil, nil)
	few := s.Subset([]int{0, 1, 2, 3, 4})
	if _, err := Diagnose(context.Background(), few, nil); !errors.Is(err, rvfit.ErrTooFewEpochs) {
		t.Errorf("5 epochs: err = %v, want ErrTooFewEpochs", err)
	}
	for _, p := range []float64{5000, -3, 0.01, math.Inf(1)} {
		if _, err := Diagnose(context.Background(), s, &Options{Periods: []float64{p}}); !errors.Is(err, ErrPeriodOutOfReach) {
			t.Errorf("period %g: err = %v, want ErrPeriodOutOfReach", p, err)
		}
	}
	// Twelve epochs within half a day: no period above the 1.05 d floor
	// fits in the baseline.
	short := s.Subset([]int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11})
	for i := range short.Time {
		short.Time[i] = 2460000 + 0.04*float64(i)
	}
	if _, err := Diagnose(context.Background(), short, nil); !errors.Is(err, ErrPeriodOutOfReach) {
		t.Errorf("half-day baseline: err = %v, want ErrPeriodOutOfReach", err)
	}
	if _, err := Diagnose(context.Background(), s, &Options{FAPThreshold: 2}); !errors.Is(err, ErrBadOption) {
		t.Errorf("FAP threshold 2: err = %v, want ErrBadOption", err)
	}
	// Epochs grouped by instrument, not by time (as some merged archive
	// tables are): refused with the epoch named, and accepted once sorted.
	idx := make([]int, 0, s.Len())
	for i := 1; i < s.Len(); i += 2 {
		idx = append(idx, i)
	}
	for i := 0; i < s.Len(); i += 2 {
		idx = append(idx, i)
	}
	grouped := s.Subset(idx)
	_, err := Diagnose(context.Background(), grouped, &Options{Seed: 1, SkipModels: true})
	if !errors.Is(err, rvfit.ErrUnsorted) || !strings.Contains(err.Error(), "SortByTime") {
		t.Errorf("epochs out of time order: err = %v, want ErrUnsorted naming SortByTime", err)
	}
	if !grouped.SortByTime() {
		t.Fatal("SortByTime reports the grouped epochs as already sorted")
	}
	if _, err := Diagnose(context.Background(), grouped, &Options{Seed: 1, SkipModels: true}); err != nil {
		t.Errorf("after SortByTime: %v", err)
	}
}

func TestDiagnosisJSON(t *testing.T) {
	s := synth(6, 1.0, sine(5, 7.3, 0), nil, nil)
	dg, err := Diagnose(context.Background(), s, &Options{Seed: 6, SkipModels: true})
	if err != nil {
		t.Fatal(err)
	}
	b, err := json.Marshal(dg)
	if err != nil {
		t.Fatal(err)
	}
	var back Diagnosis
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	if back.Caution != Caution || len(back.Signals) != len(dg.Signals) {
		t.Errorf("JSON round trip lost content: %s", b)
	}
	// Same seed, same bytes.
	dg2, _ := Diagnose(context.Background(), s, &Options{Seed: 6, SkipModels: true})
	b2, _ := json.Marshal(dg2)
	if string(b) != string(b2) {
		t.Error("same seed gave different JSON")
	}
}

func dump(sig Signal) string {
	var b strings.Builder
	for _, e := range sig.Evidence {
		b.WriteString("  " + e.Name + " [" + e.Points + "] " + e.Reason + "\n")
	}
	for _, s := range sig.Skipped {
		b.WriteString("  skipped " + s.Name + ": " + s.Why + "\n")
	}
	return b.String()
}
