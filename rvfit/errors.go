package rvfit

import (
	"errors"
	"fmt"
)

// Sentinel errors; test for them with errors.Is.
var (
	ErrNoObservations  = errors.New("rvfit: no observations")
	ErrTooFewEpochs    = errors.New("rvfit: too few epochs")
	ErrMissingColumn   = errors.New("rvfit: missing required column")
	ErrNotNumber       = errors.New("rvfit: not a number")
	ErrNotFinite       = errors.New("rvfit: value is NaN or infinite")
	ErrBadUncertainty  = errors.New("rvfit: uncertainty is zero or negative")
	ErrDuplicateEpoch  = errors.New("rvfit: duplicate epoch")
	ErrConstantColumn  = errors.New("rvfit: column is constant")
	ErrFieldCount      = errors.New("rvfit: wrong number of fields")
	ErrDuplicateColumn = errors.New("rvfit: duplicate column")
	ErrBadUnit         = errors.New("rvfit: unknown unit")
	ErrBadMapping      = errors.New("rvfit: bad column mapping")
	ErrBadFormat       = errors.New("rvfit: bad table format")
	ErrMismatch        = errors.New("rvfit: mismatched lengths")
	ErrImplausible     = errors.New("rvfit: value not plausible for its quantity")
	ErrNotRegular      = errors.New("rvfit: not a regular file")
	ErrUnsorted        = errors.New("rvfit: epochs not in time order")
)

// TableError reports a problem at a place in a table file. Line is the
// 1-based line of a text table or the 1-based row of a FITS table (0 when
// the problem is not tied to a row); Column is the column's name in the file
// ("" when not tied to a column).
type TableError struct {
	File   string
	Line   int
	Column string
	Err    error
}

func (e *TableError) Error() string {
	s := e.File
	if s == "" {
		s = "table"
	}
	if e.Line > 0 {
		s += fmt.Sprintf(":%d", e.Line)
	}
	if e.Column != "" {
		s += fmt.Sprintf(": column %q", e.Column)
	}
	return s + ": " + e.Err.Error()
}

func (e *TableError) Unwrap() error { return e.Err }
