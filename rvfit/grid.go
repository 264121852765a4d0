package rvfit

import (
	"fmt"
	"math"
	"sort"
)

// Grid is a uniform frequency grid in cycles per day:
//
//	f_k = FMin + k·DF,  k = 0, …, N−1.
type Grid struct {
	// FMin is the first frequency in c/d, > 0.
	FMin float64 `json:"fmin"`
	// DF is the frequency step in c/d, > 0.
	DF float64 `json:"df"`
	// N is the number of frequencies, ≥ 1.
	N int `json:"n"`
}

// Freq returns the k-th frequency f_k in c/d.
func (g Grid) Freq(k int) float64 { return g.FMin + float64(k)*g.DF }

// FMax returns the last frequency in c/d.
func (g Grid) FMax() float64 { return g.Freq(g.N - 1) }

// Freqs returns all frequencies of the grid in c/d.
func (g Grid) Freqs() []float64 {
	f := make([]float64, g.N)
	for k := range f {
		f[k] = g.Freq(k)
	}
	return f
}

// Index returns the index of the grid frequency nearest to f, clamped to
// [0, N−1].
func (g Grid) Index(f float64) int {
	k := int(math.Round((f - g.FMin) / g.DF))
	return max(0, min(g.N-1, k))
}

func (g Grid) validate() error {
	if !(g.FMin > 0) || !(g.DF > 0) || g.N < 1 || math.IsInf(g.FMin, 0) || math.IsInf(g.DF, 0) {
		return fmt.Errorf("%w: fmin = %g c/d, df = %g c/d, n = %d", ErrBadGrid, g.FMin, g.DF, g.N)
	}
	return nil
}

// GridOptions sets up an automatic frequency grid. The zero value (or a
// nil pointer) gives the defaults.
type GridOptions struct {
	// Oversampling is the number of grid points per Rayleigh resolution
	// element 1/T (T = baseline). Zero means 10; values below 1 are an
	// error.
	Oversampling float64
	// FMin is the lowest frequency in c/d. Zero means one grid step,
	// 1/(Oversampling·T).
	FMin float64
	// FMax is the highest frequency in c/d. Zero means 1 c/d (periods down
	// to one day, common practice for nightly ground-based data), unless
	// PMin is set.
	FMax float64
	// PMin and PMax, in days, are alternatives to FMax and FMin
	// (FMax = 1/PMin, FMin = 1/PMax); zero means unset. Setting both a
	// period and the matching frequency is an error.
	PMin, PMax float64
	// MaxN caps the number of frequencies; zero means 2,000,000. A grid
	// that would need more is an error (raise the cap or the minimum
	// period).
	MaxN int
}

// NewGrid returns the uniform frequency grid for observation times t
// (days):
//
//	Δf = 1/(n₀ T),  N_f = ⌊(f_max − f_min)/Δf⌋ + 1
//
// with T the baseline and n₀ the oversampling factor (VanderPlas 2018, ApJS
// 236, 16, from memory; docs/methods.md §6).
//
// It returns an error wrapping ErrTooFewEpochs for fewer than two distinct
// times, ErrBadGrid for inconsistent options, and ErrGridOutOfReach when
// the grid lies outside what the data can constrain: every period longer
// than ten baselines, or every frequency above half the inverse of the
// closest pair of epochs (the data hold no pair close enough in time to
// sample such periods).
func NewGrid(t []float64, opts *GridOptions) (Grid, error) {
	var o GridOptions
	if opts != nil {
		o = *opts
	}
	if len(t) < 2 {
		return Grid{}, fmt.Errorf("%w: a frequency grid needs at least 2 epochs, have %d", ErrTooFewEpochs, len(t))
	}
	ts := append([]float64(nil), t...)
	sort.Float64s(ts)
	for _, x := range ts {
		if !isFinite(x) {
			return Grid{}, fmt.Errorf("%w: time %g", ErrNotFinite, x)
		}
	}
	T := ts[len(ts)-1] - ts[0]
	if !(T > 0) {
		return Grid{}, fmt.Errorf("%w: all epochs at the same time", ErrTooFewEpochs)
	}
	minDt := math.Inf(1)
	for i := 1; i < len(ts); i++ {
		if d := ts[i] - ts[i-1]; d > 0 && d < minDt {
			minDt = d
		}
	}
	n0 := o.Oversampling
	switch {
	case n0 == 0:
		n0 = 10
	case !(n0 >= 1) || math.IsInf(n0, 0):
		return Grid{}, fmt.Errorf("%w: oversampling %g (want ≥ 1)", ErrBadGrid, n0)
	}
	for _, v := range []struct {
		name string
		x    float64
	}{{"fmin", o.FMin}, {"fmax", o.FMax}, {"pmin", o.PMin}, {"pmax", o.PMax}} {
		if !(v.x >= 0) || math.IsInf(v.x, 0) {
			return Grid{}, fmt.Errorf("%w: %s = %g", ErrBadGrid, v.name, v.x)
		}
	}
	if o.PMin > 0 {
		if o.FMax > 0 {
			return Grid{}, fmt.Errorf("%w: both fmax and pmin set", ErrBadGrid)
		}
		o.FMax = 1 / o.PMin
	}
	if o.PMax > 0 {
		if o.FMin > 0 {
			return Grid{}, fmt.Errorf("%w: both fmin and pmax set", ErrBadGrid)
		}
		o.FMin = 1 / o.PMax
	}
	df := 1 / (n0 * T)
	if o.FMin == 0 {
		o.FMin = df
	}
	if o.FMax == 0 {
		o.FMax = 1
	}
	if !(o.FMax > o.FMin) {
		return Grid{}, fmt.Errorf("%w: fmax %g c/d not above fmin %g c/d (periods %g–%g d)", ErrBadGrid, o.FMax, o.FMin, 1/o.FMax, 1/o.FMin)
	}
	if o.FMax < 0.1/T {
		return Grid{}, fmt.Errorf("%w: shortest period %g d is longer than ten baselines (%g d)", ErrGridOutOfReach, 1/o.FMax, 10*T)
	}
	if o.FMin > 0.5/minDt {
		return Grid{}, fmt.Errorf("%w: longest period %g d is shorter than twice the closest epoch spacing (%g d)", ErrGridOutOfReach, 1/o.FMin, minDt)
	}
	maxN := o.MaxN
	if maxN == 0 {
		maxN = 2000000
	}
	n := int(math.Floor((o.FMax-o.FMin)/df+1e-9)) + 1
	if n > maxN {
		return Grid{}, fmt.Errorf("%w: %d frequencies exceed the cap of %d", ErrBadGrid, n, maxN)
	}
	return Grid{FMin: o.FMin, DF: df, N: n}, nil
}
