package neardup

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"sync"

	"thrum/machine/pool"
)

// LoadFunc reads an audio file as mono samples and its sample rate.
type LoadFunc func(path string) ([]float64, float64, error)

// Options tune PrintFiles and Search.
type Options struct {
	// MaxBER is the near-duplicate threshold (0 means DefaultMaxBER).
	MaxBER float64
	// Load reads audio; it must be set. It is called from several
	// goroutines at once.
	Load LoadFunc
	// Workers is the number of files handled at once (0 means GOMAXPROCS,
	// see pool.Size).
	Workers int
	// Progress, when set, is called after each file of a stage
	// ("fingerprint", "search") with the number done so far and the total.
	// Calls come from the worker goroutines but never overlap, and done
	// counts up by one.
	Progress func(stage string, done, total int)
}

// progress returns a function that reports one more file of stage, or a
// no-op without opt.Progress.
func (o Options) progress(stage string, total int) func() {
	if o.Progress == nil {
		return func() {}
	}
	var mu sync.Mutex
	n := 0
	return func() {
		mu.Lock()
		defer mu.Unlock()
		n++
		o.Progress(stage, n, total)
	}
}

// PrintFiles loads and fingerprints paths (joined to root when root is not
// empty) on a pool of opt.Workers goroutines, each with its own
// Fingerprinter; every clip is first resampled to CommonRate, so prints of
// files at different sample rates are comparable. errs[i] says why path i has no print: the
// loader failed, or the sample rate is below 4 kHz. The returned error is
// not nil only when ctx ends first (or opt.Load is nil); the context is
// checked before each file.
func PrintFiles(ctx context.Context, root string, paths []string, opt Options) (prints []Print, errs []error, err error) {
	if opt.Load == nil {
		return nil, nil, errors.New("neardup: Options.Load is nil")
	}
	prints = make([]Print, len(paths))
	errs = make([]error, len(paths))
	fps := make([]*Fingerprinter, pool.Size(opt.Workers))
	done := opt.progress("fingerprint", len(paths))
	err = pool.Each(ctx, len(paths), opt.Workers, func(ctx context.Context, w, i int) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		full := paths[i]
		if root != "" {
			full = filepath.Join(root, filepath.FromSlash(paths[i]))
		}
		x, fs, err := opt.Load(full)
		switch {
		case err != nil:
			errs[i] = fmt.Errorf("neardup: %s: %w", paths[i], err)
		case !(fs >= 4000):
			errs[i] = fmt.Errorf("neardup: %s: sample rate %g Hz too low to fingerprint", paths[i], fs)
		default:
			if fps[w] == nil {
				fps[w] = NewFingerprinter(CommonRate)
			}
			prints[i] = fps[w].Print(Print{}, ToCommonRate(x, fs))
		}
		done()
		return nil
	})
	if err != nil {
		return nil, nil, err
	}
	return prints, errs, nil
}

// Result is what Search found.
type Result struct {
	// Errs[i] says why file i (the training files first, then the eval
	// files) has no print and was left out; nil when it has one.
	Errs []error
	// Found[i] lists the training files near eval file i, best first;
	// Match.ID is the training path as given.
	Found [][]Match
	// Hops[i] is the frame hop, in seconds, of eval file i's print: a
	// match lies Match.Offset·Hops[i] seconds into the training file.
	Hops []float64
	// Queries counts the eval files searched (those with a print).
	Queries int
}

// Search fingerprints the train and eval files at CommonRate (see
// PrintFiles), indexes the training prints (one index per frame hop; with
// every print at CommonRate there is one) and queries every eval print on the pool, one
// Searcher per worker and hop. The result does not depend on the worker
// count. It returns an error only when ctx ends first (checked before each
// file) or opt.Load is nil.
func Search(ctx context.Context, root string, train, eval []string, opt Options) (*Result, error) {
	all := append(append([]string(nil), train...), eval...)
	prints, errs, err := PrintFiles(ctx, root, all, opt)
	if err != nil {
		return nil, err
	}
	idx := map[float64]*Index{}
	for i, p := range train {
		pr := prints[i]
		if errs[i] != nil {
			continue
		}
		ix := idx[pr.Hop]
		if ix == nil {
			ix = NewIndex()
			ix.MaxBER = opt.MaxBER
			idx[pr.Hop] = ix
		}
		ix.Add(p, pr)
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	workers := pool.Size(opt.Workers)
	searchers := map[float64][]*Searcher{}
	for hop, ix := range idx {
		for range workers {
			searchers[hop] = append(searchers[hop], ix.NewSearcher())
		}
	}
	res := &Result{Errs: errs, Found: make([][]Match, len(eval)), Hops: make([]float64, len(eval))}
	asked := make([]bool, len(eval))
	done := opt.progress("search", len(eval))
	err = pool.Each(ctx, len(eval), workers, func(ctx context.Context, w, i int) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		pr := prints[len(train)+i]
		if errs[len(train)+i] == nil {
			if ss := searchers[pr.Hop]; ss != nil {
				res.Found[i] = ss[w].Query(pr)
			}
			asked[i] = true
		}
		done()
		return nil
	})
	if err != nil {
		return nil, err
	}
	for i := range eval {
		res.Hops[i] = prints[len(train)+i].Hop
		if asked[i] {
			res.Queries++
		}
	}
	return res, nil
}
