// Package indicators turns one spectrum into numbers: reading spectra, Doppler
// shifts, air/vacuum conversion, line masks, the cross-correlation function,
// RV and its photon-noise error, FWHM, contrast, bisector span, per-order RVs
// and chromospheric indices.
//
// It imports neither rvfit nor activity.
package indicators
