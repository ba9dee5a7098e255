package neardup

import (
	"context"
	"errors"
	"fmt"
	"math/rand/v2"
	"reflect"
	"testing"

	"thrum/split/internal/synthtest"
)

// memLoad serves recordings from memory; "low/…" paths report 2 kHz and
// "missing/…" paths an error.
func memLoad(recs map[string][]float64) LoadFunc {
	return func(path string) ([]float64, float64, error) {
		x, ok := recs[path]
		switch {
		case !ok:
			return nil, 0, errors.New("no such recording")
		case len(path) > 4 && path[:4] == "low/":
			return x, 2000, nil
		}
		return x, 16000, nil
	}
}

// TestSearch runs Search over in-memory files: a noisy copy of an eval
// recording hidden among training recordings is found, unloadable and
// too-low-rate files are reported, and the result is the same for any
// worker count.
func TestSearch(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	mm := synthtest.NewMachine(rng, 16000)
	recs := map[string][]float64{}
	var train, eval []string
	for i := range 6 {
		p := fmt.Sprintf("train/%d", i)
		recs[p] = mm.Record(rng, 4)
		train = append(train, p)
	}
	for i := range 4 {
		p := fmt.Sprintf("eval/%d", i)
		recs[p] = mm.Record(rng, 4)
		eval = append(eval, p)
	}
	recs["train/copy"] = synthtest.Noise(recs["eval/2"], rng, 20)
	recs["low/x"] = mm.Record(rng, 1)
	train = append(train, "train/copy", "missing/y")
	eval = append(eval, "low/x")

	var first *Result
	for _, workers := range []int{1, 3} {
		res, err := Search(context.Background(), "", train, eval, Options{Load: memLoad(recs), Workers: workers})
		if err != nil {
			t.Fatal(err)
		}
		if res.Queries != 4 {
			t.Errorf("workers %d: %d queries, want 4 (the low-rate file has no print)", workers, res.Queries)
		}
		var bad []string
		for i, err := range res.Errs {
			if err != nil {
				bad = append(bad, append(train, eval...)[i])
			}
		}
		if want := []string{"missing/y", "low/x"}; !reflect.DeepEqual(bad, want) {
			t.Errorf("workers %d: files without print %v, want %v", workers, bad, want)
		}
		for i, ms := range res.Found {
			if hit := len(ms) > 0 && ms[0].ID == "train/copy"; hit != (i == 2) {
				t.Errorf("workers %d: eval %d matches %v", workers, i, ms)
			}
		}
		if first == nil {
			first = res
		} else if !reflect.DeepEqual(res.Found, first.Found) || !reflect.DeepEqual(res.Hops, first.Hops) {
			t.Errorf("workers %d: result differs from workers 1", workers)
		}
	}
}

// TestSearchCancelled: a cancelled context stops Search with its error.
func TestSearchCancelled(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	calls := 0
	load := func(string) ([]float64, float64, error) { calls++; return make([]float64, 16000), 16000, nil }
	for _, tc := range []struct {
		name  string
		train []string
	}{{"empty", nil}, {"three files", []string{"a", "b", "c"}}} {
		_, err := Search(ctx, "", tc.train, []string{"q"}, Options{Load: load, Workers: 1})
		if !errors.Is(err, context.Canceled) {
			t.Errorf("%s: error %v, want context.Canceled", tc.name, err)
		}
	}
	if calls != 0 {
		t.Errorf("%d files loaded after cancellation", calls)
	}
	if _, err := Search(context.Background(), "", nil, nil, Options{}); err == nil {
		t.Error("nil Load accepted")
	}
}
