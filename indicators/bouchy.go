package indicators

import (
	"fmt"
	"math"
)

// PhotonNoiseLimit returns the photon-noise limit of the RV of a spectrum
// in m/s (Bouchy, Pepe & Queloz 2001, A&A 374, 733):
//
//	W(i)   = λ_i² (∂A0/∂λ)_i² / (A0(i) + σ_D²)
//	δV_RMS = c / sqrt(Σ_i W(i)),
//
// with A0 the flux in electrons, ∂A0/∂λ by central differences and σ_D the
// detector noise per pixel in electrons (readNoise). s should be noiseless
// (a template): noise in A0 inflates the derivative and so lowers the
// limit. Pixels at the ends of each order are left out.
func PhotonNoiseLimit(s *Spectrum, readNoise float64) (float64, error) {
	if err := s.validate(true); err != nil {
		return 0, err
	}
	if readNoise < 0 || math.IsNaN(readNoise) {
		return 0, fmt.Errorf("%w: read noise %v", ErrBadParameter, readNoise)
	}
	var sum float64
	for _, o := range s.Orders {
		wl, f := o.Wavelength, o.Flux
		for i := 1; i+1 < len(wl); i++ {
			d := (f[i+1] - f[i-1]) / (wl[i+1] - wl[i-1])
			den := f[i] + readNoise*readNoise
			if den > 0 {
				sum += wl[i] * wl[i] * d * d / den
			}
		}
	}
	if !(sum > 0) {
		return 0, fmt.Errorf("%w: spectrum has no Doppler information", ErrNoLine)
	}
	return C / math.Sqrt(sum), nil
}
