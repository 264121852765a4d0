package indicators

// Spectrum is one observed (or simulated) spectrum: one or more orders of
// wavelength and flux, and what is known about the exposure.
//
// A 1-D spectrum is a Spectrum with a single order. Wavelengths are in
// Ångström, increasing within each order, on the scale Vacuum says.
type Spectrum struct {
	// Name says where the spectrum came from (usually its file name); it is
	// used in error messages.
	Name string
	// Orders holds the spectral orders, bluest first.
	Orders []Order
	// Vacuum reports whether wavelengths are vacuum wavelengths (false: air).
	Vacuum bool
	// BJD is the mid-exposure epoch, BJD_TDB in days; 0 when unknown.
	BJD float64
	// BERV is the barycentric correction in m/s to be added to measured
	// velocities; 0 when unknown or already applied.
	BERV float64
	// Header holds the header keywords of the file it was read from (or is to
	// be written with), as strings keyed by keyword.
	Header map[string]string
}

// Order is one spectral order (or a whole 1-D spectrum).
type Order struct {
	// Wavelength holds the pixel-centre wavelengths in Å, strictly increasing.
	Wavelength []float64
	// Flux holds the flux per pixel, ideally in photo-electrons (so that
	// Poisson noise applies); never negative or NaN in a valid spectrum.
	Flux []float64
	// Err holds one-sigma flux errors per pixel; nil means photon noise,
	// sqrt(max(Flux, 0)), is assumed.
	Err []float64
}
