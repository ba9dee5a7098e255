package pool

import (
	"context"
	"errors"
	"fmt"
	"runtime"
	"sync/atomic"
	"testing"
	"time"
)

func TestSize(t *testing.T) {
	if got := Size(3); got != 3 {
		t.Errorf("Size(3) = %d", got)
	}
	if got, want := Size(0), runtime.GOMAXPROCS(0); got != want {
		t.Errorf("Size(0) = %d, want GOMAXPROCS %d", got, want)
	}
}

func TestEachRunsEveryItemOnce(t *testing.T) {
	for _, workers := range []int{1, 2, 7} {
		const n = 1000
		var seen [n]atomic.Int32
		var maxW atomic.Int32
		err := Each(context.Background(), n, workers, func(_ context.Context, w, i int) error {
			seen[i].Add(1)
			if int32(w) > maxW.Load() {
				maxW.Store(int32(w))
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
		for i := range seen {
			if seen[i].Load() != 1 {
				t.Fatalf("workers %d: item %d ran %d times", workers, i, seen[i].Load())
			}
		}
		if int(maxW.Load()) >= workers {
			t.Errorf("worker index %d with %d workers", maxW.Load(), workers)
		}
	}
}

func TestEachReturnsLowestFailedIndex(t *testing.T) {
	for _, workers := range []int{1, 4} {
		err := Each(context.Background(), 100, workers, func(ctx context.Context, _, i int) error {
			if i == 10 || i == 11 {
				return fmt.Errorf("item %d", i)
			}
			return nil
		})
		// Items start in index order, so 10 has always started when 11 fails.
		if err == nil || err.Error() != "item 10" {
			t.Errorf("workers %d: err = %v, want item 10", workers, err)
		}
	}
}

func TestEachStopsOnCancel(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	var started atomic.Int32
	err := Each(ctx, 1_000_000, 2, func(ctx context.Context, _, i int) error {
		if started.Add(1) == 5 {
			cancel()
		}
		return nil
	})
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("err = %v, want context.Canceled", err)
	}
	if n := started.Load(); n > 100 {
		t.Errorf("%d items started after cancel", n)
	}
}

func TestOrderedConsumesInOrder(t *testing.T) {
	for _, workers := range []int{1, 3} {
		var got []int
		var inFlight, peak atomic.Int32
		err := Ordered(context.Background(), 200, workers,
			func(_ context.Context, _, i int) (int, error) {
				if v := inFlight.Add(1); v > peak.Load() {
					peak.Store(v)
				}
				if i%7 == 0 {
					time.Sleep(time.Millisecond) // make later items finish first
				}
				return i * i, nil
			},
			func(i, v int) error {
				inFlight.Add(-1)
				if v != i*i {
					return fmt.Errorf("item %d got %d", i, v)
				}
				got = append(got, i)
				return nil
			})
		if err != nil {
			t.Fatal(err)
		}
		for i, g := range got {
			if g != i {
				t.Fatalf("workers %d: consumed %d at position %d", workers, g, i)
			}
		}
		if len(got) != 200 {
			t.Fatalf("consumed %d of 200", len(got))
		}
		if p := int(peak.Load()); p > 2*workers {
			t.Errorf("workers %d: %d results waiting at once, bound is %d", workers, p, 2*workers)
		}
	}
}

func TestOrderedConsumeErrorStops(t *testing.T) {
	var consumed int
	err := Ordered(context.Background(), 1000, 2,
		func(_ context.Context, _, i int) (int, error) { return i, nil },
		func(i, v int) error {
			consumed++
			if i == 3 {
				return errors.New("disk full")
			}
			return nil
		})
	if err == nil || err.Error() != "disk full" {
		t.Fatalf("err = %v", err)
	}
	if consumed != 4 {
		t.Errorf("consumed %d items, want 4 (0..3)", consumed)
	}
}

func TestOrderedProduceErrorAndCancel(t *testing.T) {
	err := Ordered(context.Background(), 50, 2,
		func(_ context.Context, _, i int) (int, error) {
			if i == 20 {
				return 0, errors.New("bad item")
			}
			return i, nil
		},
		func(i, v int) error { return nil })
	if err == nil || err.Error() != "bad item" {
		t.Fatalf("err = %v", err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	err = Ordered(ctx, 50, 2,
		func(_ context.Context, _, i int) (int, error) { return i, nil },
		func(i, v int) error { return nil })
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("cancelled before start: err = %v", err)
	}
}

func TestBatchResult(t *testing.T) {
	bad := errors.New("bad file")
	for _, c := range []struct {
		name       string
		fail, done map[int]int64 // item → amount (fail: ignored)
		runErr     error
		items      int
		amount     int64
		failed     int // number of item errors in the *Failed, -1 for runErr
	}{
		{"all done", nil, map[int]int64{0: 10, 1: 20, 2: 5}, nil, 3, 35, 0},
		{"one failed", map[int]int64{1: 0}, map[int]int64{0: 10, 2: 5}, nil, 2, 15, 1},
		{"cancelled", map[int]int64{1: 0}, map[int]int64{0: 10}, context.Canceled, 1, 10, -1},
		{"none done", map[int]int64{0: 0, 1: 0, 2: 0}, nil, nil, 0, 0, 3},
	} {
		b := NewBatch(3)
		for i := range c.fail {
			b.Fail(i, bad)
		}
		for i, n := range c.done {
			b.Done(i, n)
		}
		items, amount, err := b.Result(c.runErr)
		if items != c.items || amount != c.amount {
			t.Errorf("%s: %d items, amount %d; want %d, %d", c.name, items, amount, c.items, c.amount)
		}
		var f *Failed
		switch {
		case c.failed == -1:
			if err != c.runErr {
				t.Errorf("%s: error %v, want the run's %v", c.name, err, c.runErr)
			}
		case c.failed == 0:
			if err != nil {
				t.Errorf("%s: error %v, want nil", c.name, err)
			}
		case !errors.As(err, &f) || len(f.Errs) != c.failed || f.Total != 3 || !errors.Is(err, bad):
			t.Errorf("%s: error %v, want a *Failed with %d of 3", c.name, err, c.failed)
		}
	}
}
