// Package starsim simulates a rotating star with dark spots and bright
// faculae, observed with a precise spectrograph, so that downstream code can
// be tested on observations whose truth is known.
//
// # Model
//
// The visible disk is a square grid of cells in the sky plane (x to the
// right, y along the projected rotation axis, both in units of the stellar
// radius). Each cell emits a Gaussian absorption line of intrinsic width
// Star.LineSigma, Doppler-shifted by the cell's rotation velocity
//
//	v = x · v_eq sin i · (1 − α sin²θ)
//
// (θ the latitude, α the differential-rotation shear) and by a convective
// blueshift −v_cb·μ, weighted by quadratic limb darkening
//
//	I(μ)/I(1) = 1 − u1(1 − μ) − u2(1 − μ)²
//
// Active regions (a dark spot core and a bright facular surround) emerge at
// random latitudes and longitudes, grow and decay over a few rotations, and
// change the weights and velocities of the cells they cover: spots by the
// Planck-law intensity ratio at the wavelength, faculae by a contrast that
// grows as (1 − μ) toward the limb; both suppress the convective blueshift.
// The disk-integrated line profile of each epoch yields the activity
// radial velocity (a Gaussian fit, as a cross-correlation function would
// be fitted), the FWHM, the bisector span and the contrast.
//
// A full spectrum is a continuum with a seeded list of invented absorption
// lines in 3800–6900 Å plus Ca II H and K, H-alpha and Na I D at their air
// laboratory wavelengths, with chromospheric emission cores that strengthen
// with the visible facular coverage; every line is broadened by that epoch's
// disk profile on a log-linear wavelength grid. Planets add Keplerian
// velocities applied as a relativistic Doppler factor to the whole spectrum.
//
// # Use
//
// A Scenario (read from TOML by ParseScenario or ReadScenario, or taken from
// DemoScenarios) and a seed determine everything:
//
//	sc, err := starsim.ReadScenario("star.toml") // or DemoScenario("quiet-planet")
//	res, err := starsim.Simulate(sc, seed, nil)
//	series := res.Series()          // measured per-epoch table (rvfit.Series)
//	prof, err := res.Profile(i)     // noise-free disk-integrated profile of epoch i
//	spec, err := res.Spectrum(i)    // full spectrum of epoch i, made on demand
//	err = res.EachSpectrum(0, fn)   // every spectrum, streamed in parallel
//	wl, depth := res.LineList()     // the invented lines, a ready CCF mask
//	err = res.WriteFiles(dir, nil)  // scenario, truth, table, FITS spectra
//
// res.Epochs holds the truth of every epoch (activity RV, each planet's RV,
// filling factors, flux, noise-free indicators) next to the simulated
// measurements. Spectra are made lazily, one epoch at a time per worker, so
// memory stays bounded whatever the number of epochs.
//
// # Conventions
//
// Times are BJD_TDB in days, velocities m/s (km/s inside the disk model),
// wavelengths Å in air. Spectra are in the barycentric frame (no BERV is
// simulated). Random draws come from PCG streams of the seed, one stream per
// concern (schedule, regions, line list, each epoch's table noise, each
// epoch's spectrum noise), so the same scenario and seed give the same
// bytes, whatever the number of workers.
package starsim
