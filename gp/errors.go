package gp

import (
	"errors"
	"fmt"
)

// Sentinel errors returned by the gp package. Callers test for them with
// errors.Is; most are wrapped with the name of the offending parameter or
// index.
var (
	// ErrBadParam reports a hyperparameter outside its valid range
	// (a non-positive time scale or amplitude, NaN, ±Inf).
	ErrBadParam = errors.New("gp: bad hyperparameter")

	// ErrParamCount reports a parameter vector of the wrong length.
	ErrParamCount = errors.New("gp: wrong number of parameters")

	// ErrLength reports slices of mismatched length.
	ErrLength = errors.New("gp: mismatched lengths")

	// ErrNoData reports an empty input.
	ErrNoData = errors.New("gp: no data")

	// ErrNaN reports a NaN or infinite value in the input data.
	ErrNaN = errors.New("gp: NaN or infinite value")

	// ErrUnsorted reports times that are not in non-decreasing order where
	// the semiseparable solver needs them sorted.
	ErrUnsorted = errors.New("gp: times not sorted")

	// ErrNegativeVariance reports a negative per-point variance or jitter.
	ErrNegativeVariance = errors.New("gp: negative variance")

	// ErrNotPositiveDefinite reports a covariance matrix that could not be
	// factorised, even after the allowed diagonal jitter was added.
	ErrNotPositiveDefinite = errors.New("gp: covariance not positive definite")

	// ErrNotSemiseparable reports a kernel that cannot be written as a sum
	// of exponential-cosine terms and so cannot use the semiseparable solver.
	ErrNotSemiseparable = errors.New("gp: kernel is not semiseparable")

	// ErrNotDifferentiable reports a kernel without the time derivatives
	// needed by the multi-output model.
	ErrNotDifferentiable = errors.New("gp: kernel has no time derivatives")

	// ErrNoGradient reports a kernel without hyperparameter gradients.
	ErrNoGradient = errors.New("gp: kernel has no hyperparameter gradient")

	// ErrPeriodTooShort reports a period shorter than the sampling can
	// resolve (see CheckPeriod).
	ErrPeriodTooShort = errors.New("gp: period shorter than the cadence allows")

	// ErrInstrument reports an instrument index outside the jitter list.
	ErrInstrument = errors.New("gp: instrument index out of range")

	// ErrSeries reports a malformed multi-output series.
	ErrSeries = errors.New("gp: bad series")

	// ErrFit reports a hyperparameter fit that did not converge.
	ErrFit = errors.New("gp: fit failed")
)

// ParamError reports a bad hyperparameter by kernel and name.
type ParamError struct {
	Kernel string  // kernel type, e.g. "QuasiPeriodic"
	Name   string  // parameter name, e.g. "Eta2"
	Value  float64 // offending value
	Reason string  // short explanation, e.g. "must be positive"
}

// Error formats the kernel, parameter, value and reason.
func (e *ParamError) Error() string {
	return fmt.Sprintf("gp: %s.%s = %g: %s", e.Kernel, e.Name, e.Value, e.Reason)
}

// Unwrap returns ErrBadParam.
func (e *ParamError) Unwrap() error { return ErrBadParam }

// IndexError reports a bad value at a position of an input slice.
type IndexError struct {
	Slice string // slice name, e.g. "t" or "variance"
	Index int    // zero-based index
	Value float64
	Err   error // sentinel, e.g. ErrNaN
}

// Error formats the sentinel, slice name, index and value.
func (e *IndexError) Error() string {
	return fmt.Sprintf("%v: %s[%d] = %g", e.Err, e.Slice, e.Index, e.Value)
}

// Unwrap returns the sentinel.
func (e *IndexError) Unwrap() error { return e.Err }

func positive(kernel, name string, v float64) error {
	if !(v > 0) || isInf(v) {
		return &ParamError{Kernel: kernel, Name: name, Value: v, Reason: "must be positive and finite"}
	}
	return nil
}

func nonNegative(kernel, name string, v float64) error {
	if !(v >= 0) || isInf(v) {
		return &ParamError{Kernel: kernel, Name: name, Value: v, Reason: "must be non-negative and finite"}
	}
	return nil
}

func isInf(v float64) bool { return v > 1.7976931348623157e308 || v < -1.7976931348623157e308 }

func isBad(v float64) bool { return v != v || isInf(v) }
