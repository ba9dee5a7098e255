package main

import (
	"encoding/csv"
	"encoding/json"
	"io/fs"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"syscall"
	"testing"
	"time"

	"thrum/augment"
	"thrum/features"
	"thrum/machine"
	"thrum/machine/demoplant"
	"thrum/machine/ledger"
	"thrum/machine/wavio"
)

// fileStamp is what a rewrite changes even when the bytes stay the same.
type fileStamp struct {
	ino   uint64
	mtime time.Time
	size  int64
}

func stamps(t *testing.T, root string) map[string]fileStamp {
	t.Helper()
	out := map[string]fileStamp{}
	err := filepath.WalkDir(root, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		fi, err := d.Info()
		if err != nil {
			return err
		}
		st := fileStamp{mtime: fi.ModTime(), size: fi.Size()}
		if s, ok := fi.Sys().(*syscall.Stat_t); ok {
			st.ino = s.Ino
		}
		rel, _ := filepath.Rel(root, p)
		out[filepath.ToSlash(rel)] = st
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// checkFeaturesOutputs checks a run's output of a plant (the demo's test
// calls it, so the suite runs the plant once): the features index (one row
// per log-mel file, masked copies included, one shape per machine, the use
// column), that a features rerun with the audio moved away succeeds without
// reading audio or rewriting any file, and that README's Python loader
// runs on the output and every split stacks.
func checkFeaturesOutputs(t *testing.T, plant, out string) {
	t.Helper()
	p, err := machine.Load(plant)
	if err != nil {
		t.Fatal(err)
	}

	// the index names every log-mel file once, masked copies with their record
	f, err := os.Open(filepath.Join(out, "features", "index.csv"))
	if err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(f).ReadAll()
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	indexed := map[string]bool{}
	shape := map[string]string{}
	uses := map[string]int{}
	realAnomalous := map[string]int{} // machine/split → real anomalous files
	for _, r := range recs[1:] {
		g := func(k string) string { return r[col[k]] }
		if indexed[g("path")] {
			t.Errorf("%s twice in the index", g("path"))
		}
		indexed[g("path")] = true
		uses[g("use")]++
		if sh := g("frames") + "x" + g("bands"); shape[g("machine")] == "" {
			shape[g("machine")] = sh
		} else if shape[g("machine")] != sh {
			t.Errorf("%s: shape %s, other files of %s %s", g("path"), sh, g("machine"), shape[g("machine")])
		}
		want := features.UseOf(machine.Split(g("split")), machine.Origin(g("origin")), machine.Label(g("label")))
		if g("use") != want {
			t.Errorf("%s: use %q, want %q", g("path"), g("use"), want)
		}
		if g("use") == features.UseTrainNormal && (g("label") != "normal" || g("origin") == string(machine.OriginSyntheticFault)) {
			t.Errorf("%s: train-normal but %s %s", g("path"), g("label"), g("origin"))
		}
		if (g("origin") == string(machine.OriginSyntheticFault)) != (g("fault_kind") != "") {
			t.Errorf("%s: origin %s, fault kind %q", g("path"), g("origin"), g("fault_kind"))
		}
		if g("origin") == string(machine.OriginRecorded) && g("label") == string(machine.LabelAnomalous) && g("mask_of") == "" {
			realAnomalous[g("machine")+"/"+g("split")]++
		}
		if g("mask_of") != "" {
			var rec features.MaskRecord
			if err := json.Unmarshal([]byte(g("mask")), &rec); err != nil || !indexed[g("mask_of")] {
				t.Errorf("%s: mask of %q (indexed before it: %v), record %q: %v", g("path"), g("mask_of"), indexed[g("mask_of")], g("mask"), err)
			}
		}
		for _, k := range []string{"group", "source", "condition", "speed", "settings_sha256"} {
			if g(k) == "" {
				t.Errorf("%s: no %s", g("path"), k)
			}
		}
	}
	for _, u := range []string{features.UseTrainNormal, features.UseSyntheticAnomaly, features.UseEval, features.UseTest} {
		if uses[u] == 0 {
			t.Errorf("no file of use %s in the demo (uses %v)", u, uses)
		}
	}
	// every machine has real anomalous files on both evaluation sides
	for _, m := range p.Machines {
		for _, sp := range []machine.Split{machine.SplitEval, machine.SplitTest} {
			if realAnomalous[m.ID+"/"+string(sp)] == 0 {
				t.Errorf("%s: no real anomalous file in %s (%v)", m.ID, sp, realAnomalous)
			}
		}
	}
	logmel := regexp.MustCompile(`^features/.*/.*-c\d{4}[^.]*(\.mask\d\d)?\.npy$`)
	masked := 0
	filepath.WalkDir(filepath.Join(out, "features"), func(q string, d fs.DirEntry, err error) error {
		rel, _ := filepath.Rel(out, q)
		rel = filepath.ToSlash(rel)
		if err == nil && !d.IsDir() && logmel.MatchString(rel) {
			if !indexed[rel] {
				t.Errorf("%s is not in the index", rel)
			}
			if strings.Contains(rel, ".mask") {
				masked++
			}
		}
		return nil
	})
	if masked == 0 {
		t.Error("no masked copy on disk")
	}

	// a rerun with every audio file moved away: nothing is read or rewritten
	before, beforeSum := stamps(t, filepath.Join(out, "features")), tree(t, filepath.Join(out, "features"))
	var moved []string
	for _, m := range p.Machines {
		filepath.WalkDir(filepath.Join(out, m.ID), func(q string, d fs.DirEntry, err error) error {
			if err == nil && strings.HasSuffix(q, ".wav") {
				if os.Rename(q, q+".away") == nil {
					moved = append(moved, q)
				}
			}
			return nil
		})
	}
	stdout, stderr, code := cli(t, "features", plant, "--out", out, "-q")
	for _, q := range moved {
		os.Rename(q+".away", q)
	}
	if code != exitOK {
		t.Fatalf("features rerun without audio: exit %d\n%s\n%s", code, stdout, stderr)
	}
	if len(moved) == 0 || strings.Contains(stdout, "reused     0") {
		t.Errorf("moved %d audio files; rerun:\n%s", len(moved), stdout)
	}
	after := stamps(t, filepath.Join(out, "features"))
	for k, st := range before {
		if after[k] != st {
			t.Errorf("rerun rewrote %s (%+v → %+v)", k, st, after[k])
		}
	}
	diffTrees(t, beforeSum, tree(t, filepath.Join(out, "features")), "features rerun")

	// README's loader, then np.stack of every split of every machine
	const python = "/usr/bin/python3"
	if err := exec.Command(python, "-c", "import numpy").Run(); err != nil {
		t.Log("numpy not available, README's loader not run:", err)
		return
	}
	readme, err := os.ReadFile(filepath.Join("..", "..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	m := regexp.MustCompile("(?s)<!-- loader:[^>]*-->\n```python\n(.*?)```").FindSubmatch(readme)
	if m == nil {
		t.Fatal("README has no loader block")
	}
	for _, mc := range p.Machines {
		src := strings.Replace(string(m[1]), `OUT, MACHINE = "OUT", "pump-p1"`, "import sys\nOUT, MACHINE = sys.argv[1], sys.argv[2]", 1)
		src += `
assert all(r["use"] == "train-normal" and r["label"] == "normal" and r["origin"] != "synthetic-fault" for r in train)
assert X.ndim == 3 and X.shape[0] == len(train) and np.isfinite(X).all(), X.shape
assert len(masks) == sum(1 for r in train if r["mask_of"]) > 0
for sp in ("train", "eval", "test"):
    S = np.stack([np.load(f"{OUT}/{r['path']}") for r in rows if r["split"] == sp])
    print(MACHINE, sp, S.shape)
`
		b, err := exec.Command(python, "-c", src, out, mc.ID).CombinedOutput()
		if err != nil {
			t.Errorf("loader on %s: %v\n%s", mc.ID, err, b)
		}
		t.Logf("%s", b)
	}
}

// TestSpeedWithoutRoomIsRejected: with recordings exactly one clip long, a
// speed-up has no source span to fill a clip and is rejected
// (no-room-for-speed), never padded; a slow-down reads less than the
// recording and gives exactly one clip.
func TestSpeedWithoutRoomIsRejected(t *testing.T) {
	dir := t.TempDir()
	plant, err := demoplant.Write(dir, demoplant.Options{Seconds: 3})
	if err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	for _, stage := range []string{"expand", "faults"} {
		if stdout, stderr, code := cli(t, stage, plant, "--out", out, "-q"); code != exitOK {
			t.Fatalf("%s exit %d\n%s\n%s", stage, code, stdout, stderr)
		}
	}
	entries, err := ledger.ReadTree(out)
	if err != nil {
		t.Fatal(err)
	}
	var clip int64
	rejected, slower := 0, 0
	for _, e := range entries {
		if e.Origin == machine.OriginRecorded {
			clip = e.ClipFrames
		}
	}
	for _, e := range entries {
		switch {
		case e.Speed > 1:
			if e.Kind != ledger.KindRejected || e.Reason != augment.RejectNoRoomForSpeed {
				t.Errorf("%s %s clip %d variant %d, speed %v: %s %q, want rejected %s", e.Stage, e.Source, e.Clip, e.Variant, e.Speed, e.Kind, e.Reason, augment.RejectNoRoomForSpeed)
			}
			rejected++
		case e.Kind == ledger.KindOutput && e.Speed < 1 && e.Speed > 0:
			a, err := wavio.ReadFile(filepath.Join(out, filepath.FromSlash(e.Path)))
			if err != nil {
				t.Fatal(err)
			}
			if int64(a.Frames) != clip || e.ClipFrames != int64(math.Ceil(float64(clip)*e.Speed-1e-9)) {
				t.Errorf("%s: %d frames from a span of %d at speed %v, clip %d", e.Path, a.Frames, e.ClipFrames, e.Speed, clip)
			}
			slower++
		}
	}
	if clip == 0 || rejected == 0 || slower == 0 {
		t.Errorf("clip %d frames, %d speed-ups rejected, %d slow-downs checked", clip, rejected, slower)
	}
}

// TestTempoKeepsClipLength: with a tempo step in every recipe (2 s clips,
// remainder "pad", 5 s recordings, so the last clip of each recording is
// padded), every augmented output is exactly one clip long; a variant
// with a tempo step records the source span it read: ⌈n·a⌉ frames for
// tempo factor a plus WSOLA's 50 ms reach (times the speed ratio r when it
// also changes speed), starting at the clip's start or, near the
// recording's end, earlier; replay of such outputs is byte-exact.
func TestTempoKeepsClipLength(t *testing.T) {
	dir := t.TempDir()
	plant, err := demoplant.Write(dir, demoplant.Options{Seconds: 5})
	if err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(plant)
	if err != nil {
		t.Fatal(err)
	}
	src := string(b)
	for _, r := range [][2]string{
		{"clip_seconds = 5\n", "clip_seconds = 2\n"},
		{`remainder = "drop"`, `remainder = "pad"`},
		// fewer variants, a tempo step first in each recipe
		{"variants = 4\nmin_steps = 2\nmax_steps = 4\n", "variants = 2\nmin_steps = 2\nmax_steps = 3\n\n  [[recipe.step]]\n  kind = \"tempo\"\n  range = [-20.0, 20.0]\n  nonphysical = true\n"},
		{"variants = 3\nmin_steps = 1\nmax_steps = 3\n", "variants = 2\nmin_steps = 2\nmax_steps = 2\n\n  [[recipe.step]]\n  kind = \"tempo\"\n  range = [-20.0, 20.0]\n  nonphysical = true\n"},
	} {
		if !strings.Contains(src, r[0]) {
			t.Fatalf("demo plant has no %q", r[0])
		}
		src = strings.Replace(src, r[0], r[1], 1)
	}
	if err := os.WriteFile(plant, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	if stdout, stderr, code := cli(t, "expand", plant, "--out", out, "-q"); code != exitOK {
		t.Fatalf("expand exit %d\n%s\n%s", code, stdout, stderr)
	}
	entries, err := ledger.ReadTree(out)
	if err != nil {
		t.Fatal(err)
	}
	// tempoReach: WSOLA's last frame reads up to a 40 ms frame and its
	// 10 ms search tolerance past the nominal span (augment.Tempo)
	const n, total, tempoReach = 2 * 16000, 5 * 16000, 800
	tempoOnly, both, moved := 0, 0, 0
	var replay []string
	for _, e := range entries {
		if e.Origin != machine.OriginAugmented {
			continue
		}
		if e.Kind == ledger.KindOutput {
			a, err := wavio.ReadFile(filepath.Join(out, filepath.FromSlash(e.Path)))
			if err != nil {
				t.Fatal(err)
			}
			if a.Frames != n {
				t.Errorf("%s: %d frames, want one clip of %d", e.Path, a.Frames, n)
			}
		}
		factor := 0.0
		for _, s := range e.Steps {
			if s.Kind == "tempo" {
				factor = 1 + s.Params["percent"]/100
			}
		}
		if factor == 0 {
			continue
		}
		span := int64(math.Ceil(n*factor-1e-9)) + tempoReach
		if e.Speed != 1 {
			span = int64(math.Ceil(float64(span)*e.Speed - 1e-9))
		}
		if e.Kind != ledger.KindOutput {
			if e.Reason == augment.RejectNoRoomForTempo && span <= total {
				t.Errorf("%s clip %d variant %d: rejected for room, span %d of %d frames", e.Source, e.Clip, e.Variant, span, total)
			}
			continue
		}
		clipStart := int64(e.Clip) * n
		want := min(clipStart, total-span)
		if e.Speed != 1 {
			// the speed span also keeps the resampler's reach inside
			if e.ClipStart > clipStart || e.ClipStart < 0 || e.ClipStart+e.ClipFrames > total {
				t.Errorf("%s: span %d+%d outside the recording or after the clip's start %d", e.Path, e.ClipStart, e.ClipFrames, clipStart)
			}
			both++
		} else {
			if e.ClipStart != want {
				t.Errorf("%s: span starts at %d, want %d", e.Path, e.ClipStart, want)
			}
			tempoOnly++
		}
		if e.ClipFrames != span {
			t.Errorf("%s: tempo %.3f speed %v: span of %d frames, want %d", e.Path, factor, e.Speed, e.ClipFrames, span)
		}
		if e.ClipStart < clipStart {
			moved++
			if len(replay) < 3 {
				replay = append(replay, e.Path)
			}
		}
	}
	if tempoOnly == 0 || both == 0 || moved == 0 {
		t.Errorf("%d tempo-only and %d tempo-and-speed outputs, %d moved back: want some of each", tempoOnly, both, moved)
	}
	args := append([]string{"replay", plant, "--out", out}, replay...)
	if stdout, stderr, code := cli(t, args...); code != exitOK || strings.Count(stdout, "ok   ") != len(replay) {
		t.Errorf("replay of %v: exit %d\n%s%s", replay, code, stdout, stderr)
	}
}
