package pool

import (
	"fmt"
	"strings"
	"sync"
)

// Units of progress. Progress counts work that moves steadily: clips (a
// long recording advances the count once per clip, not once at its end) or
// seconds of audio, never whole recordings.
const (
	UnitClips   = "clips"
	UnitSeconds = "seconds"
)

// Event reports the progress of a stage: Done of Total units of work
// (Unit) finished. Every stage that reports progress (survey, expand,
// faults, features, audit) uses it, and cmd renders it.
type Event struct {
	Stage string
	// Machine is the machine id the last unit belonged to ("" when the
	// stage does not work per machine).
	Machine     string
	Done, Total int64
	Unit        string
	// Written and Rejected count outputs so far (stages that write).
	Written, Rejected int
	// Path is the file the last unit belonged to.
	Path string
}

// Reporter serialises progress events: Report may be called from any
// goroutine, and the callback is never called concurrently. A nil
// Reporter, or one with a nil callback, reports nothing.
type Reporter struct {
	mu                sync.Mutex
	fn                func(Event)
	stage, unit       string
	done, total       int64
	written, rejected int
}

// NewReporter returns a Reporter for total units of a stage that calls fn
// (which may be nil).
func NewReporter(fn func(Event), stage, unit string, total int64) *Reporter {
	return &Reporter{fn: fn, stage: stage, unit: unit, total: total}
}

// Add records n more units done, and written and rejected outputs, and
// reports the new state with the machine id and path they belong to.
func (r *Reporter) Add(n int64, written, rejected int, machineID, path string) {
	if r == nil || r.fn == nil {
		return
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	r.done += n
	r.written += written
	r.rejected += rejected
	r.fn(Event{Stage: r.stage, Machine: machineID, Done: r.done, Total: r.total, Unit: r.unit,
		Written: r.written, Rejected: r.rejected, Path: path})
}

// Failed is the error of a batch whose items fail one by one without
// stopping the others (one unreadable input file among many): the errors
// of the failed items in index order, out of Total items. Callers return
// the work that succeeded together with it, so a command can report both.
type Failed struct {
	Total int
	Errs  []error
}

func (f *Failed) Error() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%d of %d file(s) failed:", len(f.Errs), f.Total)
	for _, e := range f.Errs {
		b.WriteString("\n  ")
		b.WriteString(e.Error())
	}
	return b.String()
}

// Unwrap gives errors.Is and errors.As the item errors.
func (f *Failed) Unwrap() []error { return f.Errs }

// Collect returns a *Failed holding the non-nil errors of errs (one per
// item, in index order), or nil when there are none.
func Collect(errs []error) error {
	f := &Failed{Total: len(errs)}
	for _, e := range errs {
		if e != nil {
			f.Errs = append(f.Errs, e)
		}
	}
	if len(f.Errs) == 0 {
		return nil
	}
	return f
}

// Batch records the outcome of each item of a batch in which one item's
// failure does not stop the others (the folder commands): Fail keeps a
// failed item's error, Done a finished item's amount of work (frames, say).
// Each item is one index, so workers, and goroutines they start, record
// their own items without locking; Result is read after they all finish.
type Batch struct {
	errs   []error
	amount []int64
	done   []bool
}

// NewBatch returns the record of a batch of n items.
func NewBatch(n int) *Batch {
	return &Batch{errs: make([]error, n), amount: make([]int64, n), done: make([]bool, n)}
}

// Fail records item i's error.
func (b *Batch) Fail(i int, err error) { b.errs[i] = err }

// Done records that item i finished with the given amount of work.
func (b *Batch) Done(i int, amount int64) { b.amount[i], b.done[i] = amount, true }

// Result returns how many items are done and the sum of their amounts,
// with runErr when it is not nil (the pool's own error: cancellation or a
// fatal failure), else the failed items' errors collected by Collect (nil
// when none failed).
func (b *Batch) Result(runErr error) (items int, amount int64, err error) {
	for i, ok := range b.done {
		if ok {
			items++
			amount += b.amount[i]
		}
	}
	if runErr != nil {
		return items, amount, runErr
	}
	return items, amount, Collect(b.errs)
}
