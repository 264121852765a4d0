package activity

import (
	"context"
	"math"
	"math/rand/v2"
	"path/filepath"
	"testing"

	"spotsift/rvfit"
	"spotsift/rvfit/rvtest"
)

// clusteredNights samples a strong sinusoid the way a short campaign
// does: a few nights over about four months, twelve visits in four hours
// each, 0.6 m/s errors. A signal of K = 55 m/s (K/σ about 90 per visit)
// then has a periodogram peak so sharp that the grid's interpolated
// maximum is off by a fraction of a grid step, enough to leave a residual
// far above the noise.
func clusteredNights(seed uint64, k, p float64) *rvfit.Series {
	rng := rand.New(rand.NewPCG(seed, 11))
	s := &rvfit.Series{Name: "campaign"}
	for _, night := range []float64{0, 17, 55, 57, 89, 93, 114} {
		start := 0.6 + 0.2*rng.Float64()
		for v := 0; v < 12; v++ {
			t := 2456450 + night + start + 0.015*float64(v) + 0.002*rng.Float64()
			s.Time = append(s.Time, t)
			s.RV = append(s.RV, k*math.Sin(2*math.Pi*t/p+0.7)+0.6*rng.NormFloat64())
			s.RVErr = append(s.RVErr, 0.6)
			s.Instrument = append(s.Instrument, "SOUTH-2")
		}
	}
	return s
}

// TestBlindSearchRefinesStrongSignal: the blind search finds the strong
// signal once, at its period (within a tenth of the resolution), not as
// two signals within one resolution element of each other, and the alias
// check does not find its aliases as probable as the period.
func TestBlindSearchRefinesStrongSignal(t *testing.T) {
	const p = 4.2308
	for _, seed := range []uint64{1, 2, 3} {
		s := clusteredNights(seed, 55, p)
		dg, err := Diagnose(context.Background(), s, &Options{SkipModels: true, Seed: seed})
		if err != nil {
			t.Fatal(err)
		}
		if len(dg.Signals) == 0 {
			t.Fatalf("seed %d: no signal found", seed)
		}
		T := float64(dg.Baseline)
		sg := dg.Signals[0]
		if df := math.Abs(float64(sg.Freq) - 1/p); df > 0.1/T {
			t.Errorf("seed %d: found at %.5f d, %.2f resolution elements from %.4f d", seed, float64(sg.Period), df*T, p)
		}
		for _, o := range dg.Signals[1:] {
			if math.Abs(float64(o.Freq)-float64(sg.Freq)) <= 1/T {
				t.Errorf("seed %d: a second signal at %.5f d, within the resolution of the first (%.5f d)", seed, float64(o.Period), float64(sg.Period))
			}
		}
		if e := evidence(&sg, "period_alias"); e != nil {
			t.Errorf("seed %d: %s", seed, e.Reason)
		}
	}
}

// TestAliasCheckLeavesOutTwin: a second frequency within the resolution
// of the first (a given period quoted twice, or a split peak) would keep
// the signal at its period while its alias is tried, and every alias would
// fit as well as the period. The alias check leaves it out: the aliases
// weigh as they do without it.
func TestAliasCheckLeavesOutTwin(t *testing.T) {
	const p = 4.2308
	s := clusteredNights(1, 55, p)
	o := (&Options{Periods: []float64{p}, SkipModels: true, Seed: 1}).withDefaults()
	d, err := newData(context.Background(), s, o)
	if err != nil {
		t.Fatal(err)
	}
	f := d.refineGiven([]float64{1 / p})[0]
	win := d.samplingPeaks()
	best := func(freqs []float64) float64 {
		t.Helper()
		base, err := fitSines(d.t, d.rv, d.err, d.inst, d.ninst, freqs, d.t0)
		if err != nil {
			t.Fatal(err)
		}
		_, beta := d.jointSignificance(freqs)
		m := math.Inf(1)
		for _, r := range d.aliasCandidates(base, freqs, 0, win, beta[0]) {
			m = math.Min(m, r.odds())
		}
		return m
	}
	alone := best([]float64{f})
	if !(alone > 100) {
		t.Fatalf("alone, the likeliest alias is at %.1f in −2 ln odds; the case needs a clear period", alone)
	}
	if twin := best([]float64{f, f + 0.02/d.T}); !(math.Abs(twin-alone) < 0.1*alone) {
		t.Errorf("with a twin 0.02/T away, the likeliest alias is at %.1f in −2 ln odds (alone %.1f)", twin, alone)
	}
}

// Test51PegBlind: 51 Peg's 90 HARPS RVs on 7 nights (Martins et al. 2015;
// read as published, in km/s by their uncertainties) hold one signal, 51
// Peg b at 4.2308 d (K ≈ 56 m/s, from memory). Blind, the search must find
// it once, within a tenth of the resolution of its published period, with
// K within 10 % of 56 m/s, and judge it planet-like.
func Test51PegBlind(t *testing.T) {
	dir := rvtest.RealDataDir(t)
	s, _, err := rvfit.ReadTable(filepath.Join(dir, "51peg-harps", "51pegrv.txt"), nil)
	if err != nil {
		t.Fatal(err)
	}
	dg, err := Diagnose(context.Background(), s, &Options{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	T := float64(dg.Baseline)
	var found int
	for _, sg := range dg.Signals {
		if math.Abs(float64(sg.Freq)-1/4.2308) > 1/T {
			continue
		}
		found++
		if df := math.Abs(float64(sg.Freq) - 1/4.2308); df > 0.1/T || math.Abs(float64(sg.K)/56-1) > 0.1 || sg.Verdict != PlanetLike {
			t.Errorf("51 Peg b: P = %.5f d (%.2f resolution elements off), K = %.1f m/s, %s: %s", float64(sg.Period), df*T, float64(sg.K), sg.Verdict, sg.Summary)
		}
	}
	if found != 1 {
		t.Errorf("51 Peg b found %d times within the resolution of 4.2308 d (signals: %d)", found, len(dg.Signals))
	}
}
