package indicators

import (
	"math"
	"testing"
)

func TestDopplerFactor(t *testing.T) {
	// Check values: docs/methods.md §1 [computed], exact z versus v/c.
	for _, tc := range []struct {
		v, z, zFirst float64
	}{
		{1e3, 3.335646515e-6, 3.335640952e-6},
		{30e3, 1.000742360e-4, 1.000692286e-4},
		{100e3, 3.336197463e-4, 3.335640952e-4},
	} {
		z := DopplerFactor(tc.v) - 1
		if math.Abs(z-tc.z) > 1e-9*tc.z+1e-15 {
			t.Errorf("z(%v) = %.10g, want %.10g", tc.v, z, tc.z)
		}
		if zf := tc.v / C; math.Abs(zf-tc.zFirst) > 1e-9*tc.zFirst {
			t.Errorf("v/c(%v) = %.10g, want %.10g", tc.v, zf, tc.zFirst)
		}
		// First order agrees to within (v/c)² (common practice).
		if b := tc.v / C; math.Abs(z-b) > b*b {
			t.Errorf("v = %v: |z - v/c| = %g > (v/c)² = %g", tc.v, math.Abs(z-b), b*b)
		}
	}
	// The inverse applied to the 30 km/s z returns 30000.0000000 m/s
	// (docs/methods.md §1 [computed]).
	if v := Velocity(1 + 1.000742360e-4); math.Abs(v-30000) > 1e-3 {
		t.Errorf("Velocity(1+z30) = %.7f, want 30000", v)
	}
	for _, v := range []float64{-50e3, -1, 0, 3.7, 12345.678, 50e3} {
		// One unit in the last place of D ≈ 1 is 2.2e-16·c = 6.7e-8 m/s.
		if got := Velocity(DopplerFactor(v)); math.Abs(got-v) > 1.5e-7 {
			t.Errorf("Velocity(DopplerFactor(%v)) = %v", v, got)
		}
		if got := VelocityFromLog(LogDopplerFactor(v)); math.Abs(got-v) > 1e-9*math.Max(1, math.Abs(v)) {
			t.Errorf("VelocityFromLog(LogDopplerFactor(%v)) = %v", v, got)
		}
		if d := math.Exp(LogDopplerFactor(v)); math.Abs(d-DopplerFactor(v)) > 4e-16 {
			t.Errorf("exp(LogDopplerFactor(%v)) = %v, DopplerFactor = %v", v, d, DopplerFactor(v))
		}
	}
	if !math.IsNaN(DopplerFactor(C)) || !math.IsNaN(Velocity(-1)) {
		t.Error("special cases: want NaN for v = c and d < 0")
	}
}

func TestAirVacuum(t *testing.T) {
	// docs/methods.md §1 table: vacuum wavelengths [memory: NIST-style], air
	// wavelengths [computed] with Morton 2000; the Piskunov inverse returns
	// the vacuum inputs to 1e-5 Å [computed].
	for _, tc := range []struct {
		name      string
		vac, air  float64
		tolAir    float64 // the table gives 4 decimals
		tolInvert float64
	}{
		{"Ca II K", 3934.777, 3933.6633, 6e-5, 1e-5},
		{"Ca II H", 3969.591, 3968.4682, 6e-5, 1e-5},
		{"H-alpha", 6564.614, 6562.8010, 6e-5, 1e-5},
		{"Na I D2", 5891.583, 5889.9506, 6e-5, 1e-5},
		{"Na I D1", 5897.558, 5895.9240, 6e-5, 1e-5},
		{"5000", 5000.000, 4998.6055, 6e-5, 1e-5},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if got := VacuumToAir(tc.vac); math.Abs(got-tc.air) > tc.tolAir {
				t.Errorf("VacuumToAir(%v) = %.5f, want %.4f", tc.vac, got, tc.air)
			}
			if got := AirToVacuum(VacuumToAir(tc.vac)); math.Abs(got-tc.vac) > tc.tolInvert {
				t.Errorf("AirToVacuum(VacuumToAir(%v)) = %.6f", tc.vac, got)
			}
		})
	}
	// Ciddor-based worked example (docs/methods.md §1 [confirmed]): air 6056.125
	// Å -> vacuum 6057.8019 Å; the Piskunov inverse gives 6057.80193 Å
	// [computed].
	if got := AirToVacuum(6056.125); math.Abs(got-6057.80193) > 1e-5 {
		t.Errorf("AirToVacuum(6056.125) = %.6f, want 6057.80193", got)
	}
	// At 5000 Å, n - 1 = 2.7897e-4 (docs/methods.md §1 [computed]).
	if n := 5000 / VacuumToAir(5000); math.Abs(n-1-2.7897e-4) > 1e-8 {
		t.Errorf("n(5000) - 1 = %.6g, want 2.7897e-4", n-1)
	}
	// Below 2000 Å both are the identity (convention, docs/methods.md §1).
	if VacuumToAir(1500) != 1500 || AirToVacuum(1500) != 1500 {
		t.Error("below 2000 Å conversions must be the identity")
	}
	s := &Spectrum{Orders: []Order{{Wavelength: []float64{5000, 6000}, Flux: []float64{1, 1}}}}
	v := ToVacuum(s)
	if !v.Vacuum || s.Vacuum || math.Abs(v.Orders[0].Wavelength[0]-AirToVacuum(5000)) > 0 {
		t.Error("ToVacuum must convert a copy")
	}
	if a := ToAir(v); a.Vacuum || math.Abs(a.Orders[0].Wavelength[0]-5000) > 1e-5 {
		t.Error("ToAir(ToVacuum(s)) must return air wavelengths")
	}
}
