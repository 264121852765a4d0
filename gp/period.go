package gp

import (
	"fmt"
	"math"
	"slices"
)

// CheckPeriod reports whether period p (days) can be constrained by epochs
// t: it returns an error wrapping ErrPeriodTooShort when p is shorter than
// twice the smallest non-zero separation between epochs (the Nyquist
// limit of the densest sampling; shorter periods are only seen through
// aliases and leave a GP period unconstrained) [common practice]. With
// fewer than two distinct epochs any positive period passes.
func CheckPeriod(p float64, t []float64) error {
	if !(p > 0) || math.IsInf(p, 0) {
		return &ParamError{Kernel: "period", Name: "P", Value: p, Reason: "must be positive and finite"}
	}
	dmin := minSeparation(t)
	if dmin > 0 && p < 2*dmin {
		return fmt.Errorf("%w: period %g d < 2 × smallest epoch separation %g d", ErrPeriodTooShort, p, dmin)
	}
	return nil
}

func minSeparation(t []float64) float64 {
	s := slices.Clone(t)
	slices.Sort(s)
	dmin := math.Inf(1)
	for i := 1; i < len(s); i++ {
		if d := s[i] - s[i-1]; d > 0 && d < dmin {
			dmin = d
		}
	}
	if math.IsInf(dmin, 1) {
		return 0
	}
	return dmin
}

// periods returns the recurrence periods (days) of the kernel's periodic
// parts: QuasiPeriodic.Eta3, RotationTerm.P, RotationSHO.Period, for every
// member of a Sum.
func periods(k Kernel) []float64 {
	switch k := k.(type) {
	case Sum:
		var out []float64
		for _, m := range k {
			out = append(out, periods(m)...)
		}
		return out
	case QuasiPeriodic:
		return []float64{k.Eta3}
	case RotationTerm:
		return []float64{k.P}
	case RotationSHO:
		return []float64{k.Period}
	}
	return nil
}

// checkKernelPeriods applies CheckPeriod to every period of k.
func checkKernelPeriods(k Kernel, t []float64) error {
	for _, p := range periods(k) {
		if err := CheckPeriod(p, t); err != nil {
			return err
		}
	}
	return nil
}
