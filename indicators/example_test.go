package indicators_test

import (
	"fmt"
	"math"

	"spotsift/indicators"
)

// ExampleMeasure measures a noiseless synthetic spectrum: 40 Gaussian lines
// (σ = 3 km/s) on a grid uniform in ln λ, shifted by +1500 m/s.
func ExampleMeasure() {
	const n, lo, step = 40000, 5000.0, 2e-6
	var lines []float64
	for i := 0; i < 40; i++ {
		lines = append(lines, 5010+float64(i)*2)
	}
	o := indicators.Order{Wavelength: make([]float64, n), Flux: make([]float64, n)}
	d := indicators.DopplerFactor(1500)
	for i := range o.Wavelength {
		w := lo * math.Exp(step*float64(i))
		f := 1.0
		for _, l := range lines {
			dv := indicators.C * math.Log(w/(l*d))
			f *= 1 - 0.5*math.Exp(-0.5*dv*dv/(3000*3000))
		}
		o.Wavelength[i], o.Flux[i] = w, 1e4*f
	}
	spec := &indicators.Spectrum{Name: "example", Orders: []indicators.Order{o}, Vacuum: true}
	weights := make([]float64, len(lines))
	for i := range weights {
		weights[i] = 0.5
	}
	mask, err := indicators.NewMask(lines, weights, true)
	if err != nil {
		fmt.Println(err)
		return
	}
	r, err := indicators.Measure(spec, mask, &indicators.Options{NoIndices: true})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("RV = %.1f ± %.1f m/s\n", r.RV.Value, r.RV.Sigma)
	fmt.Printf("|BIS| < 1 cm/s: %v\n", math.Abs(r.BIS.Value) < 0.01)
	fmt.Printf("contrast = %.3f\n", r.Contrast.Value)
	fmt.Printf("FWHM = %.2f km/s\n", r.FWHM.Value/1000)
	// Output:
	// RV = 1500.0 ± 3.8 m/s
	// |BIS| < 1 cm/s: true
	// contrast = 0.498
	// FWHM = 7.09 km/s
}
