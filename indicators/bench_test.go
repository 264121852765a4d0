package indicators

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// BenchmarkMeasure times Measure (CCF, Gaussian and bi-Gaussian fits, BIS,
// per-chunk RVs and chromatic slope, every error propagated, S, H-alpha,
// Na D) on one spectrum of 300 000 pixels (3800–6900 Å) with a 3000-line
// mask over 161 velocity steps (±20 km/s at 250 m/s). "search" includes
// the default coarse line search; "fixed" centres the grid on a given
// velocity; "serial" keeps to one goroutine (as when many spectra are
// measured at once).
func BenchmarkMeasure(b *testing.B) {
	for _, size := range []struct{ pix, lines int }{{30000, 300}, {300000, 3000}} {
		rng := rand.New(rand.NewPCG(1, 1))
		step := 0.0
		{
			// ln(6900/3800)/pix
			step = 0.5966 / float64(size.pix)
		}
		st := newSynthStar(rng, 3800, 6900, step, size.lines, 1e4)
		s := addNoise(st.spectrum(1234), rng)
		m := st.mask()
		for _, mode := range []string{"search", "fixed", "fixed,serial"} {
			opts := &Options{CCF: &CCFOptions{HalfWidth: 20e3, Step: 250}}
			if mode != "search" {
				opts.CCF.Search = -1
				opts.CCF.Center = 1000
			}
			opts.CCF.Serial = mode == "fixed,serial"
			b.Run(fmt.Sprintf("pixels=%d,lines=%d,steps=161,%s", size.pix, size.lines, mode), func(b *testing.B) {
				for b.Loop() {
					r, err := Measure(s, m, opts)
					if err != nil || !r.RV.OK() || len(r.CCF.V) != 161 {
						b.Fatal(err, r.RV.Err)
					}
				}
			})
		}
	}
}

// BenchmarkCCF times ComputeCCF alone on the same spectra (no fits, no
// error propagation).
func BenchmarkCCF(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 1))
	st := newSynthStar(rng, 3800, 6900, 0.5966/300000, 3000, 1e4)
	s := st.spectrum(1234)
	m := st.mask()
	opts := &CCFOptions{HalfWidth: 20e3, Step: 250, Search: -1, Center: 1000}
	b.Run("pixels=300000,lines=3000,steps=161", func(b *testing.B) {
		for b.Loop() {
			if _, err := ComputeCCF(s, m, opts); err != nil {
				b.Fatal(err)
			}
		}
	})
}
