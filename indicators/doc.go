// Package indicators turns one spectrum into numbers: reading spectra, Doppler
// shifts, air/vacuum conversion, line masks, the cross-correlation function,
// RV and its photon-noise error, FWHM, contrast, bisector span, per-order RVs
// and chromospheric indices.
//
// It imports neither rvfit nor activity.
//
// # Reading and writing
//
// ReadFile reads a FITS or text spectrum into a Spectrum (ReadFITS,
// ReadText): 1-D images with a linear or logarithmic wavelength WCS, 2-D
// echelle images with a wavelength extension, binary tables, or text columns.
// ReadOptions declare air or vacuum wavelengths, name the epoch and
// barycentric-correction keywords, and choose columns. WriteFITS and
// WriteFITSFile write the layouts ReadFITS reads; the output passes the
// HEASARC fitsverify checks. Every error names the file and, where it
// applies, the HDU, keyword, line, order and pixel.
//
// # Measuring
//
// Measure takes a Spectrum and a Mask (ReadMask, NewMask, or BuildMask from
// the star's own spectra) and returns a Result holding every quantity as an
// Estimate: a value with its photon-noise uncertainty, or the error that
// kept it from being measured, so that one failed index does not lose the
// others:
//
//	r, err := indicators.Measure(spec, mask, nil)
//	if err != nil {
//		// the spectrum is invalid or no mask line falls inside it
//	}
//	fmt.Println(r.RV.Value, r.RV.Sigma, r.BIS.Value, r.SIndex.Err)
//
// The CCF (ComputeCCF) is computed order by order with fractional pixel
// overlap, in one walk over the pixels: each pixel inside a mask line's
// window gives the run of grid velocities whose hole it overlaps. Because
// the CCF is linear in the pixel fluxes, the same walk builds its
// photon-noise covariance (a band per order or chunk, from each line with
// itself, and the pixels several lines share), and the errors of RV, FWHM,
// contrast, BIS, the bi-Gaussian ΔV, Vspan and the per-order RVs follow
// exactly from the pixel errors through the linearised fits, as quadratic
// forms of that covariance, correlations between CCF bins included.
//
// Velocities are in m/s, wavelengths in Å (air or vacuum as the Spectrum or
// Mask says; masks and index bands are converted to the spectrum's scale).
package indicators
