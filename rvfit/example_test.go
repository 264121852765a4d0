package rvfit_test

import (
	"fmt"
	"math"

	"spotsift/rvfit"
)

func ExampleEccentricAnomaly() {
	// Meeus, Astronomical Algorithms, ch. 30: e = 0.1, M = 5°.
	E := rvfit.EccentricAnomaly(5*math.Pi/180, 0.1)
	fmt.Printf("E = %.6f°\n", E*180/math.Pi)
	// Output: E = 5.554589°
}

func ExampleSemiAmplitude() {
	// Jupiter around the Sun (docs/methods.md §7).
	K := rvfit.SemiAmplitude(4332.59, 0.0489, 1, 1)
	fmt.Printf("K = %.3f m/s\n", K)
	// Output: K = 12.474 m/s
}

func ExampleKeplerianFromTc() {
	k := rvfit.KeplerianFromTc(10, 10, 0.3, 60*math.Pi/180, 0)
	fmt.Printf("Tp = %.4f d, v(Tc) = %.4g m/s\n", k.Tp, k.RV(0))
	// Output: Tp = -0.4372 d, v(Tc) = 1.5 m/s
}
