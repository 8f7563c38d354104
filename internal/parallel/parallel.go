// Package parallel runs the iterations of a loop on several goroutines,
// the one worker pool of basin.
//
// [For] calls body(ctx, i, state) for i in [0, n) on at most a given
// number of workers, each with its own state (scratch buffers made once
// per worker), and returns after every call has returned. Results go in by
// index (body writes out[i]), so the outcome does not depend on
// scheduling. A failure cancels the iterations after it, never those
// before, so the error returned is that of the lowest failing index and
// is the same from run to run. A panic in body is
// recovered and returned as a *[PanicError] (a panic in a worker would
// otherwise end the process with exit code 2, the contract's code for bad
// input).
//
// basin screen's file pool (cmd/basin/screen.go) and validate.ScreenRuns
// use it too.
package parallel

import (
	"context"
	"fmt"
	"runtime"
	"runtime/debug"
	"sync"
	"sync/atomic"
)

// A PanicError is a panic recovered from one iteration.
type PanicError struct {
	Index int    // the iteration that panicked
	Value any    // the value passed to panic
	Stack []byte // the goroutine's stack at the panic
}

func (e *PanicError) Error() string {
	return fmt.Sprintf("internal error in parallel iteration %d: %v", e.Index, e.Value)
}

// Unwrap returns the panic value when it is an error.
func (e *PanicError) Unwrap() error {
	err, _ := e.Value.(error)
	return err
}

// Workers returns w when it is positive, else runtime.GOMAXPROCS(0).
func Workers(w int) int {
	if w > 0 {
		return w
	}
	return runtime.GOMAXPROCS(0)
}

// For calls body(ctx, i, s) for every i in [0, n) on at most workers
// goroutines (0 means GOMAXPROCS), where s comes from newState, called
// once per worker goroutine (nil newState gives the zero S). Iterations
// are handed out in increasing order, each with its own context. When
// iteration i returns an error or panics, the iterations after i are
// cancelled (those running see their context done; those not started are
// skipped) and the ones before i go on, so the error For returns is that
// of the lowest failing index, whatever the timing. If only ctx stopped
// the loop, For returns ctx's error.
func For[S any](ctx context.Context, n, workers int, newState func() S, body func(ctx context.Context, i int, s S) error) error {
	if n <= 0 {
		return ctx.Err()
	}
	w := min(Workers(workers), n)
	errs := make([]error, n)
	cancels := make([]context.CancelFunc, n)
	var mu sync.Mutex
	firstBad := n // lowest failed index so far
	start := func(i int) (context.Context, bool) {
		mu.Lock()
		defer mu.Unlock()
		if i > firstBad || ctx.Err() != nil {
			return nil, false
		}
		c, cancel := context.WithCancel(ctx)
		cancels[i] = cancel
		return c, true
	}
	finish := func(i int, err error) {
		mu.Lock()
		defer mu.Unlock()
		cancels[i]()
		cancels[i] = nil
		if err == nil || i >= firstBad {
			return
		}
		errs[i] = err
		for j := i + 1; j < n; j++ {
			if cancels[j] != nil {
				cancels[j]()
			}
		}
		firstBad = i
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for range w {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var s S
			var stateErr error
			if newState != nil {
				stateErr = call(-1, func() error { s = newState(); return nil })
			}
			for {
				i := int(next.Add(1) - 1)
				if i >= n {
					return
				}
				c, ok := start(i)
				if !ok {
					continue
				}
				err := stateErr
				if err == nil {
					err = call(i, func() error { return body(c, i, s) })
				}
				finish(i, err)
			}
		}()
	}
	wg.Wait()
	if firstBad < n {
		return errs[firstBad]
	}
	return ctx.Err()
}

// Map calls fn(ctx, i) for every i in [0, n) as [For] does and returns
// the results in index order.
func Map[T any](ctx context.Context, n, workers int, fn func(ctx context.Context, i int) (T, error)) ([]T, error) {
	out := make([]T, max(n, 0))
	err := For(ctx, n, workers, nil, func(ctx context.Context, i int, _ struct{}) error {
		v, err := fn(ctx, i)
		out[i] = v
		return err
	})
	return out, err
}

// call runs f, turning a panic into a *PanicError for iteration i.
func call(i int, f func() error) (err error) {
	defer func() {
		if v := recover(); v != nil {
			err = &PanicError{Index: i, Value: v, Stack: debug.Stack()}
		}
	}()
	return f()
}
