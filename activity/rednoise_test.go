package activity

import (
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"testing"

	"spotsift/rvfit"
)

// seasonSeries returns seasons of 150 nights (a share keep of them
// observed, one RV a night with 1.5 m/s errors) of the RVs rv(t) beside a
// flat S-index: the data of TestRedNoiseDrifts.
func seasonSeries(seed uint64, seasons int, keep float64, rv func(float64) float64) *rvfit.Series {
	rng := rand.New(rand.NewPCG(seed, 7))
	s := &rvfit.Series{Name: fmt.Sprintf("seasons %d", seed)}
	ind := rvfit.Indicator{Name: "s_index"}
	for k := 0; k < seasons; k++ {
		for night := 0.0; night < 150; night++ {
			if rng.Float64() > keep {
				continue
			}
			ti := 2460000 + 365*float64(k) + night + 0.05*rng.NormFloat64()
			s.Time = append(s.Time, ti)
			s.RV = append(s.RV, rv(ti)+1.5*rng.NormFloat64())
			s.RVErr, s.Instrument = append(s.RVErr, 1.5), append(s.Instrument, "NORTH-1")
			ind.Value, ind.Err = append(ind.Value, 0.2+0.005*rng.NormFloat64()), append(ind.Err, 0.005)
		}
	}
	s.Indicators = []rvfit.Indicator{ind}
	return s
}

// randomWalk returns a random walk of steps of 0.5 m/s a day over days
// days, as a function of time.
func randomWalk(seed uint64, days int) func(float64) float64 {
	rng := rand.New(rand.NewPCG(seed, 9))
	walk := make([]float64, days)
	for d := 1; d < len(walk); d++ {
		walk[d] = walk[d-1] + 0.5*rng.NormFloat64()
	}
	return func(t float64) float64 { return walk[int(t-2460000)] }
}

// TestRedNoiseDrifts is a diagnostic tool, run with SPOTSIFT_REDNOISE=1
// (SPOTSIFT_REDNOISE=evidence prints the evidence too): random walks in
// the RVs (steps of 0.5 m/s a day, 1.5 m/s errors, no period at all)
// beside a flat S-index, over three or five seasons of 150 nights, judged
// blind with the star file of a 25 d rotator and without one. Every signal
// it finds is non-planetary; it prints those that come out planet-like and
// the counts per setting. (Fourteenth pass, 5 Dec: with the star file 4
// of 6 realisations over three seasons and 3 of 8 over five gave a
// planet-like signal; without it, 0 of 6 and 1 of 8, and 0 of 6 and 2 of 8
// since the sixteenth pass compares slow signals when no rotation is
// known. A red-noise term in the model comparison, tried in the
// fifteenth and kept in the sixteenth for those slow signals alone, is in
// docs/methods.md §14.10.)
func TestRedNoiseDrifts(t *testing.T) {
	if os.Getenv("SPOTSIFT_REDNOISE") == "" {
		t.Skip("a diagnostic tool; set SPOTSIFT_REDNOISE=1 to run it")
	}
	for _, c := range []struct {
		seasons, seeds int
		keep           float64 // share of the nights observed
		star           *Star
	}{
		{3, 6, 0.5, star25}, {3, 6, 0.5, nil}, {5, 8, 0.3, star25}, {5, 8, 0.3, nil},
	} {
		hit := 0
		for seed := uint64(1); seed <= uint64(c.seeds); seed++ {
			s := seasonSeries(seed, c.seasons, c.keep, randomWalk(seed, 365*c.seasons))
			dg, err := Diagnose(context.Background(), s, &Options{Seed: 3, Star: c.star})
			if err != nil {
				t.Fatal(err)
			}
			any := false
			for _, sg := range dg.Signals {
				if sg.Verdict == PlanetLike {
					any = true
					t.Logf("%d seasons, star file %v, walk %d: %.4g d planet-like (score %+.3f, %.1f cycles in the data)", c.seasons, c.star != nil, seed, float64(sg.Period), sg.Score, float64(dg.Baseline)/float64(sg.Period))
					if os.Getenv("SPOTSIFT_REDNOISE") == "evidence" {
						for _, e := range sg.Evidence {
							t.Logf("    %-28s %+.3f %s", e.Name, e.Weight, e.Reason)
						}
					}
				}
			}
			if any {
				hit++
			}
		}
		t.Logf("%d seasons, star file %v: %d of %d random walks gave a planet-like signal", c.seasons, c.star != nil, hit, c.seeds)
	}
}
