// Package photometry reads light curves and measures from them what the
// verdict on an RV signal needs: the star's rotation period (GLS
// periodogram, autocorrelation function, Gaussian-process fit with a
// rotation kernel, each with its uncertainty, and whether they agree) and
// the radial velocity the spots predict by the FF' method (Aigrain, Pont &
// Zucker 2012).
//
// A light curve is read with rvfit's table readers, column mapping and
// unit rules (CSV, TSV or FITS binary tables); its value column is "flux"
// or "mag", its uncertainty "flux_err" or "mag_err", and an optional
// "sector" column labels sectors or seasons, each normalised by its own
// median (its own offset). Inside the package a light curve is always
// relative flux (median 1 in every sector).
//
// The package imports rvfit and gp but not activity: the diagnosis calls
// it (activity.Options.LightCurve).
package photometry
