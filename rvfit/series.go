package rvfit

import (
	"fmt"
	"math"
	"sort"
)

// Series is a per-epoch time series of radial velocities and activity
// indicators, as read from a table or assembled from measured spectra.
//
// All slices have one element per epoch. Epochs are sorted by time once a
// Series has been read or validated.
type Series struct {
	// Name describes where the series came from (a file name, a star name).
	// It is used in error messages only.
	Name string

	// Time holds the epochs, BJD_TDB in days.
	Time []float64
	// RV holds the radial velocities in m/s.
	RV []float64
	// RVErr holds the one-sigma RV uncertainties in m/s; every one is > 0.
	RVErr []float64
	// Instrument labels each epoch; it is never empty after reading (a table
	// without an instrument column gets DefaultInstrument).
	Instrument []string

	// Indicators holds any number of named indicator columns, in table order.
	Indicators []Indicator

	// Notes says how the series was read: the table's layout, which column
	// was taken as what, which were ignored, what was converted. Warnings
	// about the data itself are returned separately by the readers.
	Notes []string
}

// DefaultInstrument labels epochs of a table that has no instrument column.
const DefaultInstrument = "default"

// Indicator is one named activity-indicator column of a Series.
//
// A missing value (an empty cell in a table, or an indicator that could not
// be measured on a spectrum) is NaN in Value and in Err; use Valid.
type Indicator struct {
	// Name is the canonical column name, e.g. "fwhm", "bis", "s_index".
	Name string
	// Unit is the unit of Value and Err as written in tables ("m/s", "dex",
	// "" for dimensionless).
	Unit string
	// Value holds one value per epoch, NaN where missing.
	Value []float64
	// Err holds one-sigma uncertainties per epoch, NaN where missing; it is
	// nil when the indicator has no error column.
	Err []float64
}

// Valid reports whether epoch i has a value (and, if the indicator has an
// error column, an error) for this indicator.
func (ind *Indicator) Valid(i int) bool {
	if math.IsNaN(ind.Value[i]) {
		return false
	}
	return ind.Err == nil || !math.IsNaN(ind.Err[i])
}

// Count returns how many epochs have a valid value.
func (ind *Indicator) Count() int {
	n := 0
	for i := range ind.Value {
		if ind.Valid(i) {
			n++
		}
	}
	return n
}

// Len returns the number of epochs.
func (s *Series) Len() int { return len(s.Time) }

// Indicator returns the indicator column with the given name, or nil.
func (s *Series) Indicator(name string) *Indicator {
	for i := range s.Indicators {
		if s.Indicators[i].Name == name {
			return &s.Indicators[i]
		}
	}
	return nil
}

// Instruments returns the distinct instrument labels in order of first
// appearance in time.
func (s *Series) Instruments() []string {
	seen := map[string]bool{}
	var out []string
	for _, in := range s.Instrument {
		if !seen[in] {
			seen[in] = true
			out = append(out, in)
		}
	}
	return out
}

// Baseline returns the time span between the first and last epoch in days.
func (s *Series) Baseline() float64 {
	if len(s.Time) == 0 {
		return 0
	}
	lo, hi := s.Time[0], s.Time[0]
	for _, t := range s.Time {
		lo = math.Min(lo, t)
		hi = math.Max(hi, t)
	}
	return hi - lo
}

// Require returns an error wrapping ErrTooFewEpochs when the series has
// fewer than n epochs; what names the analysis that needs them.
func (s *Series) Require(n int, what string) error {
	if s.Len() < n {
		return fmt.Errorf("%s: %w: %s needs at least %d, have %d", s.Name, ErrTooFewEpochs, what, n, s.Len())
	}
	return nil
}

// RequireTimeOrder returns an error naming the first epoch out of time
// order. The analyses assume increasing times (the O(N) GP solvers, the
// season split); a table grouped by instrument, for example, must be sorted
// first (SortByTime; the table readers do it).
func (s *Series) RequireTimeOrder(what string) error {
	for i := 1; i < len(s.Time); i++ {
		if s.Time[i] < s.Time[i-1] {
			return fmt.Errorf("%s: %w: %s needs epochs in time order, but epoch %d (t = %.6f) comes before epoch %d (t = %.6f); sort the series by time first (Series.SortByTime)",
				s.Name, ErrUnsorted, what, i+1, s.Time[i], i, s.Time[i-1])
		}
	}
	return nil
}

// Clone returns a deep copy of s.
func (s *Series) Clone() *Series {
	c := &Series{
		Name:       s.Name,
		Time:       append([]float64(nil), s.Time...),
		RV:         append([]float64(nil), s.RV...),
		RVErr:      append([]float64(nil), s.RVErr...),
		Instrument: append([]string(nil), s.Instrument...),
		Notes:      append([]string(nil), s.Notes...),
	}
	for _, ind := range s.Indicators {
		ci := Indicator{Name: ind.Name, Unit: ind.Unit, Value: append([]float64(nil), ind.Value...)}
		if ind.Err != nil {
			ci.Err = append([]float64(nil), ind.Err...)
		}
		c.Indicators = append(c.Indicators, ci)
	}
	return c
}

// Subset returns a new series holding the epochs idx, in that order.
func (s *Series) Subset(idx []int) *Series {
	c := &Series{Name: s.Name}
	for _, i := range idx {
		c.Time = append(c.Time, s.Time[i])
		c.RV = append(c.RV, s.RV[i])
		c.RVErr = append(c.RVErr, s.RVErr[i])
		c.Instrument = append(c.Instrument, s.Instrument[i])
	}
	for _, ind := range s.Indicators {
		ci := Indicator{Name: ind.Name, Unit: ind.Unit, Value: make([]float64, len(idx))}
		if ind.Err != nil {
			ci.Err = make([]float64, len(idx))
		}
		for k, i := range idx {
			ci.Value[k] = ind.Value[i]
			if ind.Err != nil {
				ci.Err[k] = ind.Err[i]
			}
		}
		c.Indicators = append(c.Indicators, ci)
	}
	return c
}

// SortByTime sorts the epochs in place by time (stable, so equal times keep
// their order) and reports whether they were out of order. The readers sort
// what they read; a Series built by hand must be sorted before analysis.
func (s *Series) SortByTime() bool {
	if sort.Float64sAreSorted(s.Time) {
		return false
	}
	idx := make([]int, s.Len())
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return s.Time[idx[a]] < s.Time[idx[b]] })
	*s = *s.Subset(idx)
	return true
}
