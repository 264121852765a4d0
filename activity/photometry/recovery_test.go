package photometry_test

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"testing"

	"spotsift/activity/photometry"
	"spotsift/activity/starsim"
)

// recoverySetting is a generator setting of the recovery sample.
type recoverySetting struct {
	name string
	// Spot lifetimes in turns, drawn uniformly.
	lifeMin, lifeMax float64
	// The light curve's gaps: sectors of sectorLen days separated by
	// sectorGap days, the fraction outages lost in half-day runs, and
	// the RV seasons (days per year the star is observable).
	sectorLen, sectorGap, outages, season float64
}

var (
	// settingSpace: long-lived spots, 27-day sectors with 1-day gaps, 10%
	// outages, 240-day seasons (the setting the methods were developed on).
	settingSpace = recoverySetting{"space-like: spots living 2–10 turns, 27-d sectors, 10% outages, 240-d seasons", 2, 10, 27, 1, 0.1, 240}
	// settingOther: shorter-lived spots, 13.7-day orbits with 1-day gaps,
	// 25% outages and 180-day seasons (never used for development).
	settingOther = recoverySetting{"other: spots living 1.5–5 turns, 13.7-d orbits, 25% outages, 180-d seasons", 1.5, 5, 13.7, 1, 0.25, 180}
)

// recoveryStar draws star k of the recovery sample: rotation log-uniform in
// 1–100 d, isotropic inclination, spots emerging at 1–6 per turn with the
// setting's lifetimes, no or two active longitudes, photometric noise
// 2×10⁻⁴ to 2×10⁻³, and a light curve with the setting's gaps over
// max(6 P, 80) days, at most 700. Regions that live under a turn (as on
// the Sun) leave no period to find.
func recoveryStar(t testing.TB, set recoverySetting, seed uint64, k int) (P float64, lc *starsim.LightCurve) {
	rng := rand.New(rand.NewPCG(seed, uint64(k)))
	P = math.Exp(rng.Float64() * math.Log(100))
	span := math.Min(math.Max(6*P, 80), 700)
	sc := &starsim.Scenario{
		Name: fmt.Sprintf("recovery-%d", k),
		Star: starsim.Star{RotationPeriod: P, VEq: 2 * math.Pi * 696000 / (P * 86400), DiffRotation: 0.1,
			Inclination: math.Acos(rng.Float64()) * 180 / math.Pi},
		Activity: starsim.Activity{EmergenceRate: (1 + 5*rng.Float64()) / P, Lifetime: set.lifeMin + (set.lifeMax-set.lifeMin)*rng.Float64(),
			SpotArea: 0.002 + 0.008*rng.Float64(), ActiveLongitudes: 2 * rng.IntN(2)},
		Observing: starsim.Observing{Start: 1000, End: 1000 + span, Step: span / 12, SeasonLength: set.season},
		Spectrum:  starsim.SpectrumPlan{Pixels: 20000, LambdaMin: 3850, LambdaMax: 4050, Lines: 50},
	}
	res, err := starsim.Simulate(sc, seed+uint64(k), &starsim.Options{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	noise := 2e-4 * math.Pow(10, rng.Float64())
	// Cadence: 30 minutes, or P/150 for slow rotators (ground-based
	// monitoring of them samples a few times a night).
	lc, err = res.LightCurve(&starsim.Photometry{Noise: noise, Cadence: math.Max(1.0/48, P/150),
		SectorLength: set.sectorLen, SectorGap: set.sectorGap, Outages: set.outages})
	if err != nil {
		t.Fatal(err)
	}
	return P, lc
}

// modulationSigma is how many σ the spots' modulation stands above the
// noise: the standard deviation of the noise-free flux against the noise
// of a bin a tenth of the rotation period long.
func modulationSigma(lc *starsim.LightCurve, P float64) float64 {
	var m, s float64
	for _, f := range lc.TrueFlux {
		m += f
	}
	m /= float64(len(lc.TrueFlux))
	for _, f := range lc.TrueFlux {
		s += (f - m) * (f - m)
	}
	sd := math.Sqrt(s / float64(len(lc.TrueFlux)))
	cadence := (lc.Time[len(lc.Time)-1] - lc.Time[0]) / float64(len(lc.Time))
	nBin := math.Max(1, P/10/cadence)
	return sd / (lc.Err[0] / math.Sqrt(nBin))
}

// TestRotationRecovery: over simulated stars with rotation 1–100 d and
// realistic gaps, the rotation period is recovered within 10% in at least
// 90% of the stars whose spots give a modulation of 5σ or more (the
// issue's requirement); confusions with P/2 and 2P are counted and
// reported. The methods were developed on setting settingSpace, seed 2.
// With SPOTSIFT_LONG=1 the 90% is asserted on 120 stars of each
// setting with seeds never used for development (settingSpace seed 3,
// settingOther seed 4); the default run of 24 stars (settingSpace seed 1)
// is a smoke test at 80%, as 24 stars cannot tell 88% from 92%.
func TestRotationRecovery(t *testing.T) {
	type run struct {
		set  recoverySetting
		seed uint64
		n    int
		want float64
	}
	runs := []run{{settingSpace, 1, 24, 0.8}}
	if testing.Short() {
		runs[0].n = 10
	}
	if os.Getenv("SPOTSIFT_LONG") == "1" {
		runs = []run{{settingSpace, 3, 120, 0.9}, {settingOther, 4, 120, 0.9}}
	}
	for _, rn := range runs {
		recovery(t, rn.set, rn.seed, rn.n, rn.want)
	}
}

func recovery(t *testing.T, set recoverySetting, seed uint64, n int, want float64) {
	var eligible, ok, half, double, none, other, weak int
	for k := 0; k < n; k++ {
		P, slc := recoveryStar(t, set, seed, k)
		if modulationSigma(slc, P) < 5 {
			weak++
			continue
		}
		eligible++
		lc := &photometry.LightCurve{Name: "sim", Time: slc.Time, Flux: slc.Flux, Err: slc.Err, Sector: slc.Sector}
		r, err := photometry.EstimateRotation(lc, nil)
		if err != nil {
			t.Fatal(err)
		}
		rel := func(q float64) bool { return math.Abs(r.Period-q) <= 0.1*q }
		switch {
		case !r.Detected:
			none++
		case rel(P):
			ok++
		case rel(P / 2):
			half++
		case rel(2 * P):
			double++
		default:
			other++
		}
		if r.Detected && !rel(P) || !r.Detected {
			t.Logf("star %d: P = %.2f d, got %.3g (%s; %s), modulation %.0fσ", k, P, r.Period, r.Method, r.Agreement, modulationSigma(slc, P))
		}
	}
	frac := float64(ok) / float64(eligible)
	t.Logf("%s, seed %d: %d stars, %d with ≥ 5σ modulation: %d within 10%% (%.0f%%), %d at P/2, %d at 2P, %d elsewhere, %d not detected; %d below 5σ left out",
		set.name, seed, n, eligible, ok, 100*frac, half, double, other, none, weak)
	if eligible < n/2 {
		t.Errorf("only %d of %d stars have a 5σ modulation: the sample is too weak to test", eligible, n)
	}
	if frac < want {
		t.Errorf("%s: recovered within 10%% in %.0f%% of the stars, want ≥ %.0f%%", set.name, 100*frac, 100*want)
	}
}
