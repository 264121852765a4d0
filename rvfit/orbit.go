package rvfit

import (
	"fmt"
	"math"
)

// IAU 2015 Resolution B3 nominal values and the Julian year, used for all
// derived orbital quantities (values from memory, docs/methods.md §0).
const (
	// GMSun is the nominal solar mass parameter in m³ s⁻².
	GMSun = 1.3271244e20
	// GMJupiter is the nominal Jovian mass parameter in m³ s⁻².
	GMJupiter = 1.2668653e17
	// GMEarth is the nominal terrestrial mass parameter in m³ s⁻².
	GMEarth = 3.986004e14
	// AU is the astronomical unit in m (IAU 2012 Resolution B2, exact).
	AU = 149597870700.0
	// Day is the length of a day in s.
	Day = 86400.0
	// JulianYear is the Julian year in days.
	JulianYear = 365.25
)

// Keplerian is one Keplerian RV signal, in the parameter set
// (P, K, e, ω, T_p). The star's radial velocity (positive for recession) is
//
//	v(t) = K [cos(ν + ω) + e cos ω]
//	M = 2π (t − T_p)/P,  E − e sin E = M,
//	ν = 2 atan2(√(1+e) sin(E/2), √(1−e) cos(E/2))
//
// with ω the argument of periastron of the star's orbit (the planet's is
// ω + π). Reference: docs/methods.md §7 [common practice]; see e.g. Lovis &
// Fischer 2010, in Exoplanets, ed. Seager (from memory).
type Keplerian struct {
	// P is the orbital period in days, > 0.
	P float64 `json:"period"`
	// K is the RV semi-amplitude in m/s (≥ 0 for a physical orbit).
	K float64 `json:"k"`
	// E is the eccentricity, 0 ≤ e < 1.
	E float64 `json:"ecc"`
	// Omega is the argument of periastron ω of the star's orbit, radians.
	Omega float64 `json:"omega"`
	// Tp is the time of periastron passage, BJD_TDB days.
	Tp float64 `json:"tp"`
}

// Validate returns an error when the parameters do not describe an orbit:
// non-positive or non-finite period, non-finite K, ω or T_p, or an
// eccentricity outside [0, 1).
func (k Keplerian) Validate() error {
	switch {
	case !(k.P > 0) || math.IsInf(k.P, 0):
		return fmt.Errorf("%w: P = %g d", ErrBadPeriod, k.P)
	case !(k.E >= 0 && k.E < 1):
		return fmt.Errorf("%w: e = %g", ErrBadEccentricity, k.E)
	case !isFinite(k.K) || !isFinite(k.Omega) || !isFinite(k.Tp):
		return fmt.Errorf("%w: K = %g, ω = %g, T_p = %g", ErrNotFinite, k.K, k.Omega, k.Tp)
	}
	return nil
}

func isFinite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// RV returns the signal's radial velocity in m/s at time t (days).
func (k Keplerian) RV(t float64) float64 {
	M := 2 * math.Pi * (t - k.Tp) / k.P
	E := EccentricAnomaly(M, k.E)
	nu := TrueAnomaly(E, k.E)
	return k.K * (math.Cos(nu+k.Omega) + k.E*math.Cos(k.Omega))
}

// AddRV adds the signal's radial velocity at each time t[i] (days) to
// dst[i] (m/s). It panics if the lengths differ.
//
// It uses the identity cos(ν + ω) = [(cos E − e) cos ω − √(1−e²) sin E sin ω]
// / (1 − e cos E), which needs no true anomaly.
func (k Keplerian) AddRV(dst, t []float64) {
	if len(dst) != len(t) {
		panic("rvfit: AddRV length mismatch")
	}
	var mb, sb, cb [256]float64
	sw, cw := math.Sincos(k.Omega)
	beta := math.Sqrt(1 - k.E*k.E)
	ecw := k.E * cw
	scale := 2 * math.Pi / k.P
	for lo := 0; lo < len(t); lo += len(mb) {
		hi := min(lo+len(mb), len(t))
		M, sE, cE := mb[:hi-lo], sb[:hi-lo], cb[:hi-lo]
		for i := range M {
			M[i] = scale * (t[lo+i] - k.Tp)
		}
		keplerBatch(M, sE, cE, M, k.E)
		for i := range M {
			dst[lo+i] += k.K * (((cE[i]-k.E)*cw-beta*sE[i]*sw)/(1-k.E*cE[i]) + ecw)
		}
	}
}

// Tc returns the time of the planet's inferior conjunction (transit for a
// transiting planet) nearest after T_p − P/2, BJD_TDB days. At conjunction
// the true anomaly is ν_c = π/2 − ω and
//
//	E_c = 2 atan2(√(1−e) sin(ν_c/2), √(1+e) cos(ν_c/2)),  M_c = E_c − e sin E_c
//	T_c = T_p + P M_c/(2π)
//
// Reference: Eastman, Gaudi & Agol 2013, PASP 125, 83 (from memory);
// docs/methods.md §7.
func (k Keplerian) Tc() float64 {
	return k.Tp + k.P*conjunctionMeanAnomaly(k.E, k.Omega)/(2*math.Pi)
}

// conjunctionMeanAnomaly returns M_c in (−π, π] for the conjunction.
func conjunctionMeanAnomaly(e, omega float64) float64 {
	nuc := math.Pi/2 - omega
	s, c := math.Sincos(nuc / 2)
	Ec := 2 * math.Atan2(math.Sqrt(1-e)*s, math.Sqrt(1+e)*c)
	return Ec - e*math.Sin(Ec)
}

// KeplerianFromTc returns the Keplerian with period P (d), semi-amplitude
// K (m/s), eccentricity e, argument of periastron ω (rad) and time of
// inferior conjunction Tc (BJD_TDB d), inverting Keplerian.Tc:
//
//	T_p = T_c − P M_c/(2π)
//
// T_p is reduced to within half a period of T_c − P M_c/(2π) only by the
// range of M_c in (−π, π]. Reference: docs/methods.md §7.
func KeplerianFromTc(P, K, e, omega, Tc float64) Keplerian {
	return Keplerian{P: P, K: K, E: e, Omega: omega, Tp: Tc - P*conjunctionMeanAnomaly(e, omega)/(2*math.Pi)}
}

// KeplerianFromSqrtE returns the Keplerian from the sampling parameter set
// (P, K, √e cos ω, √e sin ω, T_c):
//
//	e = (√e cos ω)² + (√e sin ω)²,  ω = atan2(√e sin ω, √e cos ω)
//
// which gives a uniform prior on e with uniform priors on both components
// inside the unit disk (common practice; docs/methods.md §7). When both are
// zero, ω = 0.
func KeplerianFromSqrtE(P, K, secosw, sesinw, Tc float64) Keplerian {
	e := secosw*secosw + sesinw*sesinw
	omega := math.Atan2(sesinw, secosw)
	return KeplerianFromTc(P, K, e, omega, Tc)
}

// SqrtE returns (√e cos ω, √e sin ω).
func (k Keplerian) SqrtE() (secosw, sesinw float64) {
	s, c := math.Sincos(k.Omega)
	r := math.Sqrt(k.E)
	return r * c, r * s
}

// SemiAmplitude returns the star's RV semi-amplitude K (m/s) caused by a
// companion of mass mp (Jupiter masses, the minimum mass m sin i for an
// edge-on value) on an orbit of period P (days) and eccentricity e around
// a star of mass mstar (solar masses):
//
//	K = (2π G/P)^(1/3) m_p sin i (M_* + m_p)^(−2/3) / √(1 − e²)
//
// with G M expressed through the IAU 2015 nominal GMSun and GMJupiter. With
// these constants K = 28.4325 m/s for 1 M_Jup, 1 M_sun (plus 1 M_Jup) and
// P = 1 Julian year (the often-quoted 28.4329 m/s rests on an older Jupiter
// mass). It returns NaN for non-physical input.
//
// Reference: Cumming, Marcy & Butler 1999, ApJ 526, 890; Lovis & Fischer
// 2010, in Exoplanets (from memory); docs/methods.md §7.
func SemiAmplitude(P, e, mp, mstar float64) float64 {
	if !(P > 0) || !(e >= 0 && e < 1) || !(mp >= 0) || !(mstar > 0) {
		return math.NaN()
	}
	gmp := mp * GMJupiter
	gmt := mstar*GMSun + gmp
	return math.Cbrt(2*math.Pi/(P*Day)) * gmp / math.Pow(gmt, 2.0/3) / math.Sqrt(1-e*e)
}

// MassFunction returns the spectroscopic mass function in solar masses,
//
//	f(m) = (m_p sin i)³/(M_* + m_p)² = P K³ (1 − e²)^(3/2) / (2π G),
//
// for P in days and K in m/s. Reference: docs/methods.md §7 [common practice].
func MassFunction(P, K, e float64) float64 {
	return P * Day * K * K * K * math.Pow(1-e*e, 1.5) / (2 * math.Pi * GMSun)
}

// MinimumMass returns the minimum mass m_p sin i in Jupiter masses of the
// companion that induces semi-amplitude K (m/s) at period P (days) and
// eccentricity e on a star of mass mstar (solar masses). It solves the
// mass-function equation m³ = f (M_* + m)² by Newton iteration from the
// m ≪ M_* value, to a relative precision of 1e-14; the companion's mass is
// not assumed negligible. Reference: docs/methods.md §7 [common practice].
func MinimumMass(P, K, e, mstar float64) (float64, error) {
	if !(P > 0) || math.IsInf(P, 0) {
		return math.NaN(), fmt.Errorf("%w: P = %g d", ErrBadPeriod, P)
	}
	if !(e >= 0 && e < 1) {
		return math.NaN(), fmt.Errorf("%w: e = %g", ErrBadEccentricity, e)
	}
	if !(mstar > 0) || math.IsInf(mstar, 0) {
		return math.NaN(), fmt.Errorf("%w: M_* = %g M_sun", ErrBadMass, mstar)
	}
	if !(K >= 0) || math.IsInf(K, 0) {
		return math.NaN(), fmt.Errorf("%w: K = %g m/s", ErrNotFinite, K)
	}
	f := MassFunction(P, K, e) // solar masses
	m := math.Cbrt(f * mstar * mstar)
	for i := 0; i < 100; i++ {
		g := m*m*m - f*(mstar+m)*(mstar+m)
		dg := 3*m*m - 2*f*(mstar+m)
		if dg == 0 {
			break
		}
		dm := g / dg
		m -= dm
		if math.Abs(dm) <= 1e-14*m {
			break
		}
	}
	return m * GMSun / GMJupiter, nil
}

// SemiMajorAxis returns the semi-major axis in au of the relative orbit of
// a companion of mass mp (Jupiter masses) around a star of mass mstar
// (solar masses) with period P (days), from Kepler's third law
//
//	a³ = G (M_* + m_p) P² / (4π²).
func SemiMajorAxis(P, mp, mstar float64) float64 {
	gm := mstar*GMSun + mp*GMJupiter
	p := P * Day
	return math.Cbrt(gm*p*p/(4*math.Pi*math.Pi)) / AU
}

// StarSemiMajorAxis returns a_* sin i in au, the projected semi-major axis
// of the star's orbit, a_* sin i = K P √(1 − e²)/(2π), for K in m/s and P in
// days. Reference: docs/methods.md §7.
func StarSemiMajorAxis(P, K, e float64) float64 {
	return K * P * Day * math.Sqrt(1-e*e) / (2 * math.Pi) / AU
}
