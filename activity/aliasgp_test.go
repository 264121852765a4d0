package activity

import (
	"context"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"spotsift/gp"
	"spotsift/rvfit"
)

// aliasStar is a star whose activity (a draw of the rotation kernel at
// 23 d, several m/s) dwarfs its 1 m/s errors, with a planet of K = 2.5 m/s
// at 6.3 d, seen once a night on 90 of 200 nights within ±spread days of
// one sidereal time.
func aliasStar(seed uint64, spread float64) (*rvfit.Series, *Star) {
	rng := rand.New(rand.NewPCG(seed, 31))
	var t []float64
	for n := 0; n < 200; n++ {
		if rng.Float64() < 0.45 {
			t = append(t, 2459000.2+float64(n)/siderealFreq+spread*(2*rng.Float64()-1))
		}
	}
	v := make([]float64, len(t))
	for i := range v {
		v[i] = 1
	}
	sol, err := gp.NewSemisep(gp.RotationSHO{Amp: 6, Period: 23, Quality: 2, QualityGap: 5, Mix: 0.5}, t, v)
	if err != nil {
		panic(err)
	}
	act, err := sol.Draw(nil, rng)
	if err != nil {
		panic(err)
	}
	s := &rvfit.Series{Name: "Tessary-4"}
	for i, ti := range t {
		s.Time = append(s.Time, ti)
		s.RV = append(s.RV, act[i]+2.5*math.Sin(2*math.Pi*ti/6.3+0.7))
		s.RVErr = append(s.RVErr, 1)
		s.Instrument = append(s.Instrument, "NORTH-1")
	}
	return s, &Star{Name: "Tessary-4", RotationPeriod: 23, RotationPeriodErr: 2}
}

// TestAliasWithActivityModelled: on an active star the white-noise
// sinusoid fits scale every Δχ² by the residual scatter, which the
// activity inflates, so the 6.3 d planet's 1-day alias near 1.19 d looks
// about as good; with the activity modelled by the GP, the nights'
// spread of ±0.15 d in sidereal time is enough to reject it, and the
// period stands. Within ±0.005 d of one sidereal time the alias is not
// resolved, GP or not, and stays a rival.
func TestAliasWithActivityModelled(t *testing.T) {
	judge := func(spread float64, skip bool) *Signal {
		t.Helper()
		s, star := aliasStar(4, spread)
		dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{6.3}, Star: star, SkipModels: skip, SingleOutput: true, Seed: 4})
		if err != nil {
			t.Fatal(err)
		}
		return &dg.Signals[0]
	}
	white := judge(0.15, true)
	if !strings.Contains(white.Caveat, "1-day alias") {
		t.Fatalf("white-noise fits alone: caveat %q, want the 1-day alias as a rival (%+v)", white.Caveat, evidence(white, "period_alias"))
	}
	sg := judge(0.15, false)
	e := evidence(sg, "period_alias")
	if strings.Contains(sg.Caveat, "ambiguous") || e == nil || !strings.Contains(e.Reason, "the period stands") || !(float64(e.Value) >= aliasAmbiguityLimit) {
		t.Errorf("with the GP: caveat %q, alias evidence %+v; want the alias rejected", sg.Caveat, e)
	} else {
		t.Log(e.Reason)
	}
	same := judge(0.005, false)
	if e := evidence(same, "period_alias"); !strings.Contains(same.Caveat, "1-day alias") || e == nil || !strings.Contains(e.Reason, "with activity modelled by the GP") {
		t.Errorf("nights at one sidereal time, with the GP: caveat %q, alias evidence %+v; want the alias kept as a rival", same.Caveat, e)
	}
}
