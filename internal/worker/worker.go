// Package worker runs work on goroutines so that a panic in one (a bug)
// becomes an error of the work it was doing instead of ending the
// program: a panic in a goroutine cannot be recovered by the code that
// started it, so every goroutine of spotsift that does real work is
// started through a Group.
//
// The error, a *PanicError, says where the panic happened; its stack is
// kept for debug output (the command line prints it when SPOTSIFT_DEBUG is
// set) and is never part of its message.
package worker

import (
	"errors"
	"fmt"
	"runtime"
	"runtime/debug"
	"strings"
	"sync"
)

// ErrPanic is wrapped by every *PanicError.
var ErrPanic = errors.New("internal error")

// PanicError is a panic caught in a worker or by Catch.
type PanicError struct {
	// Value is what was passed to panic.
	Value any
	// Where is the function that panicked (the first frame outside the
	// Go runtime), "" when unknown.
	Where string
	// Stack is the panicking goroutine's stack: for debug output only.
	Stack []byte
}

// Error says that a bug was met and where, without the panic's own text
// or the stack (program details, not the user's business).
func (e *PanicError) Error() string {
	where := ""
	if e.Where != "" {
		where = " in " + e.Where
	}
	return fmt.Sprintf("%v%s (a bug in spotsift; please report it with the input, and the output of the same command run with SPOTSIFT_DEBUG=1)", ErrPanic, where)
}

// Unwrap makes errors.Is(err, ErrPanic) true.
func (e *PanicError) Unwrap() error { return ErrPanic }

// Debug returns the panic's value and stack, for debug output.
func (e *PanicError) Debug() string {
	return fmt.Sprintf("panic: %v\n\n%s", e.Value, e.Stack)
}

// Recovered turns a value returned by recover into a *PanicError; call it
// in the deferred function itself, so that the stack is the panicking one.
// A value that is already a *PanicError (a worker's panic passed on by
// Rethrow) is returned as it is, with its own stack.
func Recovered(r any) *PanicError {
	if pe, ok := r.(*PanicError); ok {
		return pe
	}
	return &PanicError{Value: r, Where: panicSite(), Stack: debug.Stack()}
}

// panicSite names the function that panicked: the first frame below
// runtime.gopanic outside the runtime.
func panicSite() string {
	pc := make([]uintptr, 64)
	n := runtime.Callers(3, pc)
	frames := runtime.CallersFrames(pc[:n])
	panicking := false
	for {
		f, more := frames.Next()
		switch {
		case f.Function == "runtime.gopanic":
			panicking = true
		case panicking && f.Function != "" && !strings.HasPrefix(f.Function, "runtime."):
			return strings.TrimPrefix(f.Function, "spotsift/")
		}
		if !more {
			return ""
		}
	}
}

// Catch runs f and returns its error, or the panic in f as a *PanicError.
func Catch(f func() error) (err error) {
	defer func() {
		if r := recover(); r != nil {
			err = Recovered(r)
		}
	}()
	return f()
}

// Group is a set of goroutines whose panics are caught; the zero value is
// ready to use. After the first panic, Stopped is closed and Feed stops
// handing out work, so that a pool whose workers all panicked does not
// leave its feeder blocked.
type Group struct {
	wg    sync.WaitGroup
	mu    sync.Mutex
	err   *PanicError
	stop  chan struct{}
	once  sync.Once
	first sync.Once
}

func (g *Group) stopped() chan struct{} {
	g.once.Do(func() { g.stop = make(chan struct{}) })
	return g.stop
}

// Go runs f on a new goroutine of the group.
func (g *Group) Go(f func()) {
	g.stopped()
	g.wg.Add(1)
	go func() {
		defer g.wg.Done()
		defer func() {
			if r := recover(); r != nil {
				pe := Recovered(r)
				g.first.Do(func() {
					g.mu.Lock()
					g.err = pe
					g.mu.Unlock()
					close(g.stop)
				})
			}
		}()
		f()
	}()
}

// Stopped is closed when a goroutine of the group has panicked.
func (g *Group) Stopped() <-chan struct{} { return g.stopped() }

// Feed sends 0, 1, …, n−1 on jobs, stopping early when a goroutine of the
// group has panicked, and closes jobs.
func (g *Group) Feed(jobs chan<- int, n int) {
	defer close(jobs)
	stop := g.stopped()
	for i := 0; i < n; i++ {
		select {
		case jobs <- i:
		case <-stop:
			return
		}
	}
}

// Wait waits for every goroutine of the group and returns the first panic
// as a *PanicError, or nil.
func (g *Group) Wait() error {
	g.wg.Wait()
	g.mu.Lock()
	defer g.mu.Unlock()
	if g.err == nil {
		return nil
	}
	return g.err
}

// Rethrow waits for every goroutine of the group and, if one panicked,
// panics again with its *PanicError in the calling goroutine, where the
// caller's own recovery (a star's, a spectrum's, a fit's, the command's)
// turns it into that work's failure. It is for functions that return no
// error; the others return Wait's.
func (g *Group) Rethrow() {
	if err := g.Wait(); err != nil {
		panic(err)
	}
}
