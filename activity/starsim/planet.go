package starsim

import (
	"math"

	"spotsift/rvfit"
)

// RV returns the planet's Keplerian radial velocity of the star in m/s at
// time t (BJD_TDB, days):
//
//	v_r(t) = K [cos(ν + ω) + e cos ω]
//	M = 2π (t − T_p)/P,  E − e sin E = M,  ν the true anomaly
//
// with the time of periastron T_p derived from the time of conjunction Tc
// (true anomaly π/2 − ω at conjunction). Kepler's equation is solved by
// rvfit.EccentricAnomaly. v_r > 0 is recession.
//
// References (from memory, docs/methods.md §7): the RV model in Lovis & Fischer
// 2010, in Exoplanets, ed. Seager; the conjunction–periastron relation in
// Eastman, Gaudi & Agol 2013, PASP 125, 83.
func (p *Planet) RV(t float64) float64 {
	if p.K == 0 {
		return 0
	}
	w := p.Omega * math.Pi / 180
	M := 2 * math.Pi * (t - p.PeriastronTime()) / p.Period
	nu := rvfit.TrueAnomaly(rvfit.EccentricAnomaly(M, p.E), p.E)
	return p.K * (math.Cos(nu+w) + p.E*math.Cos(w))
}

// PeriastronTime returns the time of periastron T_p (BJD_TDB) that goes with
// the conjunction time Tc:
//
//	ν_c = π/2 − ω
//	E_c = 2 atan2(√(1−e) sin(ν_c/2), √(1+e) cos(ν_c/2))
//	T_p = Tc − P (E_c − e sin E_c)/(2π)
//
// (docs/methods.md §7, from memory after Eastman, Gaudi & Agol 2013).
func (p *Planet) PeriastronTime() float64 {
	w := p.Omega * math.Pi / 180
	nuc := math.Pi/2 - w
	Ec := 2 * math.Atan2(math.Sqrt(1-p.E)*math.Sin(nuc/2), math.Sqrt(1+p.E)*math.Cos(nuc/2))
	return p.Tc - p.Period*(Ec-p.E*math.Sin(Ec))/(2*math.Pi)
}

// DopplerFactor returns the relativistic radial Doppler factor
//
//	λ_obs/λ_emit = 1 + z = √((1 + β)/(1 − β)),  β = v/c
//
// for a line-of-sight velocity v in m/s (positive: receding), docs/methods.md §1.
func DopplerFactor(v float64) float64 {
	b := v / cLight
	return math.Sqrt((1 + b) / (1 - b))
}
