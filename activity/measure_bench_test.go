package activity

import (
	"fmt"
	"math"
	"math/rand/v2"
	"path/filepath"
	"testing"

	"spotsift/indicators"
)

// BenchmarkMeasure times Measure over n FITS spectra of 300 000 pixels
// (3800–6900 Å, float32 flux) with a given 3000-line mask, all workers
// (GOMAXPROCS). Writing the files is not timed.
func BenchmarkMeasure(b *testing.B) {
	for _, n := range []int{20, 200} {
		b.Run(fmt.Sprintf("spectra=%d,pixels=300000,lines=3000", n), func(b *testing.B) {
			dir := b.TempDir()
			rng := rand.New(rand.NewPCG(1, 1))
			st := newTestStar(rng, 3800, 6900, math.Log(6900.0/3800)/300000, 3000)
			enc := &indicators.FITSEncoder{Float32: true}
			var paths []string
			for i := 0; i < n; i++ {
				s := st.spectrum(20e3+3*math.Sin(float64(i)), 20e3*math.Cos(float64(i)/5), 2460000+float64(i), 1e4, rand.New(rand.NewPCG(7, uint64(i))))
				p := filepath.Join(dir, fmt.Sprintf("s%03d.fits", i))
				if err := enc.EncodeFile(p, s); err != nil {
					b.Fatal(err)
				}
				paths = append(paths, p)
			}
			wl := make([]float64, len(st.lines))
			wt := make([]float64, len(st.lines))
			for i, l := range st.lines {
				wl[i], wt[i] = l.lambda, l.depth
			}
			mask, err := indicators.NewMask(wl, wt, false)
			if err != nil {
				b.Fatal(err)
			}
			opts := &MeasureOptions{Mask: mask, Star: &Star{BV: 0.65, SIndex: SCalibration{A: 12}},
				Indicators: &indicators.Options{CCF: &indicators.CCFOptions{Center: 20e3, Search: -1, HalfWidth: 20e3, Step: 250}}}
			b.ResetTimer()
			for b.Loop() {
				ser, fails, err := Measure(paths, opts)
				if err != nil || ser.Len() != n {
					b.Fatal(err, fails)
				}
			}
		})
	}
}
