package rvfit

import "math"

// FAPSingle returns the false-alarm probability of GLS power p at one
// frequency chosen in advance, for n epochs and nOffsets free offsets,
// under Gaussian white noise:
//
//	FAP₁ = (1 − p)^(N_K/2),  N_K = n − nOffsets − 2
//
// (N_K = N − 3 for one offset, as in astropy; docs/methods.md §6 [confirmed:
// astropy source]). It returns 1 for p ≤ 0 and 0 for p ≥ 1.
func FAPSingle(p float64, n, nOffsets int) float64 {
	if p <= 0 {
		return 1
	}
	if p >= 1 {
		return 0
	}
	nk := float64(n - nOffsets - 2)
	return math.Pow(1-p, nk/2)
}

// BaluevFAP returns the false-alarm probability of the highest GLS power p
// over frequencies up to fmax (c/d) for n epochs and nOffsets offsets whose
// effective time span is tEff = sqrt(4π Var_w(t)) (Periodogram.TEff), by the
// analytic approximation of Baluev (2008, MNRAS 385, 1279) in the form
// coded in astropy (docs/methods.md §6 [confirmed]):
//
//	N_H = n − nOffsets,  N_K = N_H − 2,  W = f_max T_eff
//	γ(m) = sqrt(2/m) Γ(m/2)/Γ((m−1)/2)
//	FAP₁ = (1 − p)^(N_K/2)
//	τ = γ(N_H) W (1 − p)^((N_K − 1)/2) sqrt(N_H p / 2)
//	FAP = 1 − (1 − FAP₁) e^(−τ)
//
// computed as −expm1(−τ) + FAP₁ e^(−τ) to keep small values accurate.
// With several instruments the extra offsets reduce N_H (an extension;
// Baluev treats one). Special cases: p ≤ 0 gives 1, p ≥ 1 gives 0.
func BaluevFAP(p float64, n, nOffsets int, fmax, tEff float64) float64 {
	if p <= 0 {
		return 1
	}
	if p >= 1 {
		return 0
	}
	nh := float64(n - nOffsets)
	nk := nh - 2
	fap1 := math.Pow(1-p, nk/2)
	tau := baluevGamma(nh) * fmax * tEff * math.Pow(1-p, (nk-1)/2) * math.Sqrt(nh*p/2)
	return -math.Expm1(-tau) + fap1*math.Exp(-tau)
}

// baluevGamma returns γ(m) = sqrt(2/m) Γ(m/2)/Γ((m−1)/2) via log-gamma.
func baluevGamma(m float64) float64 {
	a, _ := math.Lgamma(m / 2)
	b, _ := math.Lgamma((m - 1) / 2)
	return math.Sqrt(2/m) * math.Exp(a-b)
}

// BaluevPower inverts BaluevFAP: it returns the power p at which the
// false-alarm probability equals fap (0 < fap < 1), by bisection on
// log FAP (the FAP decreases monotonically in p). It is used for
// significance levels drawn on periodograms.
func BaluevPower(fap float64, n, nOffsets int, fmax, tEff float64) float64 {
	if !(fap > 0 && fap < 1) {
		return math.NaN()
	}
	lo, hi := 0.0, 1.0
	for i := 0; i < 200; i++ {
		mid := 0.5 * (lo + hi)
		if BaluevFAP(mid, n, nOffsets, fmax, tEff) > fap {
			lo = mid
		} else {
			hi = mid
		}
		if hi-lo < 1e-15 {
			break
		}
	}
	return 0.5 * (lo + hi)
}
