package activity

import (
	"context"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spotsift/rvfit/rvtest"
)

// keckPlanets are Keck/HIRES stars of ../shared/realdata/keck-hires with
// planets whose periods (days) are published (from memory, with the
// discovery papers): HD 209458 b (Charbonneau et al. 2000; Henry et al.
// 2000), HIP 14810 b and c (Wright et al. 2007), HD 156846 b (e = 0.85;
// Tamuz et al. 2008), HD 134987 b (Vogt et al. 2000), HD 177830 b (Vogt et
// al. 2000) and c (Meschiari et al. 2011), HD 108874 b and c (Vogt et al.
// 2005), HD 11964 c (Wright et al. 2009; b, near 1950 d, is too long for
// these RVs to judge), HD 141399 b and c (Vogt et al. 2014), HD 99492 b
// (Marcy et al. 2005), HD 34445 b (Howard et al. 2010), HD 31253 b (Meschiari et al. 2011), HD 147506 b
// (HAT-P-2 b; Bakos et al. 2007), HIP 57050 b (Haghighipour et al. 2010),
// HD 179079 b (Valenti et al. 2009; its 1-day alias near 1.07 d is
// rejected only with the activity modelled, docs/methods.md §14.6).
// HD 192310 b (74.7 d; Howard et al. 2011) is left out: these RVs alone
// do not reject its 1-day alias at 0.984 d (it fits as well), which would
// sit at P_rot/2 of a 1.86 d rotation hypothesis drawn from a weak S-index
// peak, so it stays inconclusive.
var keckPlanets = []struct {
	file    string
	periods []float64
}{
	{"HD209458", []float64{3.5247}},
	{"HIP14810", []float64{6.674, 147.7}},
	{"HD156846", []float64{359.5}},
	{"HD134987", []float64{258.2}},
	{"HD177830", []float64{406.6, 110.9}},
	{"HD108874", []float64{395.4, 1680}},
	{"HD11964A", []float64{37.9}},
	{"HD141399", []float64{94.4, 202.1}},
	{"HD99492", []float64{17.05}},
	{"HD179079", []float64{14.48}},
	{"HD34445", []float64{1049}},
	{"HD31253", []float64{466}},
	{"HD147506", []float64{5.633}},
	{"HIP57050", []float64{41.4}},
}

// foundPlanetLike reports whether a signal within the frequency
// resolution 1/T of period p is planet-like: a published planet found
// blind and judged so.
func foundPlanetLike(sigs []Signal, p, T float64) bool {
	for _, sg := range sigs {
		if math.Abs(1/float64(sg.Period)-1/p) < 1/T && sg.Verdict == PlanetLike {
			return true
		}
	}
	return false
}

// TestKeckPlanetsBlind: the published planets of fourteen Keck/HIRES
// stars, from their files as published, blind and without star files
// (one instrument label per zero-point era, as readVels gives): each must
// be found, within the frequency resolution 1/T of its published period,
// and judged planet-like. Before the eighth pass of 4 Dec 2026 two of the
// seventeen were not: HD 156846 b (its harmonics were found instead) and
// HD 99492 b (barred through the 1-day alias of P_rot/2 of a 1.78 d
// rotation hypothesis, a weak S-index peak, though the data reject that
// alias by Δχ² ≈ 100); HD 179079 b, added in the ninth pass, was not
// before it (its 1-day alias, weighed without the activity modelled).
func TestKeckPlanetsBlind(t *testing.T) {
	if os.Getenv("SPOTSIFT_LONG") == "" {
		t.Skip("fourteen real stars take a minute or two; set SPOTSIFT_LONG=1 to run them")
	}
	dir := filepath.Join(rvtest.RealDataDir(t), "keck-hires")
	for _, st := range keckPlanets {
		t.Run(st.file, func(t *testing.T) {
			s := readVels(t, filepath.Join(dir, st.file+"_KECK.vels"))
			dg, err := Diagnose(context.Background(), s, &Options{Seed: 1})
			if err != nil {
				t.Fatal(err)
			}
			T := float64(dg.Baseline)
			var got []string
			for _, sg := range dg.Signals {
				got = append(got, fmt.Sprintf("%.5g d %s (P(planet) %s)", float64(sg.Period), sg.Verdict, fmtProb(float64(sg.Probability))))
			}
			for _, p := range st.periods {
				if !foundPlanetLike(dg.Signals, p, T) {
					t.Errorf("%s: the published planet at %g d is not found planet-like (signals: %s)", st.file, p, strings.Join(got, "; "))
				}
			}
			t.Logf("%s: %s", st.file, strings.Join(got, "; "))
		})
	}
}
