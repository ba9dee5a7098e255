package main

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"thrum/machine/wavio"
)

// A recording of many clips is expanded in runs of clips on several
// workers: -j 1 and -j 2 write the same bytes, variants and fault cues of
// every clip included.
func TestLongRecordingSpreadsOverWorkers(t *testing.T) {
	dir := t.TempDir()
	src, err := os.ReadFile("../../testdata/plant/minimal.toml")
	if err != nil {
		t.Fatal(err)
	}
	toml := strings.Replace(string(src), `recordings = "recordings"`, "recordings = \"recordings\"\nclip_seconds = 0.5\n\n[split]\ntrain = 1\neval = 0\ntest = 0", 1) +
		"  [machine.faults]\n  kinds = [\"outer-race\"]\n"
	plant := filepath.Join(dir, "plant.toml")
	if err := os.WriteFile(plant, []byte(toml), 0o644); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(5, 6))
	for i, rel := range []string{"full-load/long.wav", "part-load/long.wav"} {
		// 20.3 s: 40 clips, more than one job's run
		x := make([]float64, 20*16000+4800)
		for k := range x {
			x[k] = 0.1*rng.NormFloat64() + 0.2*math.Sin(2*math.Pi*float64(100+50*i)*float64(k)/16000)
		}
		p := filepath.Join(dir, "recordings", "pump-a1", filepath.FromSlash(rel))
		os.MkdirAll(filepath.Dir(p), 0o755)
		if err := wavio.WriteFile(p, x, 16000, 1, wavio.PCM16); err != nil {
			t.Fatal(err)
		}
	}
	for _, j := range []string{"1", "2"} {
		out := filepath.Join(dir, "out-j"+j)
		for _, stage := range []string{"expand", "faults"} {
			if _, stderr, code := cli(t, stage, plant, "--out", out, "-q", "-j", j); code != exitOK {
				t.Fatalf("%s -j %s: %s", stage, j, stderr)
			}
		}
	}
	a, b := tree(t, filepath.Join(dir, "out-j1")), tree(t, filepath.Join(dir, "out-j2"))
	diffTrees(t, a, b, "-j 1 vs -j 2")
	var cues, variants int
	for k := range a {
		switch {
		case strings.Contains(k, "/augmented/"):
			variants++
		case strings.Contains(k, "/faults/"):
			cues++
		}
	}
	// 40 clips per recording, 2 variants and 1 cue per clip
	if variants != 2*40*2 || cues != 2*40 {
		t.Errorf("%d variants and %d fault cues, want %d and %d", variants, cues, 2*40*2, 2*40)
	}
}
