package indicators

import (
	"errors"
	"fmt"
	"strings"
)

// Sentinel errors; test for them with errors.Is.
var (
	ErrNoData          = errors.New("indicators: no data")
	ErrMismatch        = errors.New("indicators: mismatched lengths")
	ErrNotFinite       = errors.New("indicators: value is NaN or infinite")
	ErrNegativeFlux    = errors.New("indicators: negative flux")
	ErrBadError        = errors.New("indicators: flux error is zero, negative or not finite")
	ErrNotIncreasing   = errors.New("indicators: wavelengths not strictly increasing")
	ErrMissingKeyword  = errors.New("indicators: missing keyword")
	ErrBadKeyword      = errors.New("indicators: bad keyword value")
	ErrBadUnit         = errors.New("indicators: unknown wavelength unit")
	ErrBadRank         = errors.New("indicators: image has the wrong number of axes")
	ErrTruncated       = errors.New("indicators: file is truncated")
	ErrNotFITS         = errors.New("indicators: not a FITS file")
	ErrNoSpectrum      = errors.New("indicators: no spectrum found in file")
	ErrMissingColumn   = errors.New("indicators: missing column")
	ErrUnknownScale    = errors.New("indicators: air or vacuum wavelengths not declared")
	ErrNotUniform      = errors.New("indicators: wavelength grid is not uniform")
	ErrBadParameter    = errors.New("indicators: bad parameter")
	ErrOutsideSpectrum = errors.New("indicators: band outside spectrum")
	ErrNoMaskLines     = errors.New("indicators: no mask line inside the spectrum")
	ErrFitFailed       = errors.New("indicators: fit did not converge")
	ErrNoLine          = errors.New("indicators: no absorption line in the CCF")
	ErrScaleMismatch   = errors.New("indicators: air and vacuum scales mixed")
	ErrColourRange     = errors.New("indicators: B-V outside the calibrated range")
	ErrParse           = errors.New("indicators: cannot parse")
	ErrNoColour        = errors.New("indicators: B-V not given")
	ErrNotRequested    = errors.New("indicators: not requested")
	ErrNotRegular      = errors.New("indicators: not a regular file")
	ErrTooLarge        = errors.New("indicators: file too large")
	ErrNotSpectrum     = errors.New("indicators: not a spectrum")
	ErrNoZeroPoint     = errors.New("indicators: the mask has no rest frame, so the index bands cannot be placed (give the systemic velocity or a mask of rest wavelengths)")
)

// FileError reports a problem at a place in a spectrum or mask file. Empty
// fields and negative indices are left out of the message.
type FileError struct {
	// File names the file (or the Spectrum's Name).
	File string
	// HDU is the 0-based header-data unit, -1 when not tied to one.
	HDU int
	// Keyword is the header keyword or table column involved, "" if none.
	Keyword string
	// Line is the 1-based line of a text file, 0 when not tied to one.
	Line int
	// Order and Pixel locate a bad value (0-based), -1 when not tied to one.
	Order, Pixel int
	// Err is the underlying error, usually a sentinel of this package.
	Err error
}

func (e *FileError) Error() string {
	var b strings.Builder
	if e.File != "" {
		b.WriteString(e.File)
	} else {
		b.WriteString("spectrum")
	}
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d", e.Line)
	}
	if e.HDU >= 0 {
		fmt.Fprintf(&b, ": HDU %d", e.HDU)
	}
	if e.Keyword != "" {
		fmt.Fprintf(&b, ": %s", e.Keyword)
	}
	if e.Order >= 0 {
		fmt.Fprintf(&b, ": order %d", e.Order)
	}
	if e.Pixel >= 0 {
		fmt.Fprintf(&b, ": pixel %d", e.Pixel)
	}
	b.WriteString(": ")
	b.WriteString(e.Err.Error())
	return b.String()
}

func (e *FileError) Unwrap() error { return e.Err }

// fileErr builds a FileError tied to a file and optionally an HDU and keyword.
func fileErr(file string, hdu int, key string, err error) *FileError {
	return &FileError{File: file, HDU: hdu, Keyword: key, Order: -1, Pixel: -1, Err: err}
}
