package worker

import (
	"errors"
	"strings"
	"testing"
	"time"
)

// explode panics with an index out of range, as a bug would.
func explode(i int) int {
	var a []int
	return a[i]
}

// A panic in one of a pool's workers comes back from Wait as a
// *PanicError naming the function that panicked; its message holds no
// stack and no panic text, its debug output both.
func TestGroupPanic(t *testing.T) {
	var g Group
	jobs := make(chan int)
	out := make([]int, 100)
	for range 4 {
		g.Go(func() {
			for i := range jobs {
				if i == 37 {
					out[i] = explode(i)
				}
				out[i] = i
			}
		})
	}
	g.Feed(jobs, len(out))
	err := g.Wait()
	var pe *PanicError
	if !errors.As(err, &pe) || !errors.Is(err, ErrPanic) {
		t.Fatalf("Wait = %v, want a *PanicError", err)
	}
	if pe.Where != "internal/worker.explode" {
		t.Errorf("Where = %q, want internal/worker.explode", pe.Where)
	}
	msg := err.Error()
	for _, bad := range []string{"goroutine ", "panic:", "runtime error", "index out of range", ".go:"} {
		if strings.Contains(msg, bad) {
			t.Errorf("the message holds %q: %s", bad, msg)
		}
	}
	if !strings.Contains(pe.Debug(), "index out of range") || !strings.Contains(pe.Debug(), "worker.explode") {
		t.Errorf("the debug output lacks the panic or its stack:\n%s", pe.Debug())
	}
}

// When every worker panics, the feeder is not left blocked.
func TestGroupAllPanic(t *testing.T) {
	done := make(chan error, 1)
	go func() {
		var g Group
		jobs := make(chan int)
		for range 3 {
			g.Go(func() {
				for range jobs {
					panic("always")
				}
			})
		}
		g.Feed(jobs, 1000)
		done <- g.Wait()
	}()
	select {
	case err := <-done:
		if !errors.Is(err, ErrPanic) {
			t.Errorf("Wait = %v, want ErrPanic", err)
		}
	case <-time.After(time.Minute): // generous: it takes microseconds
		t.Fatal("the feeder is blocked")
	}
}

// Rethrow passes a worker's panic on to the calling goroutine, where a
// Catch turns it into an error that keeps the worker's stack.
func TestRethrowCatch(t *testing.T) {
	err := Catch(func() error {
		var g Group
		g.Go(func() { explode(3) })
		g.Rethrow()
		return nil
	})
	var pe *PanicError
	if !errors.As(err, &pe) || pe.Where != "internal/worker.explode" || !strings.Contains(string(pe.Stack), "explode") {
		t.Fatalf("Catch = %v (%+v), want the worker's *PanicError", err, pe)
	}
	// No panic: nil, and an ordinary error passes through.
	var g Group
	g.Go(func() {})
	if err := g.Wait(); err != nil {
		t.Errorf("Wait without a panic = %v", err)
	}
	want := errors.New("plain")
	if err := Catch(func() error { return want }); err != want {
		t.Errorf("Catch = %v, want %v", err, want)
	}
}
