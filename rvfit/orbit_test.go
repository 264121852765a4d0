package rvfit

import (
	"errors"
	"math"
	"testing"
)

func TestTcToTp(t *testing.T) {
	// docs/methods.md §7 checks [computed], P = 10 d, T_c = 0.
	rows := []struct {
		name    string
		e, wDeg float64
		wantTp  float64
		tol     float64
	}{
		{"circular w=90", 0, 90, 0, 1e-12},
		{"e=0.3 w=60", 0.3, 60, -0.437210, 1e-6},
		{"e=0.5 w=250", 0.5, 250, 3.611896, 1e-6},
		{"e=0.1 w=-90", 0.1, -90, -5.000000, 1e-6},
	}
	for _, r := range rows {
		t.Run(r.name, func(t *testing.T) {
			k := KeplerianFromTc(10, 10, r.e, deg(r.wDeg), 0)
			// Tp is defined modulo P.
			d := math.Remainder(k.Tp-r.wantTp, 10)
			if math.Abs(d) > r.tol {
				t.Errorf("Tp = %.7f, want %.7f (mod 10)", k.Tp, r.wantTp)
			}
			if tc := k.Tc(); math.Abs(math.Remainder(tc, 10)) > 1e-12 {
				t.Errorf("round trip Tc = %g, want 0", tc)
			}
			// At conjunction v = K e cos ω (docs/methods.md §7).
			if v, want := k.RV(0), 10*r.e*math.Cos(deg(r.wDeg)); math.Abs(v-want) > 1e-9 {
				t.Errorf("v(Tc) = %g, want %g", v, want)
			}
		})
	}
}

func TestKeplerianRV(t *testing.T) {
	// docs/methods.md §7 [computed]: K = 10 m/s, e = 0.3, ω = 60°, T_c = 0, P = 10.
	k := KeplerianFromTc(10, 10, 0.3, deg(60), 0)
	times := []float64{0, 1, 2.5, 5, 7.5}
	want := []float64{1.500000000, -6.670060365, -8.180190830, -2.097521484, 8.083001515}
	got := make([]float64, len(times))
	k.AddRV(got, times)
	for i, tt := range times {
		if v := k.RV(tt); math.Abs(v-want[i]) > 1e-8 {
			t.Errorf("RV(%g) = %.9f, want %.9f", tt, v, want[i])
		}
		if math.Abs(got[i]-want[i]) > 1e-8 {
			t.Errorf("AddRV(%g) = %.9f, want %.9f", tt, got[i], want[i])
		}
	}
	// Circular orbit: decreasing through zero at Tc, v(Tc + 0.01) =
	// −0.06283 m/s for K = 10 (docs/methods.md §7 [computed]).
	c := KeplerianFromTc(10, 10, 0, deg(90), 0)
	if v := c.RV(0.01); math.Abs(v+0.06283) > 1e-5 {
		t.Errorf("circular v(0.01) = %g, want −0.06283", v)
	}
}

func TestSqrtERoundTrip(t *testing.T) {
	k := KeplerianFromTc(7.3, 4, 0.42, deg(-130), 2.5)
	a, b := k.SqrtE()
	k2 := KeplerianFromSqrtE(7.3, 4, a, b, 2.5)
	if math.Abs(k2.E-k.E) > 1e-14 || math.Abs(math.Remainder(k2.Omega-k.Omega, 2*math.Pi)) > 1e-14 || math.Abs(k2.Tp-k.Tp) > 1e-12 {
		t.Errorf("round trip %+v -> %+v", k, k2)
	}
}

func TestSemiAmplitude(t *testing.T) {
	mEarthJ := GMEarth / GMJupiter
	rows := []struct {
		name            string
		P, e, mp, mstar float64
		want, tol       float64
	}{
		// docs/methods.md §7 [computed] with IAU 2015 nominal constants.
		{"jupiter-sun", 4332.59, 0.0489, 1, 1, 12.474, 5e-4},
		{"jupiter-sun circular", 4332.59, 0, 1, 1, 12.459, 5e-4},
		{"earth-sun", 365.256, 0.0167, mEarthJ, 1, 0.08947, 5e-6},
		{"51 peg-like", 4.2308, 0, 0.46, 1.11, 53.91, 5e-3},
	}
	for _, r := range rows {
		t.Run(r.name, func(t *testing.T) {
			if got := SemiAmplitude(r.P, r.e, r.mp, r.mstar); math.Abs(got-r.want) > r.tol {
				t.Errorf("K = %.6f, want %.6f", got, r.want)
			}
		})
	}
	// The constant: K for 1 M_Jup at 1 yr, scaled by ((M+m)/M_sun)^(2/3).
	// 28.4325 m/s from IAU 2015 nominal values (docs/methods.md §7 [computed]);
	// the published 28.4329 (Cumming et al. 1999, from memory) differs by
	// 1.4e-5 relative because of its Jupiter mass.
	k := SemiAmplitude(JulianYear, 0, 1, 1) * math.Pow(1+GMJupiter/GMSun, 2.0/3)
	if math.Abs(k-28.4325) > 5e-5 {
		t.Errorf("constant = %.6f, want 28.4325", k)
	}
	if math.Abs(k-28.4329)/28.4329 > 2e-5 {
		t.Errorf("constant %.6f further than 2e-5 from published 28.4329", k)
	}
}

func TestMinimumMass(t *testing.T) {
	// Jupiter–Sun: mass function 8.682158e-10 M_sun both ways (docs/methods.md §7
	// [computed]).
	K := SemiAmplitude(4332.59, 0.0489, 1, 1)
	f := MassFunction(4332.59, K, 0.0489)
	if math.Abs(f-8.682158e-10)/8.682158e-10 > 1e-6 {
		t.Errorf("f(m) = %.7g, want 8.682158e-10", f)
	}
	mJ := GMJupiter / GMSun
	if fm := mJ * mJ * mJ / ((1 + mJ) * (1 + mJ)); math.Abs(fm-f)/f > 1e-12 {
		t.Errorf("mass function from masses %g, from P,K,e %g", fm, f)
	}
	for _, row := range []struct{ P, e, mp, ms float64 }{
		{4332.59, 0.0489, 1, 1}, {3, 0.1, 80, 0.3}, {100, 0.8, 0.01, 1.2},
	} {
		K := SemiAmplitude(row.P, row.e, row.mp, row.ms)
		m, err := MinimumMass(row.P, K, row.e, row.ms)
		if err != nil || math.Abs(m-row.mp)/row.mp > 1e-10 {
			t.Errorf("%+v: MinimumMass = %v, %v", row, m, err)
		}
	}
	for _, bad := range []struct{ P, K, e, ms float64 }{
		{-1, 1, 0, 1}, {1, 1, 1, 1}, {1, 1, 0, 0}, {1, math.NaN(), 0, 1},
	} {
		if _, err := MinimumMass(bad.P, bad.K, bad.e, bad.ms); err == nil {
			t.Errorf("%+v: no error", bad)
		}
	}
	// Jupiter at 5.2 au; a_* sin i = 7.4e-3 au (common practice; Kepler's
	// third law).
	if a := SemiMajorAxis(4332.59, 1, 1); math.Abs(a-5.2034) > 2e-3 {
		t.Errorf("a = %g au, want 5.2034", a)
	}
	if a := StarSemiMajorAxis(4332.59, K, 0.0489); math.Abs(a-5.2034*mJ) > 1e-5 {
		t.Errorf("a_* = %g au", a)
	}
}

func TestKeplerianValidate(t *testing.T) {
	if err := (Keplerian{P: 1, K: 1, E: 1}).Validate(); !errors.Is(err, ErrBadEccentricity) {
		t.Errorf("e=1: %v", err)
	}
	if err := (Keplerian{P: 0, K: 1}).Validate(); !errors.Is(err, ErrBadPeriod) {
		t.Errorf("P=0: %v", err)
	}
	if err := (Keplerian{P: 1, K: 1, E: 0.2}).Validate(); err != nil {
		t.Errorf("good: %v", err)
	}
}
