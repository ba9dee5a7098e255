package neardup

import (
	"math"
	"math/rand/v2"
	"testing"

	"thrum/split/internal/synthtest"
)

// TestThresholdCorrelation measures the bit error model behind Threshold
// (threshold.go) on the prints of distinct recordings of one machine (the
// hard case: they share its lines and resonances): at a fixed alignment the
// BER over n bits should have mean 0.5 and standard deviation c/(2√n) with
// c at most thrCorrelation, for every number of frames up to where the
// threshold meets its cap (319 frames; beyond, the cap decides).
func TestThresholdCorrelation(t *testing.T) {
	const fs = 16000.0
	fp := NewFingerprinter(CommonRate)
	rng := rand.New(rand.NewPCG(10, 5))
	// 6 machines × 10 recordings of 12 s (736 frames).
	var ps [][]Print
	for range 6 {
		m := synthtest.NewMachine(rng, fs)
		var pm []Print
		for range 10 {
			pm = append(pm, fp.Print(Print{}, ToCommonRate(m.Record(rng, 12), fs)))
		}
		ps = append(ps, pm)
	}
	// The lengths measured must reach where the threshold meets its cap.
	if Threshold(32*340, 1) < DefaultMaxBER {
		t.Errorf("the threshold at 340 frames is %.3f, below the cap %.2f: measure longer stretches", Threshold(32*340, 1), DefaultMaxBER)
	}
	for _, frames := range []int{64, 128, 192, 276, 340} {
		// Two disjoint-start stretches of each pair of one machine's
		// recordings.
		var sum, sum2 float64
		pairs := 0
		for _, pm := range ps {
			for i := range pm {
				for j := i + 1; j < len(pm); j++ {
					for _, st := range []int{0, 360} {
						e, _ := ber(pm[i].Words[st:st+frames], pm[j].Words[st:st+frames], 0)
						sum += e
						sum2 += e * e
						pairs++
					}
				}
			}
		}
		mean := sum / float64(pairs)
		sd := math.Sqrt(sum2/float64(pairs) - mean*mean)
		c := sd * 2 * math.Sqrt(float64(32*frames))
		t.Logf("%d frames: %d pairs: mean BER %.4f, sd %.4f, c = %.2f", frames, pairs, mean, sd, c)
		if math.Abs(mean-0.5) > 0.01 {
			t.Errorf("%d frames: mean BER %.4f of distinct recordings, want 0.5 ± 0.01", frames, mean)
		}
		if c > thrCorrelation {
			t.Errorf("%d frames: c = %.2f > thrCorrelation = %.2f", frames, c, thrCorrelation)
		}
	}
}
