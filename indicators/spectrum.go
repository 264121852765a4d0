package indicators

import (
	"fmt"
	"math"
)

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
	// Bary says how BERV (or BaryZ) is composed with measured velocities;
	// the zero value, BaryRadial, takes BERV as a purely radial
	// relativistic velocity. Readers set BaryVelocity for a header BERV
	// (see BaryConvention).
	Bary BaryConvention
	// BaryZ is the barycentric redshift z_B when Bary is BaryRedshift.
	BaryZ float64
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
	// sqrt(max(Flux, 1)), is assumed.
	Err []float64
}

// Validate checks that s holds at least one order, that every order's
// slices have equal, non-zero lengths, that wavelengths are finite, positive
// and strictly increasing, that fluxes are finite and not negative, and that
// errors, when given, are finite and positive.
//
// The returned error is a *FileError naming the order and pixel, wrapping
// ErrNoData, ErrMismatch, ErrNotFinite, ErrNotIncreasing, ErrNegativeFlux or
// ErrBadError.
func (s *Spectrum) Validate() error {
	return s.validate(false)
}

func (s *Spectrum) validate(allowNegative bool) error {
	bad := func(o, p int, err error) error {
		return &FileError{File: s.Name, HDU: -1, Order: o, Pixel: p, Err: err}
	}
	if len(s.Orders) == 0 {
		return bad(-1, -1, ErrNoData)
	}
	for o := range s.Orders {
		ord := &s.Orders[o]
		n := len(ord.Wavelength)
		if n == 0 {
			return bad(o, -1, ErrNoData)
		}
		if len(ord.Flux) != n || (ord.Err != nil && len(ord.Err) != n) {
			return bad(o, -1, ErrMismatch)
		}
		// Fast path: one comparison catches NaN, ±Inf and out-of-range
		// values; the slow loops below only run to describe a failure.
		prev := 0.0
		ok := true
		for _, w := range ord.Wavelength {
			if !(w > prev) || w-w != 0 {
				ok = false
				break
			}
			prev = w
		}
		if ok {
			for _, f := range ord.Flux {
				if f-f != 0 || (f < 0 && !allowNegative) {
					ok = false
					break
				}
			}
		}
		if ok {
			for _, e := range ord.Err {
				if !(e > 0) || e-e != 0 {
					ok = false
					break
				}
			}
		}
		if ok {
			continue
		}
		for i, w := range ord.Wavelength {
			if math.IsNaN(w) || math.IsInf(w, 0) || w <= 0 {
				return bad(o, i, fmt.Errorf("%w: wavelength %v", ErrNotFinite, w))
			}
			if i > 0 && w <= ord.Wavelength[i-1] {
				return bad(o, i, fmt.Errorf("%w: %v after %v", ErrNotIncreasing, w, ord.Wavelength[i-1]))
			}
		}
		for i, f := range ord.Flux {
			if math.IsNaN(f) || math.IsInf(f, 0) {
				return bad(o, i, fmt.Errorf("%w: flux %v", ErrNotFinite, f))
			}
			if f < 0 && !allowNegative {
				return bad(o, i, fmt.Errorf("%w: %v", ErrNegativeFlux, f))
			}
		}
		for i, e := range ord.Err {
			if !(e > 0) || math.IsInf(e, 0) {
				return bad(o, i, fmt.Errorf("%w: %v", ErrBadError, e))
			}
		}
	}
	return nil
}

// Clone returns a deep copy of s.
func (s *Spectrum) Clone() *Spectrum {
	c := *s
	c.Orders = make([]Order, len(s.Orders))
	for i, o := range s.Orders {
		c.Orders[i] = Order{
			Wavelength: append([]float64(nil), o.Wavelength...),
			Flux:       append([]float64(nil), o.Flux...),
		}
		if o.Err != nil {
			c.Orders[i].Err = append([]float64(nil), o.Err...)
		}
	}
	if s.Header != nil {
		c.Header = make(map[string]string, len(s.Header))
		for k, v := range s.Header {
			c.Header[k] = v
		}
	}
	return &c
}
