package starsim

import (
	"fmt"
	"runtime"
	"sync/atomic"
	"testing"

	"spotsift/indicators"
)

// benchScenario is an active star observed nightly with a full spectrum of
// the given size; MaxEpochs caps the epochs.
func benchScenario(epochs, pixels int) *Scenario {
	return &Scenario{
		Name:        "bench",
		Star:        Star{VEq: 3, RotationPeriod: 12, ConvectiveBlueshift: 300},
		Activity:    Activity{EmergenceRate: 0.3},
		Planets:     []Planet{{Period: 5.1, K: 4}},
		Observing:   Observing{Start: 2460000.6, End: 2461000.6, MaxEpochs: epochs},
		Instruments: []Instrument{{Name: "A", Resolution: 115000, SNR: 120}},
		Spectrum:    SpectrumPlan{Full: true, Pixels: pixels},
	}
}

// BenchmarkSpectra measures making full spectra (3800–6900 Å, 3000 lines,
// photon noise) for every epoch of a simulation, streamed through
// EachSpectrum on GOMAXPROCS workers; Simulate itself (the tables) is
// included. It reports the peak heap in use (sampled after each spectrum).
func BenchmarkSpectra(b *testing.B) {
	for _, c := range []struct{ epochs, pixels int }{{20, 300000}, {200, 300000}} {
		b.Run(fmt.Sprintf("epochs=%d,pixels=%d", c.epochs, c.pixels), func(b *testing.B) {
			sc := benchScenario(c.epochs, c.pixels)
			var peak atomic.Uint64
			for b.Loop() {
				res, err := Simulate(sc, 1, nil)
				if err != nil {
					b.Fatal(err)
				}
				if res.Len() != c.epochs {
					b.Fatalf("%d epochs, want %d", res.Len(), c.epochs)
				}
				err = res.EachSpectrum(0, func(i int, s *indicators.Spectrum) error {
					if i%10 == 0 {
						var ms runtime.MemStats
						runtime.ReadMemStats(&ms)
						if ms.HeapInuse > peak.Load() {
							peak.Store(ms.HeapInuse)
						}
					}
					return nil
				})
				if err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(peak.Load())/1e6, "peak-heap-MB")
		})
	}
}

// BenchmarkSimulate measures the table-only simulation (profiles, fits, the
// Ca II window for the S-index) per number of epochs.
func BenchmarkSimulate(b *testing.B) {
	for _, n := range []int{50, 200} {
		b.Run(fmt.Sprintf("epochs=%d", n), func(b *testing.B) {
			sc := benchScenario(n, 300000)
			sc.Spectrum.Full = false
			for b.Loop() {
				if _, err := Simulate(sc, 1, nil); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
