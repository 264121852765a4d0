package rvfit

import (
	"fmt"
	"math"
)

// Window returns the spectral window of the sampling times t (days) on
// grid g,
//
//	W(f) = |Σ_k w_k e^{−2πi f t_k}|² / (Σ_k w_k)²,  W(0) = 1,
//
// with weights w (nil means unit weights, the usual choice: the window
// describes the sampling, not the noise). Peaks of W at f_s put aliases of a
// true frequency f at |f ± f_s|.
//
// Reference: Roberts, Lehár & Dreher 1987, AJ 93, 968; Dawson & Fabrycky
// 2010, ApJ 722, 937 (from memory); docs/methods.md §6.
func Window(t, w []float64, g Grid, opts *GLSOptions) ([]float64, error) {
	if err := g.validate(); err != nil {
		return nil, err
	}
	if len(t) == 0 {
		return nil, ErrNoObservations
	}
	if w != nil && len(w) != len(t) {
		return nil, fmt.Errorf("%w: %d times, %d weights", ErrMismatch, len(t), len(w))
	}
	sigma := make([]float64, len(t))
	for i := range sigma {
		sigma[i] = 1
		if w != nil {
			if !(w[i] > 0) || math.IsInf(w[i], 0) {
				return nil, fmt.Errorf("%w: weight %d = %g", ErrBadUncertainty, i, w[i])
			}
			sigma[i] = 1 / math.Sqrt(w[i])
		}
	}
	// The data values do not enter; three epochs are not needed for a
	// window, so build the data set directly.
	d := &glsData{t: make([]float64, len(t)), y: make([]float64, len(t)), w: make([]float64, len(t)), inst: make([]int, len(t)), nInst: 1, names: []string{""}}
	lo, hi := t[0], t[0]
	for _, x := range t {
		if !isFinite(x) {
			return nil, fmt.Errorf("%w: time %g", ErrNotFinite, x)
		}
		lo, hi = math.Min(lo, x), math.Max(hi, x)
	}
	d.tref = 0.5 * (lo + hi)
	sw := 0.0
	for i := range t {
		d.t[i] = t[i] - d.tref
		d.w[i] = 1 / (sigma[i] * sigma[i])
		sw += d.w[i]
	}
	var o GLSOptions
	if opts != nil {
		o = *opts
	}
	d.ctx = o.Context
	var s *glsSums
	if o.Fast {
		s = d.fastSums(g, workers(o.Workers))
	} else {
		s = d.exactSums(g, workers(o.Workers))
	}
	if o.Context != nil && o.Context.Err() != nil {
		return nil, o.Context.Err()
	}
	out := make([]float64, g.N)
	for k := range out {
		c, sn := s.C[0][k], s.S[0][k]
		out[k] = (c*c + sn*sn) / (sw * sw)
	}
	return out, nil
}
