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
	// DeltaChi2 is how much better a parabola plus a step fits than a
	// parabola.
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
// time, a parabola) for one abrupt shift of the zero point, such as an unannounced
// detector or fibre change, at a gap of at least 10 days with at least 10
// epochs on each side. Uncertainties are widened by a jitter term estimated
// from the differences of successive epochs (robustly, 1.4826 × MAD / √2),
// so that activity is not taken for a step, and the smooth trend absorbs a
// slow orbit. A step is reported when a parabola plus a
// step beats a parabola by Δχ² > 30. It is a hint for the user (declare it with
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
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	sort.Slice(idx, func(a, b int) bool { return t[idx[a]] < t[idx[b]] })
	e2 := make([]float64, n)
	for i := range e {
		e2[i] = e[i] * e[i]
	}
	weights := func(sd float64) []float64 {
		jit2 := math.Max(0, sd*sd-median(e2))
		w := make([]float64, n)
		for i := range w {
			w[i] = 1 / (e2[i] + jit2)
		}
		return w
	}
	tlo, thi := t[idx[0]], t[idx[n-1]]
	tmid, span := (tlo+thi)/2, math.Max((thi-tlo)/2, 1)
	// fit fits a parabola in time (plus a step at time at, when withStep)
	// with weights w; it returns χ², the step, its error and the residuals.
	fit := func(w []float64, at float64, withStep bool) (float64, float64, float64, []float64) {
		k := 3
		if withStep {
			k = 4
		}
		a := mat.NewDense(n, k, nil)
		b := mat.NewVecDense(n, nil)
		for i := range t {
			sw := math.Sqrt(w[i])
			tau := (t[i] - tmid) / span
			a.Set(i, 0, sw)
			a.Set(i, 1, sw*tau)
			a.Set(i, 2, sw*tau*tau)
			if withStep && t[i] >= at {
				a.Set(i, 3, sw)
			}
			b.SetVec(i, sw*y[i])
		}
		var x mat.VecDense
		if err := x.SolveVec(a, b); err != nil {
			return math.Inf(1), 0, 0, nil
		}
		var r mat.VecDense
		r.MulVec(a, &x)
		r.SubVec(b, &r)
		res := make([]float64, n)
		for i := range res {
			res[i] = r.AtVec(i) / math.Sqrt(w[i])
		}
		c := mat.Dot(&r, &r)
		if !withStep {
			return c, 0, 0, res
		}
		var ata mat.SymDense
		ata.SymOuterK(1, a.T())
		var cov mat.Dense
		if err := cov.Inverse(&ata); err != nil {
			return math.Inf(1), 0, 0, nil
		}
		return c, x.AtVec(3), math.Sqrt(cov.At(3, 3)), res
	}
	// Pass 1: where would a step be? Jitter from differences of epochs on
	// different nights, which a step or a slow trend hardly touches.
	var diffs []float64
	for k := 1; k < n; k++ {
		if t[idx[k]]-t[idx[k-1]] > 0.5 {
			diffs = append(diffs, math.Abs(y[idx[k]]-y[idx[k-1]]))
		}
	}
	if len(diffs) < 2*stepMinSide {
		return Step{}, false
	}
	w := weights(1.4826 * median(diffs) / math.Sqrt2)
	base, _, _, _ := fit(w, 0, false)
	bestAt, bestD := 0.0, 0.0
	for k := stepMinSide; k <= n-stepMinSide; k++ {
		lo, hi := t[idx[k-1]], t[idx[k]]
		if hi-lo < stepMinGap {
			continue
		}
		at := (lo + hi) / 2
		if c, _, _, _ := fit(w, at, true); base-c > bestD {
			bestAt, bestD = at, base-c
		}
	}
	if bestD <= stepMinDChi {
		return Step{}, false
	}
	// Pass 2: judge that step with the jitter left by the step model itself
	// (1.4826 × MAD of its residuals), so activity and orbits widen the
	// uncertainties as they should.
	_, _, _, res := fit(w, bestAt, true)
	if res == nil {
		return Step{}, false
	}
	med := median(res)
	for i := range res {
		res[i] = math.Abs(res[i] - med)
	}
	w = weights(1.4826 * median(res))
	base, _, _, _ = fit(w, 0, false)
	c, size, serr, _ := fit(w, bestAt, true)
	st := Step{At: bestAt, Size: size, Err: serr, DeltaChi2: base - c}
	return st, st.DeltaChi2 > stepMinDChi
}

// String describes a step for the user.
func (st Step) String() string {
	return fmt.Sprintf("instrument %q: likely zero-point step of %+.1f ± %.1f m/s near JD %.1f (Δχ² = %.0f against a smooth trend); if it is a known change, declare it with --split %s@%.1f",
		st.Instrument, st.Size, st.Err, st.At, st.DeltaChi2, st.Instrument, st.At)
}
