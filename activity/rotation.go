package activity

import (
	"fmt"
	"math"
)

// TurnoverTime returns the convective turnover time τc in days for a
// main-sequence star of colour B−V, from the fit of Noyes et al. (1984):
//
//	x = 1 − (B−V)
//	log τc = 1.362 − 0.166x + 0.025x² − 5.323x³   (x > 0)
//	log τc = 1.362 − 0.14x                        (x ≤ 0)
//
// Reference (coefficients from memory): Noyes, Hartmann, Baliunas, Duncan &
// Vaughan 1984, ApJ 279, 763.
func TurnoverTime(bv float64) float64 {
	x := 1 - bv
	if x > 0 {
		return math.Pow(10, 1.362-0.166*x+0.025*x*x-5.323*x*x*x)
	}
	return math.Pow(10, 1.362-0.14*x)
}

// RotationNoyes returns the rotation period in days that the
// activity–rotation relation of Noyes et al. (1984) predicts from log R'HK
// and B−V:
//
//	y = log R'HK + 5
//	log(P_rot/τc) = 0.324 − 0.400y − 0.283y² − 1.325y³
//
// Reference (coefficients from memory): Noyes et al. 1984, ApJ 279, 763.
func RotationNoyes(logRHK, bv float64) float64 {
	y := logRHK + 5
	return TurnoverTime(bv) * math.Pow(10, 0.324-0.400*y-0.283*y*y-1.325*y*y*y)
}

// RossbyMH08 returns the Rossby number of the activity–rotation relation of
// Mamajek & Hillenbrand (2008),
//
//	Ro = 0.808 − 2.966 (log R'HK + 4.52)
//
// Reference (coefficients from memory): Mamajek & Hillenbrand 2008, ApJ
// 687, 1264, their eq. for −5.0 < log R'HK < −4.3.
func RossbyMH08(logRHK float64) float64 {
	return 0.808 - 2.966*(logRHK+4.52)
}

// RotationMH08 returns the rotation period in days, Ro·τc, from the
// Mamajek & Hillenbrand (2008) relation with the Noyes τc.
func RotationMH08(logRHK, bv float64) float64 {
	return RossbyMH08(logRHK) * TurnoverTime(bv)
}

// RotationGyro returns the gyrochronological rotation period in days of a
// star of colour B−V and age in Myr,
//
//	P_rot = 0.407 [(B−V) − 0.495]^0.325 · t^0.566
//
// Reference (coefficients from memory): Mamajek & Hillenbrand 2008, ApJ
// 687, 1264. It returns NaN for B−V ≤ 0.495, where the relation has no
// meaning.
func RotationGyro(bv, ageMyr float64) float64 {
	if bv <= 0.495 || ageMyr <= 0 {
		return math.NaN()
	}
	return 0.407 * math.Pow(bv-0.495, 0.325) * math.Pow(ageMyr, 0.566)
}

// RotationEstimate is one estimate of the star's rotation period.
type RotationEstimate struct {
	// Method names the estimate: "star file", "periodogram of fwhm",
	// "gp fit to s_index", "Noyes et al. 1984", "Mamajek & Hillenbrand 2008".
	Method string `json:"method"`
	// Period and Err are the period and its one-sigma uncertainty in days.
	Period float64 `json:"period"`
	Err    float64 `json:"err"`
	// Note says how far the estimate may be trusted (extrapolated colour,
	// weak peak...); empty when there is nothing to say.
	Note string `json:"note,omitempty"`
}

// RelationEstimates returns the rotation periods that the activity–rotation
// relations predict from log R'HK and B−V, each with the uncertainty the
// relations carry. The relations were calibrated on F7–K2 dwarfs; outside
// 0.5 < B−V < 0.9 or −5.0 < log R'HK < −4.3 the estimate carries a note.
//
// The uncertainties are the scatter of the calibrations: about 0.1 dex in
// period for Noyes et al. (1984) and about 15 % for Mamajek & Hillenbrand
// (2008) (both from memory); docs/methods.md §5 notes that the relations predict
// the solar period to 10–20 %.
func RelationEstimates(logRHK, bv float64) []RotationEstimate {
	if math.IsNaN(logRHK) || math.IsNaN(bv) || bv == 0 {
		return nil
	}
	var note string
	if bv <= 0.5 || bv >= 0.9 {
		note = fmt.Sprintf("B-V = %.2f lies outside the calibration range 0.5-0.9", bv)
	}
	if logRHK <= -5.0 || logRHK >= -4.3 {
		if note != "" {
			note += "; "
		}
		note += fmt.Sprintf("log R'HK = %.2f lies outside the calibration range -5.0 to -4.3", logRHK)
	}
	var out []RotationEstimate
	if p := RotationNoyes(logRHK, bv); p > 0 && !math.IsInf(p, 0) {
		out = append(out, RotationEstimate{Method: "Noyes et al. 1984", Period: p, Err: p * (math.Pow(10, 0.1) - 1), Note: note})
	}
	if p := RotationMH08(logRHK, bv); p > 0 && !math.IsInf(p, 0) {
		out = append(out, RotationEstimate{Method: "Mamajek & Hillenbrand 2008", Period: p, Err: 0.15 * p, Note: note})
	}
	return out
}
