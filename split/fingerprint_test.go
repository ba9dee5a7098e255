package split

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// TestNearDuplicateSearch injects transformed copies of recordings into the
// index and measures recall; it queries distinct recordings of the same
// machine and measures the false-alarm rate.
func TestNearDuplicateSearch(t *testing.T) {
	const fs, n = 16000.0, 60
	rng := rand.New(rand.NewPCG(11, 12))
	m := newMachineModel(rng, fs)
	fp := NewFingerprinter(fs)
	recs := make([][]float64, n)
	for i := range recs {
		recs[i] = m.record(rng, 10)
	}
	// Index holds transformed copies of every recording ("leaked into
	// training"); queries are the originals ("eval").
	type tr struct {
		name string
		f    func(x []float64, i int) []float64
	}
	trs := []tr{
		{"gain", func(x []float64, i int) []float64 { return applyGain(x, []float64{-6, 6}[i%2]) }},
		{"shift", func(x []float64, i int) []float64 { return applyShift(x, []int{-8000, 8000}[i%2]) }},
		{"noise", func(x []float64, i int) []float64 { return applyNoise(x, rng, 10) }},
		{"speed", func(x []float64, i int) []float64 { return applySpeed(x, []float64{0.98, 1.02}[i%2]) }},
	}
	for _, tc := range trs {
		t.Run(tc.name, func(t *testing.T) {
			ix := NewIndex()
			half := n / 2
			for i := range half {
				ix.Add(fmt.Sprint(i), fp.Print(Print{}, tc.f(recs[i], i)))
			}
			found, falseAlarm := 0, 0
			var worst float64
			for i := range half {
				ms := ix.Query(fp.Print(Print{}, recs[i]))
				for _, mt := range ms {
					if mt.ID == fmt.Sprint(i) {
						found++
						worst = max(worst, mt.BER)
					} else {
						falseAlarm++
					}
				}
			}
			// Distinct recordings of the same machine against the index.
			for i := half; i < n; i++ {
				falseAlarm += len(ix.Query(fp.Print(Print{}, recs[i])))
			}
			pairs := half*half - half + half*half
			recall := float64(found) / float64(half)
			far := float64(falseAlarm) / float64(pairs)
			t.Logf("%s: recall %.3f (%d/%d, worst BER %.3f), false alarms %d of %d pairs (%.4f)", tc.name, recall, found, half, worst, falseAlarm, pairs, far)
			if recall < 0.95 {
				t.Errorf("%s: recall %.3f < 0.95", tc.name, recall)
			}
			if far > 0.01 {
				t.Errorf("%s: false-alarm rate %.4f > 0.01", tc.name, far)
			}
		})
	}
}
