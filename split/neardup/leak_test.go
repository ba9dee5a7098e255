package neardup

import (
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"strconv"
	"strings"
	"testing"

	"thrum/split/internal/synthtest"
)

// leakKind is one way a copy of an evaluation clip may have leaked into
// training.
type leakKind struct {
	name string
	f    func(rng *rand.Rand, x []float64, fs float64) []float64
}

// uniformIn draws uniformly from [lo, hi] or [−hi, −lo].
func uniformIn(rng *rand.Rand, lo, hi float64) float64 {
	v := lo + (hi-lo)*rng.Float64()
	if rng.IntN(2) == 0 {
		v = -v
	}
	return v
}

// The transforms and their ranges: gain up to ±6 dB, a shift up to ±0.5 s
// (zero-filled), white noise at 10 … 20 dB SNR, speed 0.98 … 1.02, and all
// four at once.
var leakKinds = []leakKind{
	{"gain", func(rng *rand.Rand, x []float64, fs float64) []float64 {
		return synthtest.Gain(x, uniformIn(rng, 1, 6))
	}},
	{"shift", func(rng *rand.Rand, x []float64, fs float64) []float64 {
		return synthtest.Shift(x, int(uniformIn(rng, 0.05, 0.5)*fs))
	}},
	{"noise", func(rng *rand.Rand, x []float64, fs float64) []float64 {
		return synthtest.Noise(x, rng, 10+10*rng.Float64())
	}},
	{"speed", func(rng *rand.Rand, x []float64, fs float64) []float64 {
		return synthtest.Speed(x, 1+uniformIn(rng, 0.005, 0.02))
	}},
	{"all four", func(rng *rand.Rand, x []float64, fs float64) []float64 {
		y := synthtest.Gain(x, uniformIn(rng, 1, 6))
		y = synthtest.Shift(y, int(uniformIn(rng, 0.05, 0.5)*fs))
		y = synthtest.Speed(y, 1+uniformIn(rng, 0.005, 0.02))
		return synthtest.Noise(y, rng, 10+10*rng.Float64())
	}},
}

// leakResult is one row of the leaked-set table.
type leakResult struct {
	kind        string
	seconds     float64
	clips       int
	found       int
	falseAlarms int
	pairs       int
	worstBER    float64 // highest BER of a found copy
	worstMargin float64 // largest BER − threshold of a found copy
}

// runLeakedSets builds, for each clip length, n distinct recordings (of
// n/50 synthetic machines, 50 each, so most unrelated pairs are distinct
// recordings of one machine, the hard case), prints them at CommonRate
// from 16 kHz, and for each leak kind indexes a transformed copy of every
// clip and queries every original: a match to its own copy is a hit, any
// other match a false alarm among n·(n−1) distinct pairs.
//
// Only the kinds named in only (all when empty) are measured; the others'
// copies are still drawn, so a kind sees the same copies either way.
func runLeakedSets(t *testing.T, n int, lengths []float64, only map[string]bool) []leakResult {
	const fs = 16000.0
	fp := NewFingerprinter(CommonRate)
	var out []leakResult
	for _, secs := range lengths {
		rng := rand.New(rand.NewPCG(uint64(secs*1000), 77))
		recs := make([][]float64, n)
		perMachine := 50
		var m *synthtest.Machine
		for i := range recs {
			if i%perMachine == 0 {
				m = synthtest.NewMachine(rng, fs)
			}
			recs[i] = m.Record(rng, secs)
		}
		orig := make([]Print, n)
		for i, x := range recs {
			orig[i] = fp.Print(Print{}, ToCommonRate(x, fs))
		}
		for _, k := range leakKinds {
			if len(only) > 0 && !only[k.name] {
				for _, x := range recs {
					k.f(rng, x, fs)
				}
				continue
			}
			ix := NewIndex()
			for i, x := range recs {
				ix.Add(strconv.Itoa(i), fp.Print(Print{}, ToCommonRate(k.f(rng, x, fs), fs)))
			}
			r := leakResult{kind: k.name, seconds: secs, clips: n, pairs: n * (n - 1), worstMargin: math.Inf(-1)}
			s := ix.NewSearcher()
			for i := range recs {
				ms := s.Query(orig[i])
				seen := map[string]bool{}
				for _, mt := range ms {
					if seen[mt.ID] {
						t.Errorf("%s, %g s: clip %d matches %s twice", k.name, secs, i, mt.ID)
					}
					seen[mt.ID] = true
				}
				for _, mt := range ms {
					if mt.ID == strconv.Itoa(i) {
						r.found++
						r.worstBER = max(r.worstBER, mt.BER)
						r.worstMargin = max(r.worstMargin, mt.BER-mt.Threshold)
					} else {
						r.falseAlarms++
						t.Logf("false alarm: %s, %g s: clip %d matches copy %s at BER %.3f (threshold %.3f, %d bits)", k.name, secs, i, mt.ID, mt.BER, mt.Threshold, mt.Bits)
					}
				}
			}
			out = append(out, r)
			t.Logf("%-8s %4.0f s  %5d clips  recall %.3f (%d)  false alarms %d of %d pairs  worst copy BER %.3f (margin %+.3f)",
				r.kind, secs, n, float64(r.found)/float64(n), r.found, r.falseAlarms, r.pairs, r.worstBER, r.worstMargin)
		}
	}
	return out
}

// TestLeakedSets measures recall and false alarms on leaked sets of 1 000
// clips (5 s and 10 s, every leak kind): at least 95 % recall per kind and
// at most one false alarm per 10⁵ distinct pairs. It takes minutes, so it
// runs only when THRUM_NEARDUP_EVAL is set. THRUM_NEARDUP_CLIPS changes the
// number of clips, THRUM_NEARDUP_KINDS (comma-separated kind names) and
// THRUM_NEARDUP_SECONDS (comma-separated lengths) narrow the table, e.g.
// for a quick look at the hardest row:
//
//	THRUM_NEARDUP_EVAL=1 go test ./split/neardup -run TestLeakedSets -v -timeout 60m
//	THRUM_NEARDUP_EVAL=1 THRUM_NEARDUP_CLIPS=300 THRUM_NEARDUP_KINDS='all four' THRUM_NEARDUP_SECONDS=5 \
//	    go test ./split/neardup -run 'TestLeakedSets$' -v
//
// TestLeakedSetsSmall runs a small version in the default suite.
func TestLeakedSets(t *testing.T) {
	if os.Getenv("THRUM_NEARDUP_EVAL") == "" {
		t.Skip("set THRUM_NEARDUP_EVAL=1 to measure recall and false alarms on 1 000-clip leaked sets (minutes)")
	}
	n := 1000
	if v, err := strconv.Atoi(os.Getenv("THRUM_NEARDUP_CLIPS")); err == nil && v > 1 {
		n = v
	}
	lengths := []float64{5, 10}
	if v := os.Getenv("THRUM_NEARDUP_SECONDS"); v != "" {
		lengths = nil
		for _, f := range strings.Split(v, ",") {
			secs, err := strconv.ParseFloat(strings.TrimSpace(f), 64)
			if err != nil || !(secs > 0) {
				t.Fatalf("THRUM_NEARDUP_SECONDS: %q is not a positive number of seconds", f)
			}
			lengths = append(lengths, secs)
		}
	}
	only := map[string]bool{}
	if v := os.Getenv("THRUM_NEARDUP_KINDS"); v != "" {
		for _, f := range strings.Split(v, ",") {
			only[strings.TrimSpace(f)] = true
		}
		for name := range only {
			if !slices.ContainsFunc(leakKinds, func(k leakKind) bool { return k.name == name }) {
				t.Fatalf("THRUM_NEARDUP_KINDS: no leak kind %q", name)
			}
		}
	}
	checkLeaked(t, runLeakedSets(t, n, lengths, only))
}

// TestLeakedSetsSmall is the default-suite version of TestLeakedSets: 40
// clips of 5 s (the shorter, harder length).
func TestLeakedSetsSmall(t *testing.T) {
	checkLeaked(t, runLeakedSets(t, 40, []float64{5}, nil))
}

func checkLeaked(t *testing.T, rs []leakResult) {
	t.Helper()
	fa, pairs := 0, 0
	for _, r := range rs {
		if rec := float64(r.found) / float64(r.clips); rec < 0.95 {
			t.Errorf("%s, %g s: recall %.3f < 0.95", r.kind, r.seconds, rec)
		}
		fa += r.falseAlarms
		pairs += r.pairs
	}
	// At most one false alarm in 10⁵ distinct pairs (and none in a set
	// smaller than that).
	if float64(fa) > math.Max(0, float64(pairs)/1e5) {
		t.Errorf("%d false alarms in %d distinct pairs, more than 1 in 10⁵", fa, pairs)
	}
}
