package parallel

import (
	"context"
	"errors"
	"fmt"
	"runtime"
	"sync/atomic"
	"testing"
)

func TestMapOrdered(t *testing.T) {
	t.Parallel()
	for _, w := range []int{0, 1, 3, 64} {
		got, err := Map(context.Background(), 1000, w, func(_ context.Context, i int) (int, error) { return i * i, nil })
		if err != nil {
			t.Fatal(err)
		}
		for i, v := range got {
			if v != i*i {
				t.Fatalf("workers %d: out[%d] = %d", w, i, v)
			}
		}
	}
	if got, err := Map(context.Background(), 0, 0, func(context.Context, int) (int, error) { return 1, nil }); err != nil || len(got) != 0 {
		t.Errorf("n = 0: %v, %v", got, err)
	}
}

// TestForState: newState is called once per worker, never more than the
// workers asked for, and each state is used by one goroutine at a time.
func TestForState(t *testing.T) {
	t.Parallel()
	var made atomic.Int32
	type st struct{ busy atomic.Bool }
	err := For(context.Background(), 500, 4, func() *st { made.Add(1); return new(st) }, func(_ context.Context, i int, s *st) error {
		if !s.busy.CompareAndSwap(false, true) {
			return fmt.Errorf("state shared at %d", i)
		}
		s.busy.Store(false)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if m := made.Load(); m < 1 || m > 4 {
		t.Errorf("%d states made, want 1..4", m)
	}
}

// TestForErrors: the lowest-index failure is returned whatever the
// schedule, a panic becomes a *PanicError naming its iteration, and the
// other calls see a cancelled context.
func TestForErrors(t *testing.T) {
	t.Parallel()
	errBad := errors.New("bad")
	for range 20 {
		// 150 fails at once, 40 only after a while: 40 is still the answer.
		err := For(context.Background(), 200, 8, nil, func(ctx context.Context, i int, _ struct{}) error {
			switch i {
			case 150:
				return errBad
			case 40:
				for range 1000 {
					runtime.Gosched()
				}
				return fmt.Errorf("row %d: %w", i, errBad)
			}
			return ctx.Err()
		})
		if !errors.Is(err, errBad) || err.Error() != "row 40: bad" {
			t.Fatalf("err = %v, want row 40's", err)
		}
	}
	err := For(context.Background(), 10, 2, nil, func(_ context.Context, i int, _ struct{}) error {
		if i == 3 {
			var m map[string]int
			m["x"] = 1 // a runtime panic
		}
		return nil
	})
	var pe *PanicError
	if !errors.As(err, &pe) || pe.Index != 3 || len(pe.Stack) == 0 {
		t.Fatalf("err = %v, want a *PanicError at 3", err)
	}
	var ran atomic.Int32
	err = For(context.Background(), 10000, 2, nil, func(ctx context.Context, i int, _ struct{}) error {
		ran.Add(1)
		if i == 0 {
			return errBad
		}
		return nil
	})
	if !errors.Is(err, errBad) || ran.Load() > 100 {
		t.Errorf("err %v after %d calls: the failure should stop the loop", err, ran.Load())
	}
}

func TestForCancelled(t *testing.T) {
	t.Parallel()
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	var ran atomic.Int32
	err := For(ctx, 100, 4, nil, func(context.Context, int, struct{}) error { ran.Add(1); return nil })
	if !errors.Is(err, context.Canceled) || ran.Load() != 0 {
		t.Errorf("err %v, %d calls; want context.Canceled and none", err, ran.Load())
	}
}

func ExampleMap() {
	squares, err := Map(context.Background(), 5, 0, func(_ context.Context, i int) (int, error) { return i * i, nil })
	fmt.Println(squares, err)
	// Output: [0 1 4 9 16] <nil>
}
