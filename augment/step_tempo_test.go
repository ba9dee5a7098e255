package augment

import (
	"math"
	"testing"

	"thrum/machine"
)

// planTempo chains the tempo steps of a variant back from the clip
// length, and stretch turns each step's In frames into exactly its Out
// frames, full to the last sample: the last 10 ms of a steady tone keep
// the RMS of the middle 10 ms (no padding, and the last frames are searched
// as freely as the middle ones: the span includes WSOLA's reach).
func TestTempoStepsFillOneClip(t *testing.T) {
	const fs, n = 16000, 16000
	for _, tc := range []struct {
		name     string
		percents []float64
	}{
		{"faster", []float64{20}},
		{"slower", []float64{-30}},
		{"half speed", []float64{-50}},
		{"odd factor", []float64{7.3}},
		{"two steps", []float64{12.5, -17}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var drawn []Drawn
			for _, p := range tc.percents {
				drawn = append(drawn, Drawn{Step: &machine.Step{Kind: "tempo"}, Params: &tempoStep{Percent: p}},
					Drawn{Step: &machine.Step{Kind: "gain"}, Params: &gainStep{}})
			}
			planTempo(drawn, n, fs)
			m, ok := TempoSpan(drawn, n)
			want := float64(n)
			for i := len(tc.percents) - 1; i >= 0; i-- {
				want = math.Ceil(want*(1+tc.percents[i]/100)-1e-9) + float64(tempoReach(fs))
			}
			if !ok || m != int64(want) {
				t.Fatalf("span %d (%v), want %v", m, ok, want)
			}
			x := tone(int(m), 440, fs, 0.5, 0)
			for _, d := range drawn {
				if p, ok := d.Params.(*tempoStep); ok {
					x = p.apply(stepEnv{env: &env{fs: fs}}, nil, x)
					if int64(len(x)) != p.Out {
						t.Fatalf("step wrote %d frames, want %d", len(x), p.Out)
					}
				}
			}
			if len(x) != n {
				t.Fatalf("%d frames, want %d", len(x), n)
			}
			rms := func(y []float64) float64 {
				s := 0.0
				for _, v := range y {
					s += v * v
				}
				return math.Sqrt(s / float64(len(y)))
			}
			tail, mid := rms(x[n-fs/100:]), rms(x[n/2:n/2+fs/100])
			if d := db(tail / mid); math.Abs(d) > 0.5 {
				t.Errorf("last 10 ms %.2f dB re the middle 10 ms, want within 0.5 dB", d)
			}
		})
	}
}
