package main

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io/fs"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/wavio"
	"thrum/split"
)

// badContentPlant is a small plant: one machine, two conditions of six
// 3 s takes (six unless told) each, four backgrounds, and a recipe whose every variant has a
// room, a background and a noise step. {{room}} is replaced by the room's
// size and absorption.
const badContentPlant = `seed = 11
sample_rate = 16000
recordings = "recordings"
clip_seconds = 1.0

[[room]]
id = "hall"
{{room}}
rt60_range = [0.1, 5.0]

[[zone]]
id = "near"
room = "hall"
min = [1.0, 1.0, 1.0]
max = [4.0, 4.0, 1.8]

[[background]]
id = "bg-1"
path = "backgrounds/bg-1.wav"

[[background]]
id = "bg-2"
path = "backgrounds/bg-2.wav"

[[background]]
id = "bg-3"
path = "backgrounds/bg-3.wav"

[[background]]
id = "bg-4"
path = "backgrounds/bg-4.wav"

[[recipe]]
id = "mix"
variants = 2
min_steps = 3
max_steps = 3
  [[recipe.step]]
  kind = "room"
  [[recipe.step]]
  kind = "background"
  range = [10.0, 20.0]
  [[recipe.step]]
  kind = "noise"
  range = [20.0, 30.0]

[[machine]]
id = "pump-a1"
kind = "pump"
blades = 6
room = "hall"
zone = "near"
position = [7.0, 5.0, 1.0]
recipe = "mix"
  [[machine.condition]]
  name = "full-load"
  rpm = 1480.0
  band_percent = 2.0
  [[machine.condition]]
  name = "part-load"
  rpm = 1180.0
  band_percent = 3.0
`

const ordinaryRoom = "size = [12.0, 9.0, 5.0]\nabsorption = 0.3"

// writeBadContentPlant writes the plant with the given room and returns
// the plant file. Takes are PCM16 tones in noise; the background is noise.
func writeBadContentPlant(t *testing.T, roomTOML string, takes int) string {
	t.Helper()
	dir := t.TempDir()
	plant := filepath.Join(dir, "plant.toml")
	if err := os.WriteFile(plant, []byte(strings.Replace(badContentPlant, "{{room}}", roomTOML, 1)), 0o644); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(1, 2))
	noise := func(n int, amp float64, hz float64) []float64 {
		x := make([]float64, n)
		for i := range x {
			x[i] = amp * (0.3*rng.NormFloat64() + math.Sin(2*math.Pi*hz*float64(i)/16000))
		}
		return x
	}
	for _, cond := range []string{"full-load", "part-load"} {
		for k := 1; k <= takes; k++ {
			p := filepath.Join(dir, "recordings", "pump-a1", cond, fmt.Sprintf("take-%02d.wav", k))
			os.MkdirAll(filepath.Dir(p), 0o755)
			if err := wavio.WriteFile(p, noise(3*16000, 0.1, 123+float64(k)), 16000, 1, wavio.PCM16); err != nil {
				t.Fatal(err)
			}
		}
	}
	for k := 1; k <= 4; k++ {
		bg := filepath.Join(dir, "backgrounds", fmt.Sprintf("bg-%d.wav", k))
		os.MkdirAll(filepath.Dir(bg), 0o755)
		if err := wavio.WriteFile(bg, noise(4*16000, 0.05, 50), 16000, 1, wavio.PCM16); err != nil {
			t.Fatal(err)
		}
	}
	return plant
}

// takeWith returns a 3 s float32 take holding v at interleaved index at
// (a NaN or an infinity is written as its float32 bits).
func takeWith(at int, v float64) []float64 {
	x := make([]float64, 3*16000)
	for i := range x {
		x[i] = 0.1 * math.Sin(2*math.Pi*130*float64(i)/16000)
	}
	if at >= 0 {
		x[at] = v
	}
	return x
}

// Bad content never stops the run: a recording with non-finite, absurd or
// only zero samples is a survey problem naming the file and the sample and
// is not used; a background with a NaN or a room whose T30 cannot be
// measured rejects the variants that use it, naming the background or room.
// In these cases run exits 0 (success: the plant was processed without the
// bad input, which stderr names; survey --strict exits 3 for the
// recordings), the other recordings are processed, no NaN or infinity is
// written anywhere under OUT. A background of zeros is refused when the
// plant is loaded (exit 1, naming its key). The recordings never change.
func TestBadContentIsNamedAndTheRunGoesOn(t *testing.T) {
	const bad = "pump-a1/full-load/take-01.wav"
	cases := []struct {
		name   string
		room   string
		take   []float64 // float32 replacement of bad; nil keeps it
		bg     []float64 // float32 replacement of the first training background; nil keeps it
		stderr []string
		reason string // rejection every room or background variant must carry
		strict bool   // survey --strict exits 3
		exit   int    // run's exit code
		takes  int    // per condition; 0 means 6
	}{
		{name: "silent", take: make([]float64, 3*16000), strict: true,
			stderr: []string{bad + ": silent: all samples are 0"}},
		{name: "nan", take: takeWith(20000, math.NaN()), strict: true,
			stderr: []string{bad + ": non-finite: sample 20000 of channel 0 (byte offset ", ") is NaN"}},
		{name: "+inf", take: takeWith(5, math.Inf(1)), strict: true,
			stderr: []string{bad + ": non-finite: sample 5 of channel 0", "is +Inf"}},
		{name: "-inf", take: takeWith(47999, math.Inf(-1)), strict: true,
			stderr: []string{bad + ": non-finite: sample 47999 of channel 0", "is -Inf"}},
		{name: "1e30", take: takeWith(100, 1e30), strict: true,
			stderr: []string{bad + ": absurd-sample: sample 100 of channel 0", "is 1e+30, beyond the sanity limit"}},
		// loading the plant refuses a silent background file, at its key
		{name: "silent background", bg: make([]float64, 4*16000), exit: exitError,
			stderr: []string{"background[{{bg}}].path", "backgrounds/{{bg}}.wav is silent"}},
		// the stage refuses what loading lets through: a NaN in a background
		{name: "nan background", bg: takeWith(777, math.NaN()), reason: "background-samples-unusable",
			stderr: []string{"background-samples-unusable: background {{bg}} (backgrounds/{{bg}}.wav): sample 777 of channel 0 is NaN"}},
		// Eyring ≈ 18 s: the response is capped at 10 s, a 33 dB decay,
		// too little for T30.
		{name: "reverberant room", room: "size = [14.0, 11.0, 8.0]\nabsorption = 0.015", reason: "rt60-unmeasurable", takes: 3,
			stderr: []string{"rt60-unmeasurable: room hall, microphone "}},
		{name: "reverberant walls", room: "size = [14.0, 11.0, 8.0]\nabsorption = [0.01, 0.01, 0.01, 0.01, 0.01, 0.05]", reason: "rt60-unmeasurable", takes: 3,
			stderr: []string{"rt60-unmeasurable: room hall, microphone "}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			room := c.room
			if room == "" {
				room = ordinaryRoom
			}
			takes := c.takes
			if takes == 0 {
				takes = 6
			}
			// each microphone position of a reverberant room costs a long
			// response: fewer takes draw fewer positions
			plant := writeBadContentPlant(t, room, takes)
			dir := filepath.Dir(plant)
			if c.take != nil {
				if err := wavio.WriteFile(filepath.Join(dir, "recordings", filepath.FromSlash(bad)), c.take, 16000, 1, wavio.Float32); err != nil {
					t.Fatal(err)
				}
			}
			silenced := ""
			if c.bg != nil {
				p, err := machine.Load(plant)
				if err != nil {
					t.Fatal(err)
				}
				// only the training share of the backgrounds is mixed in
				train := split.TrainingPolicy(&machine.Inventory{Plant: p}).Backgrounds()
				if len(train) == 0 {
					t.Fatal("no training background")
				}
				silenced = train[0]
				if err := wavio.WriteFile(filepath.Join(dir, "backgrounds", silenced+".wav"), c.bg, 16000, 1, wavio.Float32); err != nil {
					t.Fatal(err)
				}
			}
			before := tree(t, filepath.Join(dir, "recordings"))
			out := filepath.Join(dir, "out")
			stdout, stderr, code := cli(t, "run", plant, "--out", out, "-q")
			if code != c.exit {
				t.Fatalf("run exit %d, want %d\nstdout:\n%s\nstderr:\n%s", code, c.exit, stdout, stderr)
			}
			for _, want := range c.stderr {
				want = strings.ReplaceAll(want, "{{bg}}", silenced)
				if !strings.Contains(stderr, want) {
					t.Errorf("stderr lacks %q:\n%s", want, stderr)
				}
			}
			if c.strict {
				if _, _, code := cli(t, "survey", plant, "--strict"); code != exitProblems {
					t.Errorf("survey --strict exit %d, want %d", code, exitProblems)
				}
			}
			diffTrees(t, before, tree(t, filepath.Join(dir, "recordings")), "recordings")
			if c.exit != exitOK {
				return
			}
			checkFinite(t, out)
			checkRecorded(t, out)
			es, err := ledger.ReadFile(filepath.Join(out, "pump-a1", ledger.FileName))
			if err != nil {
				t.Fatal(err)
			}
			recorded, rejected := map[string]int{}, 0
			for _, e := range es {
				if e.Kind == ledger.KindRejected {
					rejected++
				}
				if e.Stage == ledger.Expand && e.Kind == ledger.KindOutput && e.Variant == -1 {
					recorded[e.Source]++
				}
				uses := false
				for _, s := range e.Steps {
					uses = uses || (s.Kind == "background" && s.Text["background"] == silenced) ||
						(c.reason == "rt60-unmeasurable" && s.Kind == "room")
				}
				if uses && (e.Kind != ledger.KindRejected || e.Reason != c.reason) {
					t.Errorf("%s variant %d clip %d: kind %s reason %q, want rejected %s", e.Source, e.Variant, e.Clip, e.Kind, e.Reason, c.reason)
				}
			}
			if c.reason != "" && rejected == 0 {
				t.Errorf("no variant rejected for %s", c.reason)
			}
			for _, cond := range []string{"full-load", "part-load"} {
				for k := 1; k <= takes; k++ {
					rel := fmt.Sprintf("pump-a1/%s/take-%02d.wav", cond, k)
					want := 3
					if c.take != nil && rel == bad {
						want = 0
					}
					if recorded[rel] != want {
						t.Errorf("%s: %d recorded clips, want %d", rel, recorded[rel], want)
					}
				}
			}
		})
	}
}

// checkFinite reads every ledger line, JSON and CSV file under out: each
// must parse, and no number in it may be NaN or infinite.
func checkFinite(t *testing.T, out string) {
	t.Helper()
	err := filepath.WalkDir(out, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		switch filepath.Ext(p) {
		case ".jsonl":
			for i, line := range bytes.Split(bytes.TrimSpace(b), []byte("\n")) {
				var v any
				if err := json.Unmarshal(line, &v); err != nil {
					t.Errorf("%s line %d: %v", p, i+1, err)
				}
			}
		case ".json":
			var v any
			if err := json.Unmarshal(b, &v); err != nil {
				t.Errorf("%s: %v", p, err)
			}
		case ".csv":
			rows, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
			if err != nil {
				t.Errorf("%s: %v", p, err)
			}
			for i, row := range rows {
				for _, f := range row {
					if v, err := strconv.ParseFloat(f, 64); err == nil && (math.IsNaN(v) || math.IsInf(v, 0)) {
						t.Errorf("%s row %d: %q", p, i+1, f)
					}
				}
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
}
