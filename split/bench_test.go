package split

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

func BenchmarkFingerprint10s16k(b *testing.B) {
	rng := rand.New(rand.NewPCG(1, 1))
	x := newMachineModel(rng, 16000).record(rng, 10)
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

// BenchmarkBoundarySearch10k indexes 8500 training prints (10 s clips) and
// queries 1500 eval prints, 100 of which are copies with 25 % of the bits
// flipped; one iteration is the whole search.
func BenchmarkBoundarySearch10k(b *testing.B) {
	rng := rand.New(rand.NewPCG(2, 2))
	const nTrain, nEval, frames = 8500, 1500, 590
	train := make([]Print, nTrain)
	for i := range train {
		train[i] = syntheticPrint(rng, frames)
	}
	eval := make([]Print, nEval)
	for i := range eval {
		if i < 100 {
			w := append([]uint32(nil), train[i*7].Words...)
			for j := range w {
				for k := range 32 {
					if rng.IntN(4) == 0 {
						w[j] ^= 1 << k
					}
				}
			}
			eval[i] = Print{Words: w}
		} else {
			eval[i] = syntheticPrint(rng, frames)
		}
	}
	for b.Loop() {
		ix := NewIndex()
		for i, p := range train {
			ix.Add(fmt.Sprint(i), p)
		}
		found, false_ := 0, 0
		for i, p := range eval {
			for _, m := range ix.Query(p) {
				if i < 100 && m.ID == fmt.Sprint(i*7) {
					found++
				} else {
					false_++
				}
			}
		}
		b.ReportMetric(float64(found), "found_of_100")
		b.ReportMetric(float64(false_), "false")
	}
}
