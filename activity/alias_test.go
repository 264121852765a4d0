package activity

import (
	"context"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"spotsift/rvfit"
)

// TestAliasRival: nightly sampling puts a 15.46 d signal's 1-day alias at
// 1/(1.0027379 − 1/15.46) ≈ 1.069 d (sidereal day, common practice).
// Judged at the alias, the signal must be flagged as ambiguous, with the
// true period found fitting better; judged at its own period with a
// strong signal, no alias comes close. A weak signal (K/σ_K about 3) at its
// own period is ambiguous: its 1-day alias fits nearly as well.
func TestAliasRival(t *testing.T) {
	const p = 15.46
	alias := 1 / (1.0027379 - 1/p)
	diag := func(amp float64, period float64) *Signal {
		t.Helper()
		s := synth(5, 1, sine(amp, p, 0.3), nil, nil)
		dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{period}, SkipModels: true, Seed: 5})
		if err != nil {
			t.Fatal(err)
		}
		return &dg.Signals[0]
	}
	sg := diag(5, alias)
	e := evidence(sg, "period_alias")
	if e == nil || !strings.Contains(sg.Caveat, "ambiguous") || sg.Verdict == PlanetLike {
		t.Fatalf("judged at the alias %.4f d: caveat %q, verdict %s, alias evidence %+v", alias, sg.Caveat, sg.Verdict, e)
	}
	if !(float64(e.Value) < 0) || !strings.Contains(e.Reason, "15.4") {
		t.Errorf("the true period should fit better: %s", e.Reason)
	}
	if e := evidence(diag(5, p), "period_alias"); e != nil {
		t.Errorf("a strong signal at its own period: %s", e.Reason)
	}
	// K/σ_K = amp/sqrt(2/N) ≈ 3 for N ≈ 195 epochs.
	weak := diag(0.3, p)
	if e := evidence(weak, "period_alias"); e == nil || math.IsNaN(float64(e.Value)) {
		t.Errorf("a weak signal under nightly sampling: no alias rival (verdict %s, caveat %q)", weak.Verdict, weak.Caveat)
	}
}

// TestAliasPeriodPrior: with a prior uniform in ln P, the 1-day alias of
// a 15.46 d signal at 1.07 d starts 2 ln(15.46/1.07) ≈ 5.3 behind in
// −2 ln odds. A signal (K/σ_K about 4) whose alias fits only 2–9.2 worse
// in χ² is therefore no longer ambiguous at its own period, while judged
// at the alias the true period stays the likelier one, its prior term
// counted with the opposite sign.
func TestAliasPeriodPrior(t *testing.T) {
	const p = 15.46
	alias := 1 / (1.0027379 - 1/p)
	if got, want := aliasPrior(1/p, 1/alias), 2*math.Log(p/alias); math.Abs(got-want) > 1e-12 || math.Abs(want-5.3) > 0.05 {
		t.Fatalf("aliasPrior = %.4f, want 2 ln(%.2f/%.4f) = %.4f ≈ 5.3", got, p, alias, want)
	}
	s := synth(5, 1, sine(0.4, p, 0.3), nil, nil)
	o := (&Options{Periods: []float64{p}, SkipModels: true, Seed: 5}).withDefaults()
	d, err := newData(context.Background(), s, o)
	if err != nil {
		t.Fatal(err)
	}
	freqs := d.refineGiven([]float64{1 / p})
	base, err := fitSines(d.t, d.rv, d.err, d.inst, d.ninst, freqs, d.t0)
	if err != nil {
		t.Fatal(err)
	}
	_, beta := d.jointSignificance(freqs)
	win := d.samplingPeaks()
	// The likelihood alone leaves the 1-day alias within reach: its Δχ²
	// is below the limit, so only the prior keeps the period unambiguous.
	found := false
	for _, r := range d.aliasCandidates(base, freqs, 0, win, beta[0]) {
		if math.Abs(r.freq-1/alias) < 2/d.T {
			found = true
			if !(r.dchi > 2 && r.dchi < aliasAmbiguityLimit && r.odds() >= aliasAmbiguityLimit) {
				t.Errorf("the alias at %.4f d: Δχ² %+.1f and prior %+.1f; the case needs Δχ² between 2 and %.1f and their sum above it", 1/r.freq, r.dchi, r.prior, aliasAmbiguityLimit)
			}
		}
	}
	if !found {
		t.Fatalf("the 1-day alias at %.4f d was not weighed", alias)
	}
	if r := d.aliasRivals(base, freqs, 0, win, beta[0]); r != nil {
		t.Errorf("at its own period: the %s at %.4g d is a rival (Δχ² %+.1f, prior %+.1f)", r.label, 1/r.freq, r.dchi, r.prior)
	}
	dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{alias}, SkipModels: true, Seed: 5})
	if err != nil {
		t.Fatal(err)
	}
	sg := &dg.Signals[0]
	if e := evidence(sg, "period_alias"); e == nil || !(float64(e.Value) < 0) || !strings.Contains(e.Reason, "-5.3 from a period prior") || !strings.Contains(sg.Caveat, "ambiguous") {
		t.Errorf("judged at the alias %.4f d: caveat %q, alias evidence %+v", alias, sg.Caveat, e)
	}
}

// TestRotationWindowDifferentialRotation: a star file gives P_rot = 25 ±
// 0.25 d, measured from spots at some latitude; a signal 7 % faster is
// within the spread of the star's spot rotation periods (differential
// rotation) and must match the rotation, though it lies 1.4 resolution
// elements and 11 errors of P_rot away.
func TestRotationWindowDifferentialRotation(t *testing.T) {
	p := 25 / 1.07
	s := synth(9, 1, sine(6, p, 0.2), nil, nil)
	star := &Star{Name: "Tessal-4", RotationPeriod: 25, RotationPeriodErr: 0.25}
	dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{p}, Star: star, SkipModels: true, Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	sg := dg.Signals[0]
	e := evidence(&sg, "rotation_match")
	if e == nil || e.Points != TowardActivity || sg.Caveat == "" || sg.Verdict == PlanetLike {
		t.Fatalf("a signal at %.3f d with P_rot = 25 d: verdict %s, caveat %q, rotation match %+v", p, sg.Verdict, sg.Caveat, e)
	}
	// Far outside the spread (P_rot/1.3), the period is unrelated.
	q := 25 / 1.3
	s = synth(9, 1, sine(6, q, 0.2), nil, nil)
	dg, err = Diagnose(context.Background(), s, &Options{Periods: []float64{q}, Star: star, SkipModels: true, Seed: 9})
	if err != nil {
		t.Fatal(err)
	}
	if e := evidence(&dg.Signals[0], "rotation_match"); e == nil || e.Points != TowardPlanet {
		t.Errorf("a signal at %.3f d with P_rot = 25 d: rotation match %+v", q, e)
	}
}

// TestRotationMatchPrefersHarmonic: with P_rot = 9 ± 0.2 d from a star
// file, a signal at 1/(3/9 + 0.0025) ≈ 2.978 d lies inside the windows of
// both P_rot/3 (3 d) and its 1-year alias (1/(3/9 + 1/365.25) ≈ 2.976 d),
// a little nearer the alias. It is the third harmonic itself: a harmonic
// explains a period before an alias of it does, and the model comparison
// then weighs it against activity at that harmonic (the rotation kernel
// with a mode at the signal's period), not against a kernel with no
// power there.
func TestRotationMatchPrefersHarmonic(t *testing.T) {
	p := 1 / (3.0/9 + 0.0025)
	s := synth(4, 1, sine(4, p, 0.3), nil, nil)
	star := &Star{Name: "Orvell-2", RotationPeriod: 9, RotationPeriodErr: 0.2}
	dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{p}, Star: star, Seed: 4})
	if err != nil {
		t.Fatal(err)
	}
	sg := dg.Signals[0]
	e := evidence(&sg, "rotation_match")
	if e == nil || e.Points != TowardActivity || !strings.Contains(e.Reason, "at P_rot/3 of") {
		t.Fatalf("a signal at %.4f d with P_rot = 9 d: rotation match %+v", p, e)
	}
	if mc := evidence(&sg, "model_comparison"); mc == nil || !strings.Contains(mc.Reason, "mode at the signal's period (near P_rot/3)") {
		t.Errorf("at P_rot/3 the model comparison's activity model needs a mode there: %+v", mc)
	}
}

// TestFastRotatorAliasWindow: a star file gives P_rot = 2.4 ± 0.24 d. The
// 1-day alias of P_rot/2 lies at 1.0027 − 2/2.4 ≈ 0.169 c/d, and the
// harmonic's error (±0.18 c/d with differential rotation, twice the
// error) spans every period beyond about 2.9 d there. A planet at 16.8 d
// is inside that window, which weighs nothing, and its own 1-day alias
// (1.06 d) lies within the periods searched (from 1.05 d), where the alias
// check weighs it: no bar. At 38 d the 1-day alias (1.027 d) lies beyond
// them, and is weighed from the signal's own data: these nights spread
// over several hours of clock time, the alias fits far worse, and there
// is no bar either. A planet at P_rot/2 itself stays barred.
func TestFastRotatorAliasWindow(t *testing.T) {
	star := &Star{Name: "Quill-7", RotationPeriod: 2.4, RotationPeriodErr: 0.24}
	for _, c := range []struct {
		p      float64
		barred bool
	}{{16.8, false}, {38, false}, {1.2, true}} {
		s := synth(6, 1, sine(5, c.p, 0.4), nil, nil)
		dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{c.p}, Star: star, SkipModels: true, Seed: 6})
		if err != nil {
			t.Fatal(err)
		}
		sg := dg.Signals[0]
		e := evidence(&sg, "rotation_match")
		if e == nil {
			t.Fatalf("%g d: no rotation match", c.p)
		}
		if got := strings.Contains(sg.Caveat, "rotation hypothesis"); got != c.barred {
			t.Errorf("%g d: barred by the rotation = %v, want %v (caveat %q; %s)", c.p, got, c.barred, sg.Caveat, e.Reason)
		}
	}
}

// TestFastRotatorAliasUnresolved: the planet at 38 d of
// TestFastRotatorAliasWindow, observed once a night at the same sidereal
// time, cannot be told from its 1-day alias at 1.027 d, which would put
// it at P_rot/2 of the 2.4 d rotation: the data do not reject that alias,
// and the bar stays.
func TestFastRotatorAliasUnresolved(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 3))
	s := &rvfit.Series{Name: "same-sidereal-time"}
	for n := 0; n < 400; n++ {
		if rng.Float64() > 0.3 {
			continue
		}
		ti := 2458000.3 + float64(n)/siderealFreq
		s.Time = append(s.Time, ti)
		s.RV = append(s.RV, 5*math.Sin(2*math.Pi*ti/38+0.4)+rng.NormFloat64())
		s.RVErr = append(s.RVErr, 1)
		s.Instrument = append(s.Instrument, "NORTH-1")
	}
	star := &Star{Name: "Quill-7", RotationPeriod: 2.4, RotationPeriodErr: 0.24}
	dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{38}, Star: star, SkipModels: true, Seed: 6})
	if err != nil {
		t.Fatal(err)
	}
	sg := dg.Signals[0]
	if !strings.Contains(sg.Caveat, "P_rot/2 of the rotation hypothesis") {
		t.Errorf("38 d seen at one sidereal time each night: caveat %q, want the bar of P_rot/2's 1-day alias (%s)", sg.Caveat, evidence(&sg, "rotation_match").Reason)
	}
}

// TestGPDegenerateShare: of three rotation hypotheses, only the one at
// 57.48 d (51 % of the share) puts a 20.42 d period at a harmonic the GP
// cannot tell from an orbit (P_rot/3 = 19.16 d, within its window); the
// 30.56 d hypothesis leaves it clear, and the 105.3 d one reaches it only
// through an alias. The model comparison's pull toward a planet then
// counts for the other 49 %, not for nothing. With that one hypothesis
// alone, the comparison's activity model has a mode at the signal's
// period instead (gpModel.mode).
func TestGPDegenerateShare(t *testing.T) {
	s := synth(3, 1, sine(3, 20.42, 0.1), nil, nil)
	d, err := newData(context.Background(), s, (&Options{}).withDefaults())
	if err != nil {
		t.Fatal(err)
	}
	rot := Rotation{Period: 57.48, Err: 3.4, Source: "joint periodogram of the indicators", Hypotheses: []RotationHypothesis{
		{Period: 57.48, Err: 3.4, Share: 0.51}, {Period: 30.56, Err: 2.5, Share: 0.32}, {Period: 105.3, Err: 12, Share: 0.17}}}
	tr := &trial{d: d, f: 1 / 20.42, rot: rot}
	tr.rotationMatch()
	if math.Abs(tr.gpDegenerate-0.51) > 1e-12 {
		t.Fatalf("degenerate share %g, want 0.51 (%+v)", tr.gpDegenerate, tr.ev)
	}
	if tr.caveat != "" {
		t.Errorf("P_rot/3 must not bar a planet-like verdict: %q", tr.caveat)
	}
	if tr.gpHarmonic != 0 {
		t.Errorf("three hypotheses: the model comparison got a mode at P_rot/%d", tr.gpHarmonic)
	}
	// One hypothesis at P_rot/3: the comparison's activity model gets a
	// mode at the signal's period instead of taking no side.
	tr = &trial{d: d, f: 1 / 20.42, rot: Rotation{Period: 57.48, Err: 3.4, Source: starFileSource, Hypotheses: []RotationHypothesis{{Period: 57.48, Err: 3.4, Share: 1}}}}
	tr.rotationMatch()
	if tr.gpDegenerate != 0 || tr.gpHarmonic != 3 {
		t.Errorf("one hypothesis at P_rot/3: degenerate share %g and harmonic %d, want 0 and 3", tr.gpDegenerate, tr.gpHarmonic)
	}
	// At P_rot/2 the kernel has a mode already, and a sinusoid fits the
	// coherent part of the activity as well as an orbit: no side.
	tr = &trial{d: d, f: 2 / 57.48, rot: Rotation{Period: 57.48, Err: 3.4, Source: starFileSource, Hypotheses: []RotationHypothesis{{Period: 57.48, Err: 3.4, Share: 1}}}}
	tr.rotationMatch()
	if tr.gpDegenerate != 1 || tr.gpHarmonic != 0 {
		t.Errorf("one hypothesis at P_rot/2: degenerate share %g and harmonic %d, want 1 and 0", tr.gpDegenerate, tr.gpHarmonic)
	}
}
