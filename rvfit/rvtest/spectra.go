package rvtest

import (
	"fmt"
	"math"
	"math/rand/v2"
	"path/filepath"
	"testing"

	"spotsift/indicators"
)

// LabSpectra writes n FITS spectra (sa.fits, sb.fits, …; 3880–6600 Å in
// air, log-linear, resolving power about 170 000) of a star of systemic
// velocity vsys (m/s): every line of indicators.LabLines (depths 0.3–0.8,
// 3 km/s wide), broad Ca II H and K, Na D and H-alpha (40 km/s), the
// continuum at 10^4 counts with 1% noise, epochs 3 days apart and
// barycentric corrections of ±20 km/s; every draw from a fixed seed.
// moved, when not nil, draws the broad line of a laboratory wavelength
// (Å, air: 3933.663, 3968.468, 5889.951, 5895.924 or 6562.797) at
// another one, as a spectrum whose index bands miss their line.
func LabSpectra(tb testing.TB, dir string, n int, vsys float64, moved map[float64]float64) {
	tb.Helper()
	rng := rand.New(rand.NewPCG(2, 2))
	type line struct{ lambda, depth, sigma float64 }
	var lines []line
	for _, l := range indicators.LabLines {
		lines = append(lines, line{l.Air, 0.3 + 0.5*rng.Float64(), 3000})
	}
	for _, c := range []float64{3933.663, 3968.468, 5889.951, 5895.924, 6562.797} {
		at := c
		if m, ok := moved[c]; ok {
			at = m
		}
		lines = append(lines, line{at, 0.8, 40e3})
	}
	const lo, step = 3880.0, 6e-6
	npix := int(math.Log(6600/lo) / step)
	for k := 0; k < n; k++ {
		berv := 20e3 * math.Cos(float64(k))
		d := indicators.DopplerFactor(vsys) / indicators.DopplerFactor(berv)
		o := indicators.Order{Wavelength: make([]float64, npix), Flux: make([]float64, npix)}
		for i := range o.Wavelength {
			o.Wavelength[i] = lo * math.Exp(step*float64(i))
			o.Flux[i] = 1
		}
		for _, l := range lines {
			c := l.lambda * d
			for i := max(0, int(math.Log(c*(1-8*l.sigma/indicators.C)/lo)/step)); i < npix && o.Wavelength[i] < c*(1+8*l.sigma/indicators.C); i++ {
				u := indicators.C * math.Log(o.Wavelength[i]/c) / l.sigma
				o.Flux[i] *= 1 - l.depth*math.Exp(-0.5*u*u)
			}
		}
		for i, f := range o.Flux {
			o.Flux[i] = math.Max(0, 1e4*f+100*f*rng.NormFloat64())
		}
		s := &indicators.Spectrum{Orders: []indicators.Order{o}, BJD: 2460000.5 + 3*float64(k), BERV: berv}
		name := fmt.Sprintf("s%c.fits", 'a'+k)
		if k >= 26 {
			name = fmt.Sprintf("sz%03d.fits", k)
		}
		if err := indicators.WriteFITSFile(filepath.Join(dir, name), s); err != nil {
			tb.Fatal(err)
		}
	}
}
