package machine

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"thrum/machine/wavio"
)

// preflightPlant writes minimal.toml plus extra TOML and 1 s takes
// (machine/condition/name → count) and returns the scanned inventory.
func preflightPlant(t *testing.T, extra string, edit func(string) string, takes map[string]int) *Inventory {
	t.Helper()
	dir := t.TempDir()
	seq := 0
	for where, n := range takes {
		for k := 0; k < n; k++ {
			p := filepath.Join(dir, "recordings", filepath.FromSlash(where), "take-"+string(rune('a'+k))+".wav")
			os.MkdirAll(filepath.Dir(p), 0o755)
			seq++
			// distinct content per take: equal files are one recording (duplicate)
			if err := wavio.WriteFile(p, qtone(0.3+0.001*float64(seq), 0), 16000, 1, wavio.PCM16); err != nil {
				t.Fatal(err)
			}
		}
	}
	src := minimalTOML(t)
	if edit != nil {
		src = edit(src)
	}
	src = strings.Replace(src, "recordings = \"recordings\"", "recordings = \"recordings\"\nclip_seconds = 1.0", 1) + "\n" + extra
	p, err := Parse([]byte(src), filepath.Join(dir, "plant.toml"))
	if err != nil {
		t.Fatal(err)
	}
	inv, err := Scan(context.Background(), p, ScanOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return inv
}

// Each preflight check, one case per finding: its kind, whether it is an
// error (a run refuses) or a warning, and a phrase of its message.
func TestPreflightChecks(t *testing.T) {
	enough := map[string]int{"pump-a1/full-load": 3, "pump-a1/part-load": 3}
	with := func(extra map[string]int) map[string]int {
		out := map[string]int{}
		for k, v := range enough {
			out[k] = v
		}
		for k, v := range extra {
			out[k] = v
		}
		return out
	}
	cases := []struct {
		name  string
		extra string
		edit  func(string) string
		takes map[string]int
		kind  string // "" = no finding at all
		error bool
		msg   string
	}{
		{name: "feasible", takes: enough},
		// two groups, three splits with a non-zero share (the split stage refuses it)
		{name: "too few groups", takes: with(map[string]int{"pump-a1/part-load": 2}), kind: PreflightSplit, error: true, msg: "2 usable normal recording group(s) cannot fill the 3 splits"},
		// … but two suffice when test has no share
		{name: "two groups, two splits", edit: func(s string) string {
			return strings.Replace(s, "[[machine]]", "[split]\ntrain = 0.8\neval = 0.2\ntest = 0.0\n\n[[machine]]", 1)
		}, takes: with(map[string]int{"pump-a1/part-load": 2})},
		// one anomalous group cannot reach eval and test (anomalous_eval 0.5)
		{name: "one anomalous group", takes: with(map[string]int{"pump-a1/full-load/anomalous": 1}), kind: PreflightAnomalous, msg: "cannot reach both eval and test"},
		{name: "one anomalous group, all to test", edit: func(s string) string {
			return strings.Replace(s, "[[machine]]", "[split]\nanomalous_eval = 0.0\n\n[[machine]]", 1)
		}, takes: with(map[string]int{"pump-a1/full-load/anomalous": 1})},
		// part-load held out at 1470 rpm ± 3 %: full-load's 1480 rpm lies in
		// it, a hold-out at a training speed (the split stage accepts it)
		{name: "hold-out conflict", edit: func(s string) string {
			return strings.Replace(s, "rpm = 1180\n  band_percent = 3", "rpm = 1470\n  band_percent = 3\n  hold_out = true", 1)
		}, takes: enough, kind: PreflightHoldOut, msg: "lies in the band of hold-out condition \"part-load\""},
		// 1430 rpm ± 3 % reaches 1472.9, full-load's 1480 ± 2 % starts at 1450.4: overlap only
		{name: "hold-out overlap", edit: func(s string) string {
			return strings.Replace(s, "rpm = 1180\n  band_percent = 3", "rpm = 1430\n  band_percent = 3\n  hold_out = true", 1)
		}, takes: enough, kind: PreflightHoldOutLap, msg: "overlaps hold-out condition"},
		{name: "undeclared condition folder", takes: with(map[string]int{"pump-a1/half-load": 1}), kind: PreflightFolder, error: true, msg: "matches no condition of machine pump-a1"},
		{name: "missing background", extra: "[[background]]\nid = \"bg\"\npath = \"bg.wav\"\n", takes: enough, kind: PreflightBackground, error: true, msg: "does not exist"},
		{name: "background step without backgrounds", edit: func(s string) string {
			return strings.Replace(s, "kind = \"gain\"", "kind = \"background\"", 1)
		}, takes: enough, kind: PreflightRecipe, msg: "synthesised plant noise"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := Preflight(preflightPlant(t, c.extra, c.edit, c.takes), PreflightOptions{})
			all := append(append([]Problem{}, r.Errors...), r.Warnings...)
			if c.kind == "" {
				if len(all) != 0 {
					t.Fatalf("findings %v, want none", all)
				}
				return
			}
			// one finding, or one per condition of the machine
			if len(all) == 0 || len(all) > 2 || r.OK() == c.error {
				t.Fatalf("errors %v warnings %v; want %s (error %v) saying %q", r.Errors, r.Warnings, c.kind, c.error, c.msg)
			}
			for _, f := range all {
				if f.Kind != c.kind || !strings.Contains(f.Msg, c.msg) {
					t.Errorf("finding %v, want %s saying %q", f, c.kind, c.msg)
				}
			}
		})
	}
}

// A room step for a machine without a room: Load refuses it, and so does
// Preflight for a plant changed after loading.
func TestPreflightRoomStepWithoutRoom(t *testing.T) {
	inv := preflightPlant(t, "", func(s string) string {
		return strings.Replace(s, "kind = \"gain\"\nrange = [-6, 6]", "kind = \"room\"", 1)
	}, map[string]int{"pump-a1/full-load": 3, "pump-a1/part-load": 3})
	inv.Plant.Machines[0].Room, inv.Plant.Machines[0].Zone = "", ""
	r := Preflight(inv, PreflightOptions{})
	if len(r.Errors) != 2 || r.Errors[0].Kind != PreflightRecipe || !strings.Contains(r.Errors[0].Msg, "room step") {
		t.Fatalf("errors %v, want a recipe error per condition", r.Errors)
	}
}

// The disk check compares the estimate less what OUT holds with the free
// space of OUT's nearest existing parent.
func TestPreflightDiskSpace(t *testing.T) {
	inv := preflightPlant(t, "", nil, map[string]int{"pump-a1/full-load": 3, "pump-a1/part-load": 3})
	est := EstimateBytes(inv)
	// 6 clips of 1 s, each recorded + 2 variants, 16-bit: 44 + 32000 bytes;
	// a log-mel of (16000−1024)/512+1 = 30 frames × 128 bands × 4 + 128
	if want := int64(6 * 3 * (44 + 32000 + 128 + 30*128*4)); est != want {
		t.Errorf("estimate %d, want %d", est, want)
	}
	out := filepath.Join(t.TempDir(), "not", "yet", "out")
	var asked string
	for _, c := range []struct {
		free int64
		ok   bool
	}{{est, true}, {est - 1, false}, {-1, true}} {
		r := Preflight(inv, PreflightOptions{Out: out, Free: func(p string) int64 { asked = p; return c.free }})
		if r.OK() != c.ok || r.EstimateBytes != est {
			t.Errorf("free %d: ok %v errors %v, want ok %v", c.free, r.OK(), r.Errors, c.ok)
		}
		if !c.ok && (r.Errors[0].Kind != PreflightDisk || r.Errors[0].Path != out) {
			t.Errorf("free %d: %v", c.free, r.Errors)
		}
	}
	if asked != out {
		t.Errorf("free space asked for %q", asked)
	}
	if n := FreeBytes(out); n <= 0 {
		t.Errorf("FreeBytes of a path below a temporary folder: %d", n)
	}
}
