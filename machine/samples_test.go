package machine

import (
	"context"
	"encoding/binary"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"thrum/machine/wavio"
)

// Recordings whose samples are non-finite, absurd or all zero are problems
// naming the file and the first bad sample, and are not used; float sensor
// data beyond ±1 is legitimate and is used.
func TestScanSampleProblems(t *testing.T) {
	const rate = 16000
	tone := func(ch int, amp float64) []float64 {
		x := make([]float64, 2*rate*ch)
		for i := range x {
			x[i] = amp * math.Sin(2*math.Pi*float64(i/ch)/40)
		}
		return x
	}
	with := func(x []float64, at int, v float64) []float64 {
		x[at] = v
		return x
	}
	cases := []struct {
		name  string
		x     []float64
		ch    int
		enc   wavio.Encoding
		kind  string // "" = usable
		at    int    // interleaved index of the first bad sample
		value float64
	}{
		{"nan", with(tone(1, 0.1), 1234, math.NaN()), 1, wavio.Float32, SampleNonFinite, 1234, math.NaN()},
		{"pos-inf", with(tone(1, 0.1), 7, math.Inf(1)), 1, wavio.Float32, SampleNonFinite, 7, math.Inf(1)},
		{"neg-inf", with(tone(2, 0.1), 2*500+1, math.Inf(-1)), 2, wavio.Float32, SampleNonFinite, 2*500 + 1, math.Inf(-1)},
		{"huge", with(with(tone(1, 0.1), 31000, 1e30), 31001, math.NaN()), 1, wavio.Float32, SampleAbsurd, 31000, 1e30},
		{"silent-float", make([]float64, 2*rate), 1, wavio.Float32, SampleSilent, -1, 0},
		{"silent-pcm", make([]float64, 2*rate), 1, wavio.PCM16, SampleSilent, -1, 0},
		// an accelerometer record in g: peaks of 3.6 are data, not damage
		{"sensor", tone(1, 3.6), 1, wavio.Float32, "", -1, 0},
		{"at-limit", with(tone(1, 0.1), 9, -MaxFloatSample), 1, wavio.Float32, "", -1, 0},
		{"tone", tone(1, 0.1), 1, wavio.PCM16, "", -1, 0},
	}
	dir := t.TempDir()
	for _, c := range cases {
		p := filepath.Join(dir, "recordings", "pump-a1", "full-load", c.name+".wav")
		os.MkdirAll(filepath.Dir(p), 0o755)
		if err := wavio.WriteFile(p, c.x, rate, c.ch, c.enc); err != nil {
			t.Fatal(err)
		}
	}
	src, err := os.ReadFile("../testdata/plant/minimal.toml")
	if err != nil {
		t.Fatal(err)
	}
	os.WriteFile(filepath.Join(dir, "plant.toml"), src, 0o644)
	p, err := Load(filepath.Join(dir, "plant.toml"))
	if err != nil {
		t.Fatal(err)
	}
	p.ClipSeconds = 1
	for _, levels := range []bool{false, true} {
		inv, err := Scan(context.Background(), p, ScanOptions{Levels: levels})
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range cases {
			rel := "pump-a1/full-load/" + c.name + ".wav"
			var rec *Recording
			for _, r := range inv.Recordings {
				if r.Rel == rel {
					rec = r
				}
			}
			var probs []Problem
			for _, pr := range inv.Problems {
				if pr.Path == rel {
					probs = append(probs, pr)
				}
			}
			if rec == nil {
				t.Errorf("%s: not in the inventory", c.name)
				continue
			}
			if c.kind == "" {
				// Float data beyond ±1 is noted (not full-scale audio, its
				// peak), never called clipped.
				beyond := c.enc == wavio.Float32 && c.name != "tone"
				note := len(probs) == 1 && probs[0].Kind == "not-full-scale" && strings.Contains(probs[0].Msg, "not full-scale audio, peak")
				if !rec.Usable() || beyond != note || (!beyond && len(probs) != 0) || rec.BeyondFullScale != beyond {
					t.Errorf("%s: usable %v, beyond full scale %v, problems %v; want usable, and a not-full-scale note only for data beyond ±1", c.name, rec.Usable(), rec.BeyondFullScale, probs)
				}
				if levels && beyond && rec.Levels.Clipped != 0 {
					t.Errorf("%s: clipped fraction %v for data beyond full scale, want 0 (not assessed)", c.name, rec.Levels.Clipped)
				}
				continue
			}
			if rec.Usable() || len(probs) != 1 || probs[0].Kind != c.kind {
				t.Errorf("%s: usable %v, problems %v; want one %s problem", c.name, rec.Usable(), probs, c.kind)
				continue
			}
			msg := probs[0].String()
			if !strings.HasPrefix(msg, rel+": "+c.kind+": ") {
				t.Errorf("%s: problem %q does not start with the file and kind", c.name, msg)
			}
			se, ok := rec.Err.(*SampleError)
			if !ok {
				t.Errorf("%s: Err %T, want *SampleError", c.name, rec.Err)
				continue
			}
			if c.kind == SampleSilent {
				if !strings.Contains(msg, "all samples are 0") {
					t.Errorf("%s: %q", c.name, msg)
				}
				continue
			}
			if se.Frame != int64(c.at/c.ch) || se.Channel != c.at%c.ch || !sameFloat(se.Value, c.value) {
				t.Errorf("%s: first bad sample frame %d channel %d value %v; want %d, %d, %v", c.name, se.Frame, se.Channel, se.Value, c.at/c.ch, c.at%c.ch, c.value)
			}
			// the byte offset holds the bad value's float32 bits
			b, _ := os.ReadFile(rec.Path)
			if se.Offset < 0 || se.Offset+4 > int64(len(b)) || !sameFloat(float64(math.Float32frombits(binary.LittleEndian.Uint32(b[se.Offset:]))), c.value) {
				t.Errorf("%s: byte offset %d does not hold %v", c.name, se.Offset, c.value)
			}
			for _, want := range []string{"sample " + itoa(se.Frame), "channel " + itoa(int64(se.Channel)), "byte offset " + itoa(se.Offset)} {
				if !strings.Contains(msg, want) {
					t.Errorf("%s: %q lacks %q", c.name, msg, want)
				}
			}
		}
		// excluded recordings add nothing to the survey's levels
		s := Summarise(inv)
		if r := s.Rows[0]; r.Unusable != 6 || r.PeakDBFS == nil || math.IsNaN(*r.PeakDBFS) || math.IsInf(*r.PeakDBFS, 0) {
			if levels {
				t.Errorf("survey row %+v", r)
			}
		}
		var sb strings.Builder
		if err := s.WriteJSON(&sb); err != nil {
			t.Errorf("survey JSON: %v", err)
		}
	}
}

// sameFloat compares at float32 precision, the fixtures' sample format.
func sameFloat(a, b float64) bool {
	return float32(a) == float32(b) || (math.IsNaN(a) && math.IsNaN(b))
}

func itoa(v int64) string { return strconv.FormatInt(v, 10) }
