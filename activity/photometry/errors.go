package photometry

import "errors"

// Sentinel errors; wrap them with context (file, row, column).
var (
	// ErrBadLightCurve marks a light curve that cannot be used as given
	// (lengths differ, non-finite or non-positive values, too few points).
	ErrBadLightCurve = errors.New("photometry: bad light curve")
	// ErrNoOverlap marks RVs and a light curve that do not overlap in time.
	ErrNoOverlap = errors.New("photometry: the light curve does not cover the RV epochs")
)
