package rvfit

import "math"

// Minimax polynomials for sin y and cos y on |y| ≤ π/2, fitted by a Remez
// exchange in extended precision (kepler_minimax.py; numpy 1.24.2
// longdouble): sin y ≈ y + y³(ksin3 + ksin5 y² + … + ksin15 y¹²) and
// cos y ≈ 1 − y²/2 + y⁴(kcos4 + kcos6 y² + … + kcos16 y¹²). Their largest
// errors against math.Sin and math.Cos, evaluated in float64, are checked
// by TestSinCosHalfTurn.
const (
	ksin3  = -0.1666666666666572
	ksin5  = 0.008333333333257186
	ksin7  = -0.00019841269818564
	ksin9  = 2.7557315879185666e-06
	ksin11 = -2.50518386651645e-08
	ksin13 = 1.6046897556781105e-10
	ksin15 = -7.359742149915328e-13

	kcos4  = 0.04166666666666643
	kcos6  = -0.0013888888888863925
	kcos8  = 2.4801587292863337e-05
	kcos10 = -2.7557317788871577e-07
	kcos12 = 2.087663099714682e-09
	kcos14 = -1.1464666993890705e-11
	kcos16 = 4.627153587226547e-14
)

// sinCosHalfTurn returns sin x and cos x for x in [0, π] from the minimax
// polynomials above about y = x − π/2. It avoids the general argument
// reduction of math.Sincos, which the Kepler solver never needs.
func sinCosHalfTurn(x float64) (s, c float64) {
	y := x - math.Pi/2
	z := y * y
	// sin x = cos y, cos x = −sin y.
	s = 1 + z*(-0.5+z*(kcos4+z*(kcos6+z*(kcos8+z*(kcos10+z*(kcos12+z*(kcos14+z*kcos16)))))))
	c = -y - y*z*(ksin3+z*(ksin5+z*(ksin7+z*(ksin9+z*(ksin11+z*(ksin13+z*ksin15))))))
	return s, c
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
