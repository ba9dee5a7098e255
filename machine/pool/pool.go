// Package pool is thrum's one bounded worker pool. Every stage that spreads
// work over goroutines (expand, faults, features, fingerprints, the folder
// commands) uses it, so worker counts, cancellation and error handling mean
// the same thing everywhere.
//
// # Size
//
// Size(n) is n when n > 0, else runtime.GOMAXPROCS(0). GOMAXPROCS, not
// runtime.NumCPU: since Go 1.25 it follows a container's CPU quota, so a pod
// limited to two cores on a 64-core node starts two workers.
//
// # Error policy
//
// An error returned by a work function is fatal for the whole call: no new
// item is started, the context given to running items is cancelled, and the
// call returns the error of the lowest failed index (so a single failure is
// reported the same way whatever the worker count). Problems that must not
// stop a run, such as one unreadable recording, belong in the item's own
// result, not in its error. When the caller's context is cancelled the call
// returns its error (context.Canceled or context.DeadlineExceeded), wrapped in
// nothing, so errors.Is works.
package pool

import (
	"context"
	"runtime"
	"sync"
)

// Size is the number of workers to start for a request of n (0 or less means
// one per available CPU as GOMAXPROCS reports it).
func Size(n int) int {
	if n > 0 {
		return n
	}
	return runtime.GOMAXPROCS(0)
}

// failure keeps the lowest-index error seen.
type failure struct {
	mu  sync.Mutex
	i   int
	err error
}

func (f *failure) set(i int, err error) {
	f.mu.Lock()
	if f.err == nil || i < f.i {
		f.i, f.err = i, err
	}
	f.mu.Unlock()
}

func (f *failure) get() error {
	f.mu.Lock()
	defer f.mu.Unlock()
	return f.err
}

// Each calls fn(ctx, w, i) for every i in [0, n) on at most Size(workers)
// goroutines. w, in [0, Size(workers)), names the goroutine running the item,
// so callers can keep per-worker scratch space in a slice indexed by w. Items
// start in index order. See the package doc for the error policy.
func Each(ctx context.Context, n, workers int, fn func(ctx context.Context, w, i int) error) error {
	workers = min(Size(workers), max(n, 1))
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	var fail failure
	next := make(chan int)
	var wg sync.WaitGroup
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				if err := fn(ctx, w, i); err != nil {
					fail.set(i, err)
					cancel()
				}
			}
		}()
	}
feed:
	for i := range n {
		select {
		case next <- i:
		case <-ctx.Done():
			break feed
		}
	}
	close(next)
	wg.Wait()
	return result(ctx, &fail)
}

// result prefers a work function's error to the cancellation it caused; a
// cancellation from outside is returned as the parent's error.
func result(ctx context.Context, fail *failure) error {
	if err := fail.get(); err != nil {
		return err
	}
	if context.Cause(ctx) != nil {
		// ctx is the derived one: its cause is the parent's error or
		// context.Canceled from our own cancel, which only follows a failure.
		return context.Cause(ctx)
	}
	return nil
}

// Ordered is Each with results: produce(ctx, w, i) runs on the pool and
// consume(i, v) is called with the results in index order, on the caller's
// goroutine, while later items are still being produced. At most
// 2·Size(workers) results wait to be consumed, so memory stays bounded
// however long the input. An error from consume counts as the failure of
// item i.
func Ordered[T any](ctx context.Context, n, workers int,
	produce func(ctx context.Context, w, i int) (T, error),
	consume func(i int, v T) error) error {
	workers = min(Size(workers), max(n, 1))
	window := 2 * workers
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	var fail failure
	type item struct {
		i   int
		v   T
		err error
	}
	next := make(chan int)
	done := make(chan item, window)
	slots := make(chan struct{}, window)
	var wg sync.WaitGroup
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				v, err := produce(ctx, w, i)
				done <- item{i, v, err}
			}
		}()
	}
	go func() {
		defer func() { close(next); wg.Wait(); close(done) }()
		for i := range n {
			select {
			case slots <- struct{}{}:
			case <-ctx.Done():
				return
			}
			select {
			case next <- i:
			case <-ctx.Done():
				<-slots
				return
			}
		}
	}()
	pending := make(map[int]item, window)
	want := 0
	for it := range done {
		if it.err != nil {
			fail.set(it.i, it.err)
			cancel()
			continue
		}
		if fail.get() != nil {
			continue
		}
		pending[it.i] = it
		for {
			p, ok := pending[want]
			if !ok {
				break
			}
			delete(pending, want)
			if err := consume(p.i, p.v); err != nil {
				fail.set(p.i, err)
				cancel()
				break
			}
			want++
			<-slots
		}
	}
	return result(ctx, &fail)
}
