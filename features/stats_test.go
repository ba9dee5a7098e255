package features

import (
	"bytes"
	"math"
	"math/rand/v2"
	"path/filepath"
	"strings"
	"testing"
)

func TestSummarySignals(t *testing.T) {
	const fs = 16000
	z, err := NewSummarizer(Config{})
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(9, 9))
	gauss := make([]float64, 4*fs)
	for i := range gauss {
		gauss[i] = 0.1 * rng.NormFloat64()
	}
	white := z.Summarize(gauss, fs)
	sine := z.Summarize(tone(fs, fs, 1000, 1), fs)
	silent := z.Summarize(make([]float64, 2048), fs)

	tests := []struct {
		name      string
		got, want float64
		tol       float64
	}{
		// A full-scale sine has RMS 1/√2: −3.0103 dB re full scale, crest √2
		// (textbook; AES17 notes the −3.01 dB offset, from memory).
		{"sine rms dBFS", sine.RMSdBFS, -3.0103, 1e-3},
		{"sine peak dBFS", sine.PeakdBFS, 0, 1e-6},
		{"sine crest", sine.Crest, math.Sqrt2, 1e-4},
		{"sine crest dB", sine.CrestDB, 3.0103, 1e-3},
		// E[sin⁴]/E[sin²]² = (3/8)/(1/4) = 1.5 (common practice).
		{"sine kurtosis", sine.Kurtosis, 1.5, 1e-6},
		{"sine zero crossings/s", sine.ZeroCrossings, 2000, 2},
		{"sine centroid", sine.CentroidHz, 1000, 1},
		{"sine rolloff", sine.Rolloff85Hz, 1000, 16},
		// Gaussian kurtosis 3 (Pearson's, not excess); N = 64000 gives a
		// standard error of about √(24/N) ≈ 0.02.
		{"gauss kurtosis", white.Kurtosis, 3, 0.1},
		{"gauss rms dBFS", white.RMSdBFS, -20, 0.1},
		// White noise: flat spectrum (flatness 0 dB, minus the bias of the
		// log of χ² periodogram averages), centroid at fs/4.
		{"white flatness", white.FlatnessDB, 0, 0.3},
		{"white centroid", white.CentroidHz, 4000, 100},
		{"silence rms", silent.RMSdBFS, LevelFloorDB, 0},
		{"silence kurtosis", silent.Kurtosis, 0, 0},
	}
	for _, tc := range tests {
		if math.Abs(tc.got-tc.want) > tc.tol {
			t.Errorf("%s: %v, want %v ± %v", tc.name, tc.got, tc.want, tc.tol)
		}
	}
	if sine.FlatnessDB > -20 {
		t.Errorf("tone flatness %v dB, want strongly negative", sine.FlatnessDB)
	}
}

func TestStatsAccumulate(t *testing.T) {
	const bands = 5
	rng := rand.New(rand.NewPCG(3, 4))
	acc := NewAccumulator(bands)
	var all [][]float32
	names := []string{"a.wav", "b.wav", "c.wav", "d.wav"}
	for i, n := range names {
		frames := 50 + 37*i
		x := make([]float32, frames*bands)
		for j := range x {
			x[j] = float32(1000 + float64(j%bands)*3 + rng.NormFloat64()*float64(1+j%bands))
		}
		all = append(all, x)
		if err := acc.Add(n, x, frames); err != nil {
			t.Fatal(err)
		}
	}
	if err := acc.Add("a.wav", all[0], len(all[0])/bands); err == nil {
		t.Error("duplicate input accepted")
	}
	if err := acc.Add("e.wav", make([]float32, 7), 2); err == nil {
		t.Error("ragged input accepted")
	}
	nan := []float32{float32(math.NaN()), 0, 0, 0, 0}
	if err := acc.Add("nan.wav", nan, 1); err == nil {
		t.Error("NaN accepted")
	}
	s := acc.Stats("pump-a1")
	// Two-pass reference over the concatenation.
	for b := range bands {
		var sum float64
		var n int
		for _, x := range all {
			for j := b; j < len(x); j += bands {
				sum += float64(x[j])
				n++
			}
		}
		mean := sum / float64(n)
		var ss float64
		for _, x := range all {
			for j := b; j < len(x); j += bands {
				d := float64(x[j]) - mean
				ss += d * d
			}
		}
		std := math.Sqrt(ss / float64(n))
		if math.Abs(s.Mean[b]-mean) > 1e-10*math.Abs(mean) || math.Abs(s.Std[b]-std) > 1e-9*std {
			t.Errorf("band %d: mean %v std %v, want %v %v", b, s.Mean[b], s.Std[b], mean, std)
		}
		if s.Frames != int64(n) {
			t.Errorf("frames %d, want %d", s.Frames, n)
		}
	}
	if strings.Join(s.Inputs, ",") != strings.Join(names, ",") || s.Machine != "pump-a1" {
		t.Errorf("inputs %v machine %q", s.Inputs, s.Machine)
	}

	// Normalised training features have mean 0 and std 1 per band.
	acc2 := NewAccumulator(bands)
	for i, x := range all {
		y := append([]float32(nil), x...)
		s.Normalize(y, len(y)/bands)
		acc2.Add(names[i], y, len(y)/bands)
	}
	s2 := acc2.Stats("pump-a1")
	for b := range bands {
		if math.Abs(s2.Mean[b]) > 1e-4 || math.Abs(s2.Std[b]-1) > 1e-4 {
			t.Errorf("normalised band %d: mean %v std %v", b, s2.Mean[b], s2.Std[b])
		}
	}

	// JSON round trip through an atomic file.
	path := filepath.Join(t.TempDir(), "stats.json")
	if err := s.Save(path); err != nil {
		t.Fatal(err)
	}
	back, err := LoadStats(path)
	if err != nil {
		t.Fatal(err)
	}
	if back.Frames != s.Frames || back.Mean[3] != s.Mean[3] || back.Std[4] != s.Std[4] || len(back.Inputs) != 4 {
		t.Errorf("round trip: %+v", back)
	}
}

func TestReadStatsErrors(t *testing.T) {
	tests := map[string]string{
		"not json":      `{`,
		"unknown field": `{"machine":"m","inputs":["a"],"frames":1,"mean":[0],"std":[1],"extra":1}`,
		"no inputs":     `{"machine":"m","inputs":[],"frames":1,"mean":[0],"std":[1]}`,
		"ragged":        `{"machine":"m","inputs":["a"],"frames":1,"mean":[0,1],"std":[1]}`,
		"no frames":     `{"machine":"m","inputs":["a"],"frames":0,"mean":[0],"std":[1]}`,
		"negative std":  `{"machine":"m","inputs":["a"],"frames":1,"mean":[0],"std":[-1]}`,
	}
	for name, src := range tests {
		if _, err := ReadStats(strings.NewReader(src), "stats.json"); err == nil {
			t.Errorf("%s: accepted", name)
		}
	}
	var buf bytes.Buffer
	ok := Stats{Machine: "m", Inputs: []string{"a"}, Frames: 1, Mean: []float64{0}, Std: []float64{1}}
	ok.WriteJSON(&buf)
	if _, err := ReadStats(&buf, "ok"); err != nil {
		t.Error(err)
	}
}

func TestMomentsMerge(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	x := make([]float32, 300*3)
	for i := range x {
		x[i] = float32(rng.NormFloat64())
	}
	whole := ClipMoments(Moments{}, x, 300, 3)
	var merged Moments
	for _, cut := range [][2]int{{0, 17}, {17, 200}, {200, 300}} {
		merged.Merge(ClipMoments(Moments{}, x[cut[0]*3:cut[1]*3], cut[1]-cut[0], 3))
	}
	for b := range 3 {
		if math.Abs(whole.Mean[b]-merged.Mean[b]) > 1e-12 || math.Abs(whole.M2[b]-merged.M2[b]) > 1e-9 {
			t.Errorf("band %d: whole %v/%v merged %v/%v", b, whole.Mean[b], whole.M2[b], merged.Mean[b], merged.M2[b])
		}
	}
}

// The clip summary from the log-mel's own power spectra is the one a second
// STFT gives, to the last bit: the same frames, the same sums in the same
// order. In magnitude mode the log-mel has no power to give.
func TestSummarizePowerMatchesSummarize(t *testing.T) {
	const fs = 16000
	rng := rand.New(rand.NewPCG(3, 4))
	noise := make([]float64, 3*fs+123)
	for i := range noise {
		noise[i] = 0.2*rng.NormFloat64() + 0.01
	}
	tests := []struct {
		name   string
		cfg    Config
		x      []float64
		frames bool // whether ComputePower gives the sums
	}{
		{"noise, defaults", Config{}, noise, true},
		{"tone, centred", Config{Center: true}, tone(2*fs, fs, 440, 0.5), true},
		{"noise, centred zero pad, small frames", Config{Center: true, Pad: PadZero, NFFT: 256, Hop: 100}, noise, true},
		{"shorter than a frame", Config{}, noise[:500], true},
		{"silence", Config{}, make([]float64, 4096), true},
		{"magnitude mode", Config{Magnitude: true}, noise, false},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			lm, err := NewLogMel(tc.cfg, fs)
			if err != nil {
				t.Fatal(err)
			}
			z, err := NewSummarizer(tc.cfg)
			if err != nil {
				t.Fatal(err)
			}
			power := make([]float64, lm.Bins())
			feat, frames, ok := lm.ComputePower(nil, tc.x, power)
			if ok != tc.frames {
				t.Fatalf("ComputePower ok = %v, want %v", ok, tc.frames)
			}
			plain, plainFrames := lm.Compute(nil, tc.x)
			if plainFrames != frames || !slicesEqual32(plain, feat) {
				t.Errorf("ComputePower's features differ from Compute's")
			}
			if !ok {
				return
			}
			got, want := z.SummarizePower(tc.x, fs, power, frames), z.Summarize(tc.x, fs)
			if got != want {
				t.Errorf("SummarizePower %+v\nSummarize      %+v", got, want)
			}
		})
	}
}

func slicesEqual32(a, b []float32) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float32bits(a[i]) != math.Float32bits(b[i]) {
			return false
		}
	}
	return true
}

// The summary's peak follows math.Max over |x| in every case of
// non-finite samples (NaN wins, except over +Inf), as it did when it
// called math.Max.
func TestSummaryPeakNonFinite(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	z, err := NewSummarizer(Config{})
	if err != nil {
		t.Fatal(err)
	}
	for _, x := range [][]float64{
		{0.5, -0.25}, {0, -0.0}, {0.1, nan, 0.2}, {nan, inf, 0.3}, {0.2, -inf, nan}, {nan}, {-inf}, {nan, 0.9},
	} {
		want := 0.0
		for _, v := range x {
			want = math.Max(want, math.Abs(v))
		}
		got := z.timeStats(x, 16000)
		if w := levelDB(want); math.Float64bits(got.PeakdBFS) != math.Float64bits(w) {
			t.Errorf("%v: peak %v dBFS, math.Max gives %v", x, got.PeakdBFS, w)
		}
	}
}
