package activity

import (
	"context"
	"testing"
)

// BenchmarkDiagnose is the diagnosis with default settings on about 200
// epochs with three indicators (the benchmark for vet).
func BenchmarkDiagnose(b *testing.B) {
	s := synth(11, 1.0, func(t float64) float64 { return sine(4, 9.7, 0)(t) + sine(3, 13.1, 1)(t) },
		map[string]func(float64) float64{"fwhm": sine(10, 13.1, 1.3), "bis": sine(-2, 13.1, 1), "s_index": sine(0.01, 26.2, 0.2)},
		map[string]float64{"fwhm": 3, "bis": 1, "s_index": 0.003})
	b.Logf("%d epochs", s.Len())
	for _, c := range []struct {
		name         string
		skip, single bool
	}{{"multi-output", false, false}, {"rv-only-gp", false, true}, {"no-gp", true, false}} {
		b.Run(c.name, func(b *testing.B) {
			for b.Loop() {
				if _, err := Diagnose(context.Background(), s, &Options{Star: &Star{Name: "b", BV: 0.7}, Seed: 1, SkipModels: c.skip, SingleOutput: c.single}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
