package indicators

import (
	"fmt"
	"math"
)

// BaryConvention says how a spectrum's barycentric correction is composed
// with a measured velocity. In every case the barycentric redshift z_B
// enters as
//
//	1 + z = (1 + z_obs)(1 + z_B),
//
// where z_obs is measured on the spectrum; RVs are the velocities of 1 + z
// (see Velocity).
type BaryConvention int

const (
	// BaryRadial takes BERV as a purely radial relativistic velocity,
	// 1 + z_B = DopplerFactor(BERV), as for an observer with no motion
	// across the line of sight. It is the zero value, which spectra made
	// in memory (simulations) use; WriteFITS records it as BERVCONV =
	// 'RADIAL' so that files read back keep it.
	BaryRadial BaryConvention = iota
	// BaryVelocity takes BERV as the radial component v_r of the
	// observer's barycentric velocity (positive towards the star, the
	// velocity to add) and includes the transverse (time-dilation) term,
	//
	//	1 + z_B = γ (1 + v_r/c),  γ = (1 − |v|²/c²)^(−1/2)
	//
	// (Wright & Eastman 2014, PASP 126, 838, without the gravitational
	// terms), with |v| the Earth's orbital speed on the spectrum's BJD
	// (EarthOrbitalSpeed; the mean speed when the epoch is unknown). The
	// observatory's rotation (≤ 0.47 km/s) is left out of |v|; it changes
	// z_B by at most 0.05 m/s, and so does the mean speed used when the
	// epoch is unknown. Readers assume this convention for a header that
	// gives only a BERV velocity.
	BaryVelocity
	// BaryRedshift takes z_B from Spectrum.BaryZ as given (read from the
	// header keyword BARYZ); BERV is then only informative.
	BaryRedshift
)

// String names the convention as the BERVCONV keyword does.
func (b BaryConvention) String() string {
	switch b {
	case BaryRadial:
		return "RADIAL"
	case BaryVelocity:
		return "VELOCITY"
	case BaryRedshift:
		return "REDSHIFT"
	}
	return fmt.Sprintf("BaryConvention(%d)", int(b))
}

// Describe says in words how the convention composes the correction.
func (b BaryConvention) Describe() string {
	switch b {
	case BaryRadial:
		return "BERV taken as a purely radial relativistic velocity, 1+z_B = sqrt((1+BERV/c)/(1-BERV/c))"
	case BaryVelocity:
		return "BERV taken as the radial component of the observer's barycentric velocity, 1+z_B = γ(1+BERV/c) with γ from the Earth's orbital speed on the BJD (transverse term included)"
	case BaryRedshift:
		return "z_B read from the header (BARYZ) and used as given"
	}
	return b.String()
}

// meanOrbitalSpeed is sqrt(GM_sun/a) for the Earth-Moon barycentre's orbit,
// a = 1.00000261 au (GM_sun = 1.32712440018e20 m³/s², IAU 2015 nominal
// value; au = 149597870700 m, IAU 2012; a from the JPL approximate
// planetary elements, from memory), in m/s.
var meanOrbitalSpeed = math.Sqrt(1.32712440018e20 / (1.00000261 * 149597870700))

// EarthOrbitalSpeed returns the speed of the Earth around the Sun, in m/s,
// on the Julian date bjd (TDB), from a Keplerian orbit of the Earth-Moon
// barycentre: v² = GM(2/r − 1/a) with r = a(1 − e cos E), E the eccentric
// anomaly of the mean anomaly M = 357.52911° + 35999.05029° T and e =
// 0.01671123 − 0.00004392 T, T in Julian centuries from J2000 (Meeus,
// Astronomical Algorithms, 2nd ed., ch. 25; JPL approximate planetary
// elements; from memory). It agrees with the barycentric speed of ERFA's
// epv00 to about 30 m/s (the Sun's motion about the barycentre and the
// Earth's about the Earth-Moon barycentre are left out), enough for the
// transverse term of z_B (error below 0.005 m/s). bjd ≤ 0 (unknown) gives
// the mean speed.
func EarthOrbitalSpeed(bjd float64) float64 {
	if !(bjd > 0) || math.IsInf(bjd, 0) {
		return meanOrbitalSpeed
	}
	t := (bjd - 2451545.0) / 36525
	e := 0.01671123 - 0.00004392*t
	m := math.Mod(357.52911+35999.05029*t, 360) * math.Pi / 180
	ea := m
	for i := 0; i < 8; i++ {
		ea -= (ea - e*math.Sin(ea) - m) / (1 - e*math.Cos(ea))
	}
	r := 1 - e*math.Cos(ea)
	return meanOrbitalSpeed * math.Sqrt(2/r-1)
}

// BaryLogFactor returns ln(1 + z_B) of the convention for a correction
// berv (m/s), an epoch bjd (days; ≤ 0 unknown) and, for BaryRedshift, the
// redshift z.
func BaryLogFactor(conv BaryConvention, berv, bjd, z float64) float64 {
	switch conv {
	case BaryVelocity:
		if berv == 0 {
			return 0
		}
		b := EarthOrbitalSpeed(bjd) / C
		br := berv / C
		// |v| ≥ |v_r|: when BERV exceeds the orbital speed (an unusual
		// header), the transverse term is taken as zero.
		bt2 := math.Max(b*b-br*br, 0)
		// ln γ = −½ ln(1 − β²), β² = β_r² + β_t².
		return math.Log1p(br) - 0.5*math.Log1p(-(br*br+bt2))
	case BaryRedshift:
		return math.Log1p(z)
	default:
		return LogDopplerFactor(berv)
	}
}

// baryLog returns ln(1 + z_B) of s.
func (s *Spectrum) baryLog() float64 {
	return BaryLogFactor(s.Bary, s.BERV, s.BJD, s.BaryZ)
}

// BarycentricVelocity composes a velocity v (m/s) measured on s with the
// spectrum's barycentric correction: Velocity((1 + z_obs)(1 + z_B)) with
// 1 + z_obs = DopplerFactor(v).
func (s *Spectrum) BarycentricVelocity(v float64) float64 {
	return VelocityFromLog(LogDopplerFactor(v) + s.baryLog())
}
