package activity

import (
	"context"
	"math"
	"math/rand/v2"
	"os"
	"strings"
	"testing"

	"spotsift/activity/photometry"
	"spotsift/activity/starsim"
)

// photometryStar simulates star seed of case cs with its light curve:
// starsim's disk-integrated flux (30-minute cadence, sectors, seasons,
// outages) with white noise drawn log-uniformly from 2×10⁻⁴ to 10⁻², so
// that the light curve is sometimes too noisy to show the rotation.
func photometryStar(t *testing.T, cs CalibrationCase, seed uint64) (*starsim.Result, *photometry.LightCurve) {
	sim, err := starsim.Simulate(cs.Scenario, seed, &starsim.Options{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(seed, 0x1c))
	noise := 2e-4 * math.Pow(50, rng.Float64())
	slc, err := sim.LightCurve(&starsim.Photometry{Noise: noise})
	if err != nil {
		t.Fatal(err)
	}
	return sim, &photometry.LightCurve{Name: cs.Name, Time: slc.Time, Flux: slc.Flux, Err: slc.Err, Sector: slc.Sector}
}

// TestCalibrationPhotometry sets the light curve's weight in the rotation
// step and measures what the light curve changes in the verdicts, on the
// calibration's simulated stars (the weak signal aside: its truth is
// "noise") with their light curves (see photometryStar). Behind
// SPOTSIFT_LONG=1; n = SPOTSIFT_CALIBRATION_SEEDS (default 4) seeds per
// case.
//
//   - Training seeds 1…n: where the light curve's period and the
//     indicators' (their joint periodogram, refined by the GP) disagree,
//     how often each is the right one (within 10% of the equatorial
//     P_rot). The weight is the odds, (a + 1)/(b + 1) with a the light
//     curve's wins and b the indicators' (the rule of succession);
//     DefaultLightCurveWeight holds the value found, and the held-out
//     stars below use the value of this run.
//   - Held-out seeds 2001…: every star diagnosed without and with its
//     light curve; the two confusion matrices, the false-planet rate
//     (non-planetary signals judged planet-like) and the planet recall
//     (planets judged planet-like) are printed.
//
// It asserts what photometry must not break: the false-planet rate does
// not rise.
func TestCalibrationPhotometry(t *testing.T) {
	if os.Getenv("SPOTSIFT_LONG") != "1" {
		t.Skip("diagnoses dozens of simulated stars twice; set SPOTSIFT_LONG=1 to run it")
	}
	n := calibrationSeeds(t, 4)
	all, err := CalibrationCases()
	if err != nil {
		t.Fatal(err)
	}
	var cases []CalibrationCase
	for _, cs := range all {
		if cs.Scenario != nil && cs.Periods == nil {
			cases = append(cases, cs)
		}
	}
	right := func(p, prot float64) bool { return math.Abs(p-prot) <= 0.1*prot }

	// Training: the light curve against the indicators.
	var lcWins, indWins, agree, lcOnly, indOnly int
	for _, cs := range cases {
		for s := 0; s < n; s++ {
			seed := uint64(1 + s)
			sim, lc := photometryStar(t, cs, seed)
			prot := sim.Scenario.Star.RotationPeriod
			dg, err := Diagnose(context.Background(), sim.Series(), &Options{Star: cs.Star, Seed: seed, LightCurve: lc})
			if err != nil {
				t.Fatal(err)
			}
			pl, pi := math.NaN(), math.NaN()
			for _, e := range dg.Rotation.Estimates {
				switch {
				case strings.HasPrefix(e.Method, lightCurveMethod):
					pl = e.Period
				case e.Method == "joint periodogram of the indicators" && math.IsNaN(pi), strings.HasPrefix(e.Method, "gp fit to "):
					pi = e.Period // the GP's refinement replaces the periodogram's
				}
			}
			switch {
			case math.IsNaN(pl) && math.IsNaN(pi):
			case math.IsNaN(pi):
				lcOnly++
			case math.IsNaN(pl):
				indOnly++
			case math.Abs(pl-pi) <= 0.1*pl:
				agree++
			case right(pl, prot) && !right(pi, prot):
				lcWins++
			case right(pi, prot) && !right(pl, prot):
				indWins++
			}
			t.Logf("training: %s seed %d: P_rot %.3g d, light curve %.3g d, indicators %.3g d", cs.Name, seed, prot, pl, pi)
		}
	}
	wHat := float64(lcWins+1) / float64(indWins+1)
	t.Logf("training seeds 1–%d: %d stars with both estimates agreeing, %d with the light curve only, %d with the indicators only; where they disagree the light curve is right %d times, the indicators %d times: weight (a+1)/(b+1) = %.2g (DefaultLightCurveWeight: %g); the held-out stars use %.2g",
		n, agree, lcOnly, indOnly, lcWins, indWins, wHat, float64(DefaultLightCurveWeight), wHat)

	// Held-out: the verdicts without and with the light curve.
	type tally struct{ nonPl, falsePl, planets, recalled, stars, rotOK int }
	var without, with tally
	confs := []*Confusion{
		{Counts: map[string]map[string]int{}, PerCase: map[string]map[string]map[string]int{}, Missed: map[string]int{}},
		{Counts: map[string]map[string]int{}, PerCase: map[string]map[string]map[string]int{}, Missed: map[string]int{}},
	}
	for _, cs := range cases {
		for s := 0; s < n; s++ {
			seed := uint64(2001 + s)
			sim, lc := photometryStar(t, cs, seed)
			prot := sim.Scenario.Star.RotationPeriod
			for k, light := range []*photometry.LightCurve{nil, lc} {
				tl := &without
				if k == 1 {
					tl = &with
				}
				dg, err := Diagnose(context.Background(), sim.Series(), &Options{Star: cs.Star, Seed: seed, LightCurve: light, LightCurveWeight: wHat})
				if err != nil {
					t.Fatal(err)
				}
				tl.stars++
				if p := float64(dg.Rotation.Period); right(p, prot) {
					tl.rotOK++
				} else {
					t.Logf("%s seed %d, light curve %v: rotation %.3g d (%s), P_rot %.3g d", cs.Name, seed, light != nil, p, dg.Rotation.Source, prot)
				}
				for _, sg := range dg.Signals {
					tr := cs.Truth(float64(sg.Period))
					if tr == "" {
						continue
					}
					confs[k].add(cs.Name, tr, sg.Verdict)
					switch {
					case tr == "planet":
						tl.planets++
						if sg.Verdict == PlanetLike {
							tl.recalled++
						}
					case NonPlanetary(tr):
						tl.nonPl++
						if sg.Verdict == PlanetLike {
							tl.falsePl++
						}
					}
				}
			}
		}
	}
	pct := func(a, b int) float64 { return 100 * float64(a) / math.Max(1, float64(b)) }
	for k, r := range []struct {
		name string
		t    tally
	}{{"RVs and indicators only", without}, {"with the light curve", with}} {
		var sb strings.Builder
		confs[k].Write(&sb)
		t.Logf("held-out seeds 2001–%d, %s:\n%s", 2000+n, r.name, sb.String())
		t.Logf("%s: %d stars; rotation within 10%% in %d (%.0f%%); non-planetary signals planet-like %d of %d (%.1f%%); planets planet-like %d of %d (%.1f%%)",
			r.name, r.t.stars, r.t.rotOK, pct(r.t.rotOK, r.t.stars), r.t.falsePl, r.t.nonPl, pct(r.t.falsePl, r.t.nonPl), r.t.recalled, r.t.planets, pct(r.t.recalled, r.t.planets))
	}
	if pct(with.falsePl, with.nonPl) > pct(without.falsePl, without.nonPl) {
		t.Errorf("the light curve raised the false-planet rate")
	}
}
