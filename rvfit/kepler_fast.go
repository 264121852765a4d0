package rvfit

import "math"

// sinCosHalfTurn returns sin x and cos x for x in [0, π] by Taylor
// polynomials about π/2 (|y| ≤ π/2, truncation error below 3e-16). It
// avoids the general argument reduction of math.Sincos, which the Kepler
// solver never needs.
func sinCosHalfTurn(x float64) (s, c float64) {
	y := x - math.Pi/2
	z := y * y
	// cos y, to y^22/22!.
	cy := 1 + z*(-1.0/2+z*(1.0/24+z*(-1.0/720+z*(1.0/40320+z*(-1.0/3628800+z*(1.0/479001600+
		z*(-1.0/87178291200+z*(1.0/20922789888000+z*(-1.0/6402373705728000+z*(1.0/2432902008176640000+
			z*(-1.0/1124000727777607680000)))))))))))
	// sin y, to y^21/21!.
	sy := y * (1 + z*(-1.0/6+z*(1.0/120+z*(-1.0/5040+z*(1.0/362880+z*(-1.0/39916800+z*(1.0/6227020800+
		z*(-1.0/1307674368000+z*(1.0/355687428096000+z*(-1.0/121645100408832000+
			z*(1.0/51090942171709440000)))))))))))
	// sin x = cos y, cos x = −sin y.
	return cy, -sy
}

// pow23 returns x^(2/3) for x > 0 via a bit-level cube-root estimate and
// one Halley step (relative error ≲ 1e-4; the fourth-order correction
// that follows takes the solver to float64 accuracy).
func pow23(x float64) float64 {
	b := math.Float64bits(x)
	// Divide the biased exponent by three (Kahan's trick); about 5% error.
	y := math.Float64frombits(b/3 + 0x2a9f7893782da1ce)
	y3 := y * y * y
	y *= (y3 + 2*x) / (2*y3 + x)

	return y * y
}

// turns returns the whole number of turns nearest to M/(2π), as a float,
// so that M − 2π·turns(M) lies in [−π, π]. Truncating conversion is one
// instruction on amd64 at the baseline level, where math.Floor is not;
// beyond ±2^52 turns (no meaningful phase is left) it falls back to Floor.
func turns(M float64) float64 {
	x := M * (0.5 / math.Pi)
	if math.Abs(x) < 1<<52 {
		return float64(int64(x + math.Copysign(0.5, x)))
	}
	return math.Floor(x + 0.5)
}
