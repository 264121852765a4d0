package indicators

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestMeasureNeverPanics runs Measure on random small spectra and masks:
// flat, zero, spiky or line-free data, masks inside and outside, one-pixel
// orders. Every call must return (an error or a result), never panic.
func TestMeasureNeverPanics(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	for it := 0; it < 150; it++ {
		var s Spectrum
		s.Name = "random"
		s.Vacuum = rng.IntN(2) == 0
		no := 1 + rng.IntN(3)
		for o := 0; o < no; o++ {
			n := 1 + rng.IntN(3000)
			lo := 3800 + 3000*rng.Float64()
			step := math.Pow(10, -6+3*rng.Float64())
			ord := Order{Wavelength: make([]float64, n), Flux: make([]float64, n)}
			kind := rng.IntN(4)
			for i := range ord.Wavelength {
				ord.Wavelength[i] = lo * math.Exp(step*float64(i))
				switch kind {
				case 0:
					ord.Flux[i] = 0
				case 1:
					ord.Flux[i] = 100
				case 2:
					ord.Flux[i] = 1e4 * rng.Float64()
				default:
					ord.Flux[i] = 1e3 * (1 - 0.5*math.Exp(-math.Pow(math.Mod(float64(i), 40)-20, 2)/8))
				}
			}
			s.Orders = append(s.Orders, ord)
		}
		nl := 1 + rng.IntN(200)
		wl := make([]float64, nl)
		wt := make([]float64, nl)
		for i := range wl {
			wl[i] = 3800 + 3100*rng.Float64()
			wt[i] = 0.01 + rng.Float64()
		}
		m, err := NewMask(wl, wt, rng.IntN(2) == 0)
		if err != nil {
			continue
		}
		opts := &Options{RHK: &RHKOptions{BV: 0.3 + rng.Float64()}}
		if rng.IntN(2) == 0 {
			opts.CCF = &CCFOptions{Search: -1, Center: 1e5 * (rng.Float64() - 0.5), HalfWidth: 1e3 + 5e4*rng.Float64(), Step: 50 + 2000*rng.Float64()}
		}
		func() {
			defer func() {
				if r := recover(); r != nil {
					t.Fatalf("iteration %d: panic %v", it, r)
				}
			}()
			Measure(&s, m, opts)
		}()
	}
}
