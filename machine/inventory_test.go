package machine

import (
	"context"
	"os"
	"path/filepath"
	"testing"

	"thrum/machine/wavio"
)

func TestCutClips(t *testing.T) {
	cases := []struct {
		frames, n int64
		policy    string
		want      []Clip
	}{
		{100, 40, "drop", []Clip{{0, 0, 40, 0}, {1, 40, 40, 0}}},
		{100, 40, "pad", []Clip{{0, 0, 40, 0}, {1, 40, 40, 0}, {2, 80, 40, 20}}}, // 20 ≥ 40/2: padded
		{90, 40, "pad", []Clip{{0, 0, 40, 0}, {1, 40, 40, 0}}},                   // 10 < 20: dropped
		{39, 40, "drop", nil},
		{20, 40, "pad", []Clip{{0, 0, 40, 20}}},
	}
	for _, c := range cases {
		got := CutClips(c.frames, c.n, c.policy)
		if len(got) != len(c.want) {
			t.Errorf("CutClips(%d, %d, %s) = %v, want %v", c.frames, c.n, c.policy, got, c.want)
			continue
		}
		for i := range got {
			if got[i] != c.want[i] {
				t.Errorf("CutClips(%d, %d, %s)[%d] = %v, want %v", c.frames, c.n, c.policy, i, got[i], c.want[i])
			}
		}
	}
}

// The layout's folder names decide labels and groups: anomalous/ marks real
// faults, session-*/ makes one group of its recordings.
func TestScanLabelsGroupsAndProblems(t *testing.T) {
	dir := t.TempDir()
	tone := make([]float64, 16000*3)
	for i := range tone {
		tone[i] = 0.1 * float64(i%50-25) / 25
	}
	write := func(rel string, rate int, x []float64) {
		p := filepath.Join(dir, "recordings", filepath.FromSlash(rel))
		os.MkdirAll(filepath.Dir(p), 0o755)
		if err := wavio.WriteFile(p, x, rate, 1, wavio.PCM16); err != nil {
			t.Fatal(err)
		}
	}
	write("pump-a1/full-load/a.wav", 16000, tone)
	write("pump-a1/full-load/session-s1/b.wav", 16000, tone)
	write("pump-a1/full-load/session-s1/c.wav", 16000, tone)
	write("pump-a1/full-load/anomalous/d.wav", 16000, tone)
	write("pump-a1/full-load/f.wav", 16000, tone[:100])
	os.MkdirAll(filepath.Join(dir, "recordings", "stranger"), 0o755)
	src, _ := os.ReadFile("../testdata/plant/minimal.toml")
	os.WriteFile(filepath.Join(dir, "plant.toml"), src, 0o644)
	p, err := Load(filepath.Join(dir, "plant.toml"))
	if err != nil {
		t.Fatal(err)
	}
	p.ClipSeconds = 1
	inv, err := Scan(context.Background(), p, ScanOptions{Levels: true})
	if err != nil {
		t.Fatal(err)
	}
	by := map[string]*Recording{}
	for _, r := range inv.Recordings {
		by[r.Rel] = r
	}
	if r := by["pump-a1/full-load/a.wav"]; r == nil || r.Group != r.Rel || r.Label != LabelNormal || len(r.Clips) != 3 || r.SHA256 == "" {
		t.Errorf("plain recording: %+v", r)
	}
	b, c := by["pump-a1/full-load/session-s1/b.wav"], by["pump-a1/full-load/session-s1/c.wav"]
	if b == nil || c == nil || b.Group != c.Group || b.Group != "pump-a1/full-load/session-s1" || b.Session != "s1" {
		t.Errorf("session recordings: %+v %+v", b, c)
	}
	if d := by["pump-a1/full-load/anomalous/d.wav"]; d == nil || d.Label != LabelAnomalous {
		t.Errorf("anomalous recording: %+v", d)
	}
	kinds := map[string]int{}
	for _, pr := range inv.Problems {
		kinds[pr.Kind]++
	}
	for _, k := range []string{"short", "no-recordings", "unknown-folder"} {
		if kinds[k] == 0 {
			t.Errorf("no %s problem in %v", k, inv.Problems)
		}
	}
	// ReadClips streams the clips in order with their exact samples
	n := 0
	err = by["pump-a1/full-load/a.wav"].ReadClips(func(cl Clip, x []float64) error {
		if len(x) != 16000 || cl.Index != n {
			t.Errorf("clip %d: %d samples", cl.Index, len(x))
		}
		if d := x[7] - tone[int(cl.Start)+7]; d > 1.0/32768 || d < -1.0/32768 {
			t.Errorf("clip %d sample 7: %g vs %g", cl.Index, x[7], tone[int(cl.Start)+7])
		}
		n++
		return nil
	})
	if err != nil || n != 3 {
		t.Errorf("ReadClips: %d clips, %v", n, err)
	}
	s := Summarise(inv)
	if len(s.Rows) != 2 || s.Rows[0].Recordings != 5 || s.Rows[0].Anomalous != 1 {
		t.Errorf("survey rows: %+v", s.Rows)
	}
}
