package neardup

import (
	"fmt"
	"math/rand/v2"
	"runtime"
	"sync"
	"testing"

	"thrum/split/internal/synthtest"
)

func BenchmarkFingerprint10s16k(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 1))
	x := synthtest.NewMachine(rng, 16000).Record(rng, 10)
	fp := NewFingerprinter(16000)
	var p Print
	b.SetBytes(int64(8 * len(x)))
	for b.Loop() {
		p = fp.Print(p, x)
	}
	b.ReportMetric(10/(b.Elapsed().Seconds()/float64(b.N)), "x_realtime")
}

// syntheticPrint is a random print with the temporal smoothness of real
// ones: each word differs from the previous in about 2 bits.
func syntheticPrint(rng *rand.Rand, n int) Print {
	w := make([]uint32, n)
	v := rng.Uint32()
	for i := range w {
		v ^= 1<<rng.IntN(32) | 1<<rng.IntN(32)
		w[i] = v
	}
	return Print{Words: w, Hop: 0.016}
}

// BenchmarkBoundarySearch10k indexes 8500 training prints of 10 s clips and
// queries 1500 eval prints; one iteration is the whole search. 30 eval
// prints are real recordings of one synthetic machine whose copies at 10 dB
// SNR (the hardest case of TestNearDuplicateSearch) are in the index; the
// rest are synthetic prints as smooth as real ones.
func BenchmarkBoundarySearch10k(b *testing.B) { benchBoundary(b, 1) }

// BenchmarkBoundarySearch10kParallel is the same search with one Searcher
// per core, as Audit runs it.
func BenchmarkBoundarySearch10kParallel(b *testing.B) { benchBoundary(b, runtime.GOMAXPROCS(0)) }

func benchBoundary(b *testing.B, workers int) {
	rng := rand.New(rand.NewPCG(2, 2))
	const nTrain, nEval, nLeak, frames = 8500, 1500, 30, 590
	mm := synthtest.NewMachine(rng, 16000)
	fp := NewFingerprinter(16000)
	train := make([]Print, nTrain)
	eval := make([]Print, nEval)
	for i := range nLeak {
		x := mm.Record(rng, 10)
		eval[i] = fp.Print(Print{}, x)
		train[i*7] = fp.Print(Print{}, synthtest.Noise(x, rng, 10))
	}
	for i := range train {
		if train[i].Words == nil {
			train[i] = syntheticPrint(rng, frames)
		}
	}
	for i := nLeak; i < nEval; i++ {
		eval[i] = syntheticPrint(rng, frames)
	}
	b.ResetTimer()
	for b.Loop() {
		ix := NewIndex()
		for i, p := range train {
			ix.Add(fmt.Sprint(i), p)
		}
		found := make([][]Match, nEval)
		var wg sync.WaitGroup
		for wk := range workers {
			wg.Add(1)
			go func(s *Searcher) {
				defer wg.Done()
				for i := wk; i < nEval; i += workers {
					found[i] = s.Query(eval[i])
				}
			}(ix.NewSearcher())
		}
		wg.Wait()
		hit, falseAlarm := 0, 0
		for i, ms := range found {
			for _, m := range ms {
				if i < nLeak && m.ID == fmt.Sprint(i*7) {
					hit++
				} else {
					falseAlarm++
					if falseAlarm <= 10 {
						b.Logf("false alarm: eval %d vs %s BER %.3f votes %d", i, m.ID, m.BER, m.Votes)
					}
				}
			}
		}
		b.ReportMetric(float64(ix.Bytes())/nTrain, "index_B/print")
		b.ReportMetric(float64(hit), "found_of_30")
		b.ReportMetric(float64(falseAlarm), "false_alarms")
	}
}
