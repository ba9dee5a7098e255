package main

import (
	"bufio"
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"thrum/machine/wavio"
)

// A plant whose recordings come as a field team hands them over — 44.1 kHz
// and 48 kHz WAV (the 48 kHz one a stereo pair), a FLAC take, a float32
// accelerometer-style take beyond ±1 and a take at the working rate — runs
// end to end with no recording silently dropped: every one is surveyed
// without a problem and has recorded clips in the ledger, with its source
// rate and exact ratio where it was resampled.
func TestMixedFormatsPlantRuns(t *testing.T) {
	dir := t.TempDir()
	cond := filepath.Join(dir, "recordings", "fan-m1", "duty")
	if err := os.MkdirAll(cond, 0o755); err != nil {
		t.Fatal(err)
	}
	// Invented machine sound: a blade-pass line and two harmonics over noise.
	take := func(name string, rate, channels int, enc wavio.Encoding, peak float64, seed uint64) {
		rng := rand.New(rand.NewPCG(seed, 7))
		n := 3 * rate
		x := make([]float64, n*channels)
		for i := range n {
			tt := float64(i) / float64(rate)
			for ch := range channels {
				v := 0.5*math.Sin(2*math.Pi*245*tt+float64(ch)) + 0.25*math.Sin(2*math.Pi*490*tt) +
					0.1*math.Sin(2*math.Pi*735*tt) + 0.05*rng.NormFloat64()
				x[i*channels+ch] = peak * v / 0.95
			}
		}
		if err := wavio.WriteFile(filepath.Join(cond, name), x, rate, channels, enc); err != nil {
			t.Fatal(err)
		}
	}
	take("take-44k.wav", 44100, 1, wavio.PCM16, 0.5, 1)
	take("take-48k-pair.wav", 48000, 2, wavio.PCM24, 0.5, 2)
	take("take-16k.wav", 16000, 1, wavio.PCM16, 0.5, 3)
	take("take-sensor.wav", 16000, 1, wavio.Float32, 3.6, 4)
	flac, err := os.ReadFile(filepath.Join("..", "..", "testdata", "mixed", "take-flac.flac"))
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(cond, "take-flac.flac"), flac, 0o644); err != nil {
		t.Fatal(err)
	}
	plant := filepath.Join(dir, "plant.toml")
	if err := os.WriteFile(plant, []byte(`seed = 11
sample_rate = 16000
recordings = "recordings"
clip_seconds = 1

[split]
train = 0.6
eval = 0.2
test = 0.2

[[recipe]]
id = "light"
variants = 1
[[recipe.step]]
kind = "gain"
range = [-3, 3]

[[machine]]
id = "fan-m1"
kind = "fan"
blades = 7
recipe = "light"
  [[machine.condition]]
  name = "duty"
  rpm = 2100
  band_percent = 2
`), 0o644); err != nil {
		t.Fatal(err)
	}

	stdout, stderr, code := cli(t, "survey", plant, "--strict", "--no-caution")
	if code != exitOK {
		t.Fatalf("survey --strict: exit %d\n%s\n%s", code, stdout, stderr)
	}
	if !strings.Contains(stdout, "not full-scale audio") {
		t.Errorf("survey does not say the sensor take is not full-scale audio:\n%s", stdout)
	}
	out := filepath.Join(dir, "out")
	stdout, stderr, code = cli(t, "run", plant, "--out", out, "-q")
	if code != exitOK {
		t.Fatalf("run: exit %d\n%s\n%s", code, stdout, stderr)
	}

	f, err := os.Open(filepath.Join(out, "fan-m1", "ledger.jsonl"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	type seen struct {
		clips      int
		sourceRate int
		resample   string
	}
	got := map[string]*seen{}
	sc := bufio.NewScanner(f)
	sc.Buffer(nil, 1<<20)
	for sc.Scan() {
		var e struct {
			Kind, Stage, Source, Origin, Resample string
			SourceRate                            int `json:"source_rate"`
			SampleRate                            int `json:"sample_rate"`
		}
		if err := json.Unmarshal(sc.Bytes(), &e); err != nil {
			t.Fatal(err)
		}
		if e.Stage != "expand" || e.Kind != "output" || e.Origin != "recorded" {
			continue
		}
		if e.SampleRate != 16000 {
			t.Errorf("%s: written at %d Hz, want the working rate 16000", e.Source, e.SampleRate)
		}
		s := got[filepath.Base(e.Source)]
		if s == nil {
			s = &seen{}
			got[filepath.Base(e.Source)] = s
		}
		s.clips++
		s.sourceRate, s.resample = e.SourceRate, e.Resample
	}
	// Exact ratios: 16000/44100 = 160/441 and 16000/48000 = 1/3.
	want := map[string]seen{
		"take-44k.wav":      {3, 44100, "160/441"},
		"take-48k-pair.wav": {3, 48000, "1/3"},
		"take-16k.wav":      {3, 0, ""},
		"take-sensor.wav":   {3, 0, ""},
		"take-flac.flac":    {3, 0, ""},
	}
	for name, w := range want {
		g := got[name]
		if g == nil {
			t.Errorf("%s: no recorded clips in the ledger (dropped)", name)
			continue
		}
		if *g != w {
			t.Errorf("%s: %d clips, source rate %d, resample %q; want %d, %d, %q", name, g.clips, g.sourceRate, g.resample, w.clips, w.sourceRate, w.resample)
		}
	}
	if len(got) != len(want) {
		t.Errorf("recorded sources %v, want exactly %d", got, len(want))
	}
}
