package rvfit

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// Step is a likely change of an instrument's RV zero point.
type Step struct {
	Instrument string
	// At is a time between the last epoch before the step and the first
	// after it (the middle of the gap).
	At float64
	// Size is the shift in m/s (after minus before), Err its uncertainty.
	Size, Err float64
	// DeltaChi2 is how much better a line plus a step fits than a line.
	DeltaChi2 float64
}

// Thresholds of FindSteps: the fewest epochs on each side, the shortest
// observing gap a zero point is taken to change in, and the improvement of
// χ² a step must bring (≈ 5.5σ for one extra parameter, left high because
// every gap is tried).
const (
	stepMinSide = 10
	stepMinGap  = 10.0
	stepMinDChi = 30.0
)

// FindSteps looks in each instrument's velocities (about a straight line in
// time) for one abrupt shift of the zero point, such as an unannounced
// detector or fibre change, at a gap of at least 10 days with at least 10
// epochs on each side. Uncertainties are widened by a jitter term estimated
// from the scatter (robustly, 1.4826 × MAD), so that activity or a slow
// orbit is not taken for a step. A step is reported when a line plus a step
// beats a line by Δχ² > 30. It is a hint for the user (declare it with
// --split), never applied on its own.
func FindSteps(s *Series) []Step {
	var out []Step
	for _, in := range uniqueStrings(s.Instrument) {
		var t, y, e []float64
		for i := range s.Time {
			if s.Instrument[i] == in {
				t, y, e = append(t, s.Time[i]), append(y, s.RV[i]), append(e, s.RVErr[i])
			}
		}
		if st, ok := findStep(t, y, e); ok {
			st.Instrument = in
			out = append(out, st)
		}
	}
	return out
}

func findStep(t, y, e []float64) (Step, bool) {
	n := len(t)
	if n < 2*stepMinSide {
		return Step{}, false
	}
	// Robust jitter: scatter beyond the typical uncertainty.
	med := median(y)
	dev := make([]float64, n)
	for i := range y {
		dev[i] = math.Abs(y[i] - med)
	}
	sd := 1.4826 * median(dev)
	e2 := make([]float64, n)
	for i := range e {
		e2[i] = e[i] * e[i]
	}
	jit2 := math.Max(0, sd*sd-median(e2))
	w := make([]float64, n)
	for i := range w {
		w[i] = 1 / (e2[i] + jit2)
	}
	t0 := t[0]
	chi2 := func(step float64, withStep bool) (float64, float64, float64) {
		k := 2
		if withStep {
			k = 3
		}
		a := mat.NewDense(n, k, nil)
		b := mat.NewVecDense(n, nil)
		for i := range t {
			sw := math.Sqrt(w[i])
			a.Set(i, 0, sw)
			a.Set(i, 1, sw*(t[i]-t0)/365.25)
			if withStep && t[i] >= step {
				a.Set(i, 2, sw)
			}
			b.SetVec(i, sw*y[i])
		}
		var x mat.VecDense
		if err := x.SolveVec(a, b); err != nil {
			return math.Inf(1), 0, 0
		}
		var r mat.VecDense
		r.MulVec(a, &x)
		r.SubVec(b, &r)
		c := mat.Dot(&r, &r)
		if !withStep {
			return c, 0, 0
		}
		var ata mat.SymDense
		ata.SymOuterK(1, a.T())
		var cov mat.Dense
		if err := cov.Inverse(&ata); err != nil {
			return math.Inf(1), 0, 0
		}
		return c, x.AtVec(2), math.Sqrt(cov.At(2, 2))
	}
	base, _, _ := chi2(0, false)
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	sort.Slice(idx, func(a, b int) bool { return t[idx[a]] < t[idx[b]] })
	best := Step{}
	for k := stepMinSide; k <= n-stepMinSide; k++ {
		lo, hi := t[idx[k-1]], t[idx[k]]
		if hi-lo < stepMinGap {
			continue
		}
		at := (lo + hi) / 2
		c, size, serr := chi2(at, true)
		if d := base - c; d > best.DeltaChi2 {
			best = Step{At: at, Size: size, Err: serr, DeltaChi2: d}
		}
	}
	return best, best.DeltaChi2 > stepMinDChi
}

// String describes a step for the user.
func (st Step) String() string {
	return fmt.Sprintf("instrument %q: likely zero-point step of %+.1f ± %.1f m/s near JD %.1f (Δχ² = %.0f against a straight line); if it is a known change, declare it with --split %s@%.1f",
		st.Instrument, st.Size, st.Err, st.At, st.DeltaChi2, st.Instrument, st.At)
}
