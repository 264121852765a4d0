package indicators

import "math"

// C is the speed of light in vacuum in m/s (exact, SI definition).
const C = 299792458.0

// DopplerFactor returns the relativistic radial Doppler factor
//
//	D(v) = λ_obs/λ_emit = 1 + z = sqrt((1 + β)/(1 − β)),  β = v/c,
//
// for a line-of-sight velocity v in m/s, positive for recession. It has no
// gravitational or transverse terms.
//
// Special cases: |v| ≥ c gives NaN.
func DopplerFactor(v float64) float64 {
	b := v / C
	if math.Abs(b) >= 1 {
		return math.NaN()
	}
	return math.Sqrt((1 + b) / (1 - b))
}

// Velocity inverts DopplerFactor: for a Doppler factor d = 1 + z > 0 it
// returns the radial velocity in m/s,
//
//	v = c · (d² − 1)/(d² + 1).
//
// Special cases: d ≤ 0 gives NaN.
func Velocity(d float64) float64 {
	if !(d > 0) {
		return math.NaN()
	}
	d2 := d * d
	return C * (d2 - 1) / (d2 + 1)
}

// Shift returns the wavelength λ (any unit) of a line emitted at λ by a
// source moving at v m/s: λ · DopplerFactor(v).
func Shift(lambda, v float64) float64 { return lambda * DopplerFactor(v) }

// ShiftSpectrum returns a copy of s whose wavelengths are multiplied by
// DopplerFactor(v) (a source receding at v m/s); fluxes are unchanged.
func ShiftSpectrum(s *Spectrum, v float64) *Spectrum {
	c := s.Clone()
	d := DopplerFactor(v)
	for o := range c.Orders {
		for i := range c.Orders[o].Wavelength {
			c.Orders[o].Wavelength[i] *= d
		}
	}
	return c
}

// LogDopplerFactor returns ln D(v) = artanh(v/c), the shift in ln λ caused
// by a radial velocity v in m/s. It keeps full precision for small v, where
// D(v) − 1 loses digits.
func LogDopplerFactor(v float64) float64 { return math.Atanh(v / C) }

// VelocityFromLog inverts LogDopplerFactor: v = c · tanh(Δ ln λ), in m/s.
func VelocityFromLog(x float64) float64 { return C * math.Tanh(x) }
