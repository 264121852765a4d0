package mapfit

import (
	"errors"
	"strings"
	"testing"

	"spotsift/internal/worker"
)

// A panic in the posterior, evaluated on the fit's worker goroutines, is
// returned as an error (wrapping worker.ErrPanic, naming the function
// that panicked), not raised: the program goes on.
func TestFitPanicIsError(t *testing.T) {
	logp := func(x []float64) float64 {
		if x[0] > 3 {
			var a []float64
			return a[len(x)] // a bug: index out of range
		}
		return -x[0] * x[0]
	}
	p := &Problem{Space: Space{{Name: "x", Kind: Free}}, LogPost: logp, Starts: [][]float64{{1}, {5}, {-2}}}
	_, err := Fit(p, &Settings{Workers: 3})
	if !errors.Is(err, worker.ErrPanic) {
		t.Fatalf("Fit = %v, want an error wrapping worker.ErrPanic", err)
	}
	if !strings.Contains(err.Error(), "TestFitPanicIsError") || strings.Contains(err.Error(), "index out of range") {
		t.Errorf("message %q: want the panicking function, without the panic text", err)
	}
}
