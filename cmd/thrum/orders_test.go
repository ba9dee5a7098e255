package main

import (
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"thrum/machine/ledger"
)

// A recipe whose speed step is order-aware runs end to end: every variant
// that changes speed keeps its clip (no longer source span), and its step
// record gives the mode, the tracked shaft rate inside the condition's band
// and the fan law's level change (sound power ∝ speed⁵, +50·log10 r dB;
// the fan laws, ASHRAE Handbook—HVAC Systems and Equipment, Fans chapter,
// from memory).
func TestOrderAwareSpeedExpand(t *testing.T) {
	plant := shortDemo(t)
	b, err := os.ReadFile(plant)
	if err != nil {
		t.Fatal(err)
	}
	src := regexp.MustCompile(`(?m)^seed = .*$`).ReplaceAllStringFunc(string(b), func(s string) string { return s + "\nmains_hz = 50" })
	old := "kind = \"speed\"\n  range = [-1.0, 1.0]"
	if !strings.Contains(src, old) {
		t.Fatalf("demo plant lacks %q", old)
	}
	src = strings.Replace(src, old, old+"\n  mode = \"orders\"", 1)
	if err := os.WriteFile(plant, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(filepath.Dir(plant), "out")
	if _, stderr, code := cli(t, "expand", plant, "--out", out, "-q"); code != exitOK {
		t.Fatalf("expand: exit %d: %s", code, stderr)
	}
	entries, err := ledger.Load(filepath.Join(out, "fan-f1"))
	if err != nil {
		t.Fatal(err)
	}
	moved := 0
	for _, e := range entries {
		if e.Kind != ledger.KindOutput || e.Variant < 0 || e.Speed == 1 {
			continue
		}
		moved++
		var rec *ledger.StepRecord
		for i := range e.Steps {
			if e.Steps[i].Kind == "speed" {
				rec = &e.Steps[i]
			}
		}
		if rec == nil || rec.Text["mode"] != "orders" {
			t.Fatalf("%s: speed %g without an order-aware speed step: %+v", e.Path, e.Speed, e.Steps)
		}
		if e.ClipFrames != 160000 {
			t.Errorf("%s: clip_frames %d, want the clip's own 160000 (10 s at 16 kHz)", e.Path, e.ClipFrames)
		}
		// full speed 1470 rpm ± 2 %
		if f := rec.Params["shaft_hz"]; f < 1470.0/60*0.98 || f > 1470.0/60*1.02 {
			t.Errorf("%s: tracked shaft %g Hz outside the band", e.Path, f)
		}
		if got, want := rec.Params["level_db"], 50*math.Log10(rec.Params["ratio"]); math.Abs(got-want) > 1e-12 || rec.Params["power_exponent"] != 5 {
			t.Errorf("%s: level %g dB (exponent %g), want the fan law's %g", e.Path, got, rec.Params["power_exponent"], want)
		}
		if rec.Params["moved"] < 1 {
			t.Errorf("%s: no order moved: %+v", e.Path, rec)
		}
	}
	if moved == 0 {
		t.Error("no variant of fan-f1 changes speed")
	}
}
