package main

import (
	"bufio"
	"encoding/json"
	"os"
	"path/filepath"
	"testing"
	"thrum/machine/realdata"
)

// The bearing rig's records in one 12 kHz plant run end to end: the 48 kHz
// normal record is resampled (speed variants read their source span at
// the working rate; its ledger lines carry the source rate and
// ratio), the float records beyond ±1 go in, nothing is dropped.
func TestRealBearingPlantRuns(t *testing.T) {
	data := realdata.Dir(t, "cwru-bearing")
	dir := t.TempDir()
	for rel, src := range map[string]string{
		"motor-de/load-0/Normal_0_X097_DE_48000Hz.wav":                     "Normal_0_X097_DE_48000Hz.wav",
		"motor-de/load-0/anomalous/IR007_0_X105_DE_12000Hz.wav":            "IR007_0_X105_DE_12000Hz.wav",
		"motor-de/load-0/anomalous/OR007@6_0_X130_DE_12000Hz.wav":          "OR007@6_0_X130_DE_12000Hz.wav",
		"motor-de/load-0/session-fe/Normal_0_X097_FE_48000Hz.wav":          "Normal_0_X097_FE_48000Hz.wav",
		"motor-de/load-0/session-fe/anomalous/IR007_0_X105_FE_12000Hz.wav": "IR007_0_X105_FE_12000Hz.wav",
	} {
		p := filepath.Join(dir, "recordings", filepath.FromSlash(rel))
		os.MkdirAll(filepath.Dir(p), 0o755)
		if err := os.Symlink(filepath.Join(data, src), p); err != nil {
			t.Skipf("cannot link: %v", err)
		}
	}
	// Drive-end bearing SKF 6205 (9 balls, d = 0.3126 in, D = 1.537 in, per
	// the data's README), clips of 2 s; the two normal groups
	// (drive end, fan end) train, the real faults go to eval and test.
	plant := filepath.Join(dir, "plant.toml")
	if err := os.WriteFile(plant, []byte(`seed = 3
sample_rate = 12000
recordings = "recordings"
clip_seconds = 2

[split]
train = 1
eval = 0
test = 0

[[recipe]]
id = "light"
variants = 1
[[recipe.step]]
kind = "gain"
range = [-3, 3]
[[recipe.step]]
kind = "speed"
range = [-1, 1]

[[machine]]
id = "motor-de"
kind = "motor"
recipe = "light"
  [[machine.bearing]]
  balls = 9
  ball_diameter_mm = 7.94
  pitch_diameter_mm = 39.04
  contact_angle_deg = 0
  [[machine.condition]]
  name = "load-0"
  rpm = 1797
  band_percent = 1
`), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	stdout, stderr, code := cli(t, "run", plant, "--out", out, "-q")
	if code != exitOK {
		t.Fatalf("run: exit %d\n%s\n%s", code, stdout, stderr)
	}
	f, err := os.Open(filepath.Join(out, "motor-de", "ledger.jsonl"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sources := map[string]int{}
	resampled, sped := 0, 0
	sc := bufio.NewScanner(f)
	sc.Buffer(nil, 1<<20)
	for sc.Scan() {
		var e struct {
			Kind, Stage, Source, Resample, Origin string
			Speed                                 float64
			SourceRate                            int     `json:"source_rate"`
			SampleRate                            int     `json:"sample_rate"`
			Bandwidth                             float64 `json:"bandwidth_hz"`
		}
		if err := json.Unmarshal(sc.Bytes(), &e); err != nil {
			t.Fatal(err)
		}
		if e.Stage != "expand" || e.Kind != "output" {
			continue
		}
		sources[e.Source]++
		if e.SampleRate != 12000 || e.Bandwidth != 5400 {
			t.Errorf("%s: sample rate %d, bandwidth %v; want 12000, 5400", e.Source, e.SampleRate, e.Bandwidth)
		}
		if filepath.Ext(e.Source) == ".wav" && e.SourceRate == 48000 {
			resampled++
			if e.Origin == "augmented" && e.Speed != 1 {
				sped++
			}
			if e.Resample != "1/4" {
				t.Errorf("%s: resample %q, want 1/4", e.Source, e.Resample)
			}
		} else if e.SourceRate != 0 || e.Resample != "" {
			t.Errorf("%s: source rate %d, resample %q for a 12 kHz record", e.Source, e.SourceRate, e.Resample)
		}
	}
	if len(sources) != 5 || resampled == 0 || sped == 0 {
		t.Errorf("expand outputs by source %v (%d resampled, %d of them speed variants); want all 5 records, speed variants of the resampled ones", sources, resampled, sped)
	}
}
