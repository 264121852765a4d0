package rvfit

import (
	"errors"
	"strings"
	"testing"

	"spotsift/internal/worker"
)

// A panic in the log-probability, evaluated on the sampler's worker
// goroutines, ends the sampling with an error wrapping worker.ErrPanic,
// not a crash; the message holds neither the panic's text nor a stack.
func TestSampleEnsemblePanicIsError(t *testing.T) {
	logp := func(x []float64) float64 {
		if x[0] > 0.5 {
			var m map[string]int
			m["x"]++ // a bug: assignment to a nil map
		}
		return -0.5 * x[0] * x[0]
	}
	init := [][]float64{{0.1}, {-0.1}, {0.2}, {-0.2}}
	_, err := SampleEnsemble(logp, init, &EnsembleOptions{Steps: 500, Workers: 2})
	if !errors.Is(err, worker.ErrPanic) {
		t.Fatalf("SampleEnsemble = %v, want an error wrapping worker.ErrPanic", err)
	}
	for _, bad := range []string{"nil map", "goroutine ", "panic:", ".go:"} {
		if strings.Contains(err.Error(), bad) {
			t.Errorf("message %q holds %q", err, bad)
		}
	}
}
