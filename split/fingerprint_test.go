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
		{"all four", func(x []float64, i int) []float64 {
			y := applySpeed(applyShift(applyGain(x, []float64{-6, 6}[i%2]), []int{-8000, 8000}[i%2]), []float64{0.98, 1.02}[i%2])
			return applyNoise(y, rng, 10)
		}},
	}
	// Verified BER between distinct recordings of the same machine, at any
	// offset the search could propose: the margin below DefaultMaxBER.
	prints := make([]Print, n)
	for i, x := range recs {
		prints[i] = fp.Print(Print{}, x)
	}
	lowest := 1.0
	for i := range 20 {
		for j := 20; j < 40; j++ {
			for off := -300; off <= 300; off += 2*ixDrift + 1 {
				if e, _ := new(verifier).verify(prints[i].Words, prints[j].Words, off); e < lowest {
					lowest = e
				}
			}
		}
	}
	t.Logf("distinct recordings of one machine: lowest verified BER %.3f over 400 pairs × 25 offset windows (threshold %.2f)", lowest, DefaultMaxBER)
	if lowest <= DefaultMaxBER+0.02 {
		t.Errorf("distinct recordings come within 0.02 of the threshold: %.3f", lowest)
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
			minVotes := 1 << 30
			for i := range half {
				ms := ix.Query(fp.Print(Print{}, recs[i]))
				for _, mt := range ms {
					if mt.ID == fmt.Sprint(i) {
						found++
						worst = max(worst, mt.BER)
						minVotes = min(minVotes, mt.Votes)
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
			t.Logf("%s: recall %.3f (%d/%d, worst BER %.3f, fewest votes %d), false alarms %d of %d pairs (%.4f)", tc.name, recall, found, half, worst, minVotes, falseAlarm, pairs, far)
			// Each transform alone must be found at least 95 % of the time.
			// All four at once is harder (the noise and the drift both cost
			// key bits); it is measured, with a floor against regressions.
			floor := 0.95
			if tc.name == "all four" {
				floor = 0.85
			}
			if recall < floor {
				t.Errorf("%s: recall %.3f < %.2f", tc.name, recall, floor)
			}
			if far > 0.01 {
				t.Errorf("%s: false-alarm rate %.4f > 0.01", tc.name, far)
			}
		})
	}
}

func TestFingerprintShape(t *testing.T) {
	fp := NewFingerprinter(16000)
	rng := rand.New(rand.NewPCG(1, 3))
	for _, tc := range []struct{ samples, words int }{
		{0, 0}, {511, 0}, {512 + 35*256 - 1, 0}, {512 + 35*256, 1}, {160000, 589},
	} {
		x := make([]float64, tc.samples)
		for i := range x {
			x[i] = rng.NormFloat64()
		}
		if got := len(fp.Print(Print{}, x).Words); got != tc.words {
			t.Errorf("%d samples: %d words, want %d", tc.samples, got, tc.words)
		}
	}
	// Gain leaves every bit unchanged (the bits are signs of energy
	// differences, which a gain scales by g²).
	x := newMachineModel(rng, 16000).record(rng, 2)
	a, b := fp.Print(Print{}, x), fp.Print(Print{}, applyGain(x, -12))
	if e, _ := ber(a.Words, b.Words, 0); e != 0 {
		t.Errorf("gain changes %.4f of the bits", e)
	}
	defer func() {
		if recover() == nil {
			t.Error("no panic for a 2 kHz sample rate")
		}
	}()
	NewFingerprinter(2000)
}
