package activity

import (
	"context"
	"math"
	"strings"
	"testing"
)

// TestLongPeriodIndicatorOutOfPhase: a 120 d RV signal, ten rotations of
// a 12 d star, beside an indicator that varies at 120 d too. The
// inhibition of convective blueshift moves long-term activity's RVs with
// the S-index, in phase and with the same sign: an S-index in phase is
// activity evidence; a quarter period away, or in anti-phase, it cannot be
// what moves the RVs, and neither its power nor its correlation counts.
// The bisector's sign is not fixed, so in anti-phase it still counts.
func TestLongPeriodIndicatorOutOfPhase(t *testing.T) {
	const p = 120.0
	for _, c := range []struct {
		name  string
		phase float64
		want  string
	}{
		{"s_index", 0, TowardActivity},
		{"s_index", math.Pi / 2, TowardNeither},
		{"s_index", math.Pi, TowardNeither},
		{"bis", math.Pi, TowardActivity},
	} {
		// The star's rotation (12 d) moves both, which tells how much the
		// indicator varies per m/s of activity RV.
		rv := func(t float64) float64 { return sine(5, p, 0)(t) + sine(3, 12, 0)(t) }
		ind := func(t float64) float64 { return sine(1, p, c.phase)(t) + sine(0.6, 12, 0)(t) }
		s := synth(8, 1, rv, map[string]func(float64) float64{c.name: ind}, map[string]float64{c.name: 0.5})
		star := &Star{Name: "Hollin-5", RotationPeriod: 12, RotationPeriodErr: 1}
		dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{p, 12}, Star: star, SkipModels: true, Seed: 8})
		if err != nil {
			t.Fatal(err)
		}
		sg := dg.Signals[0]
		e := evidence(&sg, "indicator_power:"+c.name)
		corr := evidence(&sg, "indicator_correlation:"+c.name)
		if e == nil || e.Points != c.want {
			t.Fatalf("%s at phase %.2f: indicator power %+v, want %s (correlation %+v)", c.name, c.phase, e, c.want, corr)
		}
		if c.want != TowardNeither {
			continue
		}
		if !strings.Contains(e.Reason, "from the phase with the RVs") {
			t.Errorf("%s at phase %.2f: the reason should say why: %s", c.name, c.phase, e.Reason)
		}
		if corr == nil || corr.Points == TowardActivity || corr.Weight > 0 {
			t.Errorf("%s at phase %.2f: the correlation still counts for activity: %+v", c.name, c.phase, corr)
		}
		if sg.Verdict == ActivityLike {
			t.Errorf("%s at phase %.2f: an indicator out of phase with the RVs made the signal activity-like: score %+.2f", c.name, c.phase, sg.Score)
		}
	}
}

// TestPhaseGap checks the phase distance for each sign, across the wrap.
func TestPhaseGap(t *testing.T) {
	for _, c := range []struct{ ind, rv, sign, want float64 }{
		{0.1, -0.1, 1, 0.2},
		{3.1, -3.1, 1, 2*math.Pi - 6.2},
		{math.Pi, 0, -1, 0},
		{math.Pi / 2, 0, -1, math.Pi / 2},
		{math.Pi - 0.3, 0, 0, 0.3},
		{0.3, 0, 0, 0.3},
	} {
		if got := phaseGap(c.ind, c.rv, c.sign); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("phaseGap(%g, %g, %g) = %g, want %g", c.ind, c.rv, c.sign, got, c.want)
		}
	}
}

// TestCycleApart: a cycle match whose indicator does not vary with the
// signal loses its weight and the caveat it set, and only that caveat.
func TestCycleApart(t *testing.T) {
	tr := &trial{caveat: cycleCaveat("s_index")}
	tr.add(Evidence{Name: "cycle_match", Points: TowardActivity, Weight: 0.8})
	tr.cycleApart("s_index", "does not vary with the signal")
	if e := tr.ev[0]; e.Points != TowardNeither || e.Weight != 0 || !strings.Contains(e.Reason, "by chance") {
		t.Errorf("cycle match not set aside: %+v", e)
	}
	if tr.caveat != "" {
		t.Errorf("the cycle's caveat stayed: %q", tr.caveat)
	}
	other := &trial{caveat: "the period sits at P_rot/2 of the rotation hypothesis 40 d"}
	other.add(Evidence{Name: "cycle_match", Points: TowardActivity, Weight: 0.8})
	other.cycleApart("s_index", "does not vary with the signal")
	if other.caveat == "" {
		t.Error("another test's caveat was lifted with the cycle's")
	}
}

// TestCycleMatchNeedsIndicatorAtPeriod: the S-index carries a strong
// cycle of 1000 d, whose window (a cycle twice the baseline has an error
// of about its period) reaches a 340 d planet one resolution element
// away. Fitted at 340 d the S-index shows nothing, so the match is set
// aside, with its caveat. With the S-index varying at 340 d too, in phase
// with the RVs, the match stands.
func TestCycleMatchNeedsIndicatorAtPeriod(t *testing.T) {
	const p, pc = 340.0, 1000.0
	for _, withSignal := range []bool{false, true} {
		ind := func(t float64) float64 {
			v := sine(0.1, pc, 0)(t)
			if withSignal {
				v += sine(0.02, p, 0)(t)
			}
			return v
		}
		s := synth(9, 1, sine(5, p, 0), map[string]func(float64) float64{"s_index": ind}, map[string]float64{"s_index": 0.005})
		dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{p}, SkipModels: true, Seed: 9})
		if err != nil {
			t.Fatal(err)
		}
		if c := dg.Rotation.Cycle; c == nil || c.Indicator != "s_index" {
			t.Fatalf("no cycle found in the S-index: %+v", c)
		}
		sg := dg.Signals[0]
		e := evidence(&sg, "cycle_match")
		if e == nil || !(float64(e.Value) <= 1) {
			t.Fatalf("S-index at the period %v: the 340 d signal should be within the cycle's window: %+v", withSignal, e)
		}
		if withSignal {
			if e.Points != TowardActivity {
				t.Errorf("the S-index varies at 340 d in phase with the RVs, yet the cycle match does not count: %s", e.Reason)
			}
			continue
		}
		if e.Points != TowardNeither || e.Weight != 0 || !strings.Contains(e.Reason, "neither significant power") {
			t.Errorf("the S-index shows nothing at 340 d, yet the cycle match counts: %+v", e)
		}
		if strings.Contains(sg.Caveat, "magnetic cycle") {
			t.Errorf("the cycle's caveat stayed: %q", sg.Caveat)
		}
	}
}

// TestLongPeriodWithoutIndicators: a 300 d sinusoid of 6 m/s on a 25 d
// rotator, RVs alone. A magnetic cycle could move the RVs so, and without
// an indicator that follows the cycle nothing can show one: the signal
// gets the caveat and is not planet-like, with a bisector column too. With
// an S-index column (flat) the caveat goes; so it does for an amplitude no
// cycle reaches (60 m/s).
func TestLongPeriodWithoutIndicators(t *testing.T) {
	for _, c := range []struct {
		name    string
		amp     float64
		column  string
		caveats bool
	}{
		{"RVs alone", 6, "", true},
		{"with a bisector only", 6, "bis", true},
		{"with an S-index", 6, "s_index", false},
		{"RVs alone, 60 m/s", 60, "", false},
	} {
		inds := map[string]func(float64) float64{}
		if c.column != "" {
			inds[c.column] = noise
		}
		s := synth(11, 1, sine(c.amp, 300, 0.3), inds, map[string]float64{"s_index": 0.005, "bis": 1})
		dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{300}, Star: star25, SkipModels: true, Seed: 11})
		if err != nil {
			t.Fatal(err)
		}
		sg := dg.Signals[0]
		has := sg.Caveat == noCycleIndicatorCaveat
		if has != c.caveats {
			t.Errorf("%s: caveat %q, want the no-indicator caveat: %v\n%s", c.name, sg.Caveat, c.caveats, dump(sg))
		}
		if c.caveats && sg.Verdict == PlanetLike {
			t.Errorf("%s: planet-like with the caveat", c.name)
		}
		e := evidence(&sg, "cycle_match")
		if c.column != "s_index" && (e == nil || e.Points != TowardNeither || !strings.Contains(e.Reason, "no activity indicator")) {
			t.Errorf("%s: cycle_match %+v, want the no-indicator note", c.name, e)
		}
	}
}
