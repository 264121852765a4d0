package survey

import (
	"context"
	"fmt"
	"testing"
	"time"
)

// BenchmarkSurvey measures a survey of 50 simulated stars from RV tables
// (alternating the two demo scenarios, 160-240 epochs each) with 1 and 2
// workers, without the GP fits (gp=off) and with them (gp=on), and reports
// stars per minute. The stars are simulated once, outside the timer; every
// iteration reanalyses them all (Force). Run with -benchtime=1x: one
// iteration of gp=on takes of the order of a minute.
func BenchmarkSurvey(b *testing.B) {
	const n = 50
	stars := simSample(b, b.TempDir(), n)
	m := manifestOf(stars)
	for _, gp := range []bool{false, true} {
		for _, w := range []int{1, 2} {
			name := fmt.Sprintf("stars=%d/workers=%d/gp=%s", n, w, map[bool]string{false: "off", true: "on"}[gp])
			b.Run(name, func(b *testing.B) {
				out := b.TempDir()
				o := &Options{Workers: w, Seed: 1, SkipModels: !gp, Force: true, Version: "bench"}
				start := time.Now()
				for i := 0; i < b.N; i++ {
					if _, err := Run(context.Background(), m, out, o); err != nil {
						b.Fatal(err)
					}
				}
				b.ReportMetric(float64(n*b.N)/time.Since(start).Minutes(), "stars/min")
			})
		}
	}
}
