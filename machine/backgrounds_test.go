package machine

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"thrum/machine/wavio"
)

// Each case writes (or does not write) the background file the plant names
// and checks what Load says about it, at the line of its path key.
func TestLoadChecksBackgroundFiles(t *testing.T) {
	tone := func(n int) []float64 {
		x := make([]float64, n)
		for i := range x {
			x[i] = 0.1 * float64(i%16-8) / 8
		}
		return x
	}
	cases := []struct {
		name string
		make func(path string) error
		msg  string // "" means Load succeeds
	}{
		{"good", func(p string) error { return wavio.WriteFile(p, tone(16000), 16000, 1, wavio.PCM16) }, ""},
		{"missing", func(string) error { return nil }, "does not exist"},
		{"folder", func(p string) error { return os.Mkdir(p, 0o755) }, "is not a regular file"},
		{"fifo", mkfifo, "is not a regular file"},
		{"not a wav", func(p string) error { return os.WriteFile(p, []byte("not audio at all, just text"), 0o644) }, "cannot be read"},
		{"44.1 kHz (resampled, accepted)", func(p string) error { return wavio.WriteFile(p, tone(44100), 44100, 1, wavio.PCM16) }, ""},
		{"silent", func(p string) error { return wavio.WriteFile(p, make([]float64, 16000), 16000, 1, wavio.PCM16) }, "is silent"},
		{"empty", func(p string) error { return wavio.WriteFile(p, nil, 16000, 1, wavio.PCM16) }, "is silent"},
	}
	base := strings.Replace(minimalTOML(t), "[[recipe]]", "[[background]]\nid = \"hall-noise\"\npath = \"hall.wav\"\n\n[[recipe]]", 1)
	const pathLine = 19 // the line of path = "hall.wav"
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := t.TempDir()
			plant := filepath.Join(dir, "plant.toml")
			if err := os.WriteFile(plant, []byte(base), 0o644); err != nil {
				t.Fatal(err)
			}
			if err := c.make(filepath.Join(dir, "hall.wav")); err != nil {
				t.Skipf("cannot make the file: %v", err)
			}
			_, err := Load(plant)
			if c.msg == "" {
				if err != nil {
					t.Fatal(err)
				}
				return
			}
			if err == nil {
				t.Fatal("no error")
			}
			ces := configErrors(err)
			if len(ces) != 1 {
				t.Fatalf("want one *ConfigError, got %v", err)
			}
			ce := ces[0]
			if ce.File != plant || ce.Line != pathLine || ce.Key != "background[hall-noise].path" || !strings.Contains(ce.Msg, c.msg) {
				t.Errorf("got %v; want %s:%d: background[hall-noise].path: …%s…", ce, plant, pathLine, c.msg)
			}
		})
	}
}
