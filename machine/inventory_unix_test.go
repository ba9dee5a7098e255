//go:build unix

package machine

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"

	"thrum/machine/wavio"
)

// A named pipe called *.wav is reported and skipped, never opened (opening
// it would block the scan forever); a cancelled context stops the scan with
// its error.
func TestScanSkipsSpecialFilesAndHonoursContext(t *testing.T) {
	dir := t.TempDir()
	cond := filepath.Join(dir, "recordings", "pump-a1", "full-load")
	os.MkdirAll(cond, 0o755)
	if err := wavio.WriteFile(filepath.Join(cond, "a.wav"), make([]float64, 16000), 16000, 1, wavio.PCM16); err != nil {
		t.Fatal(err)
	}
	if err := syscall.Mkfifo(filepath.Join(cond, "take-99.wav"), 0o644); err != nil {
		t.Skipf("no named pipes here: %v", err)
	}
	src, _ := os.ReadFile("../testdata/plant/minimal.toml")
	os.WriteFile(filepath.Join(dir, "plant.toml"), src, 0o644)
	p, err := Load(filepath.Join(dir, "plant.toml"))
	if err != nil {
		t.Fatal(err)
	}
	p.ClipSeconds = 1
	cases := []struct {
		name   string
		cancel bool
	}{
		{"named pipe reported", false},
		{"cancelled", true},
	}
	for _, c := range cases {
		ctx, cancel := context.WithCancel(context.Background())
		if c.cancel {
			cancel()
		}
		inv, err := Scan(ctx, p, ScanOptions{Levels: true})
		cancel()
		if c.cancel {
			if !errors.Is(err, context.Canceled) {
				t.Errorf("%s: err = %v, want context.Canceled", c.name, err)
			}
			continue
		}
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		found := false
		for _, pr := range inv.Problems {
			if pr.Path == "pump-a1/full-load/take-99.wav" && strings.Contains(pr.Msg, "not a regular file") {
				found = true
			}
		}
		if !found {
			t.Errorf("%s: no problem names the pipe: %v", c.name, inv.Problems)
		}
		for _, r := range inv.Recordings {
			if strings.HasSuffix(r.Rel, "take-99.wav") {
				t.Errorf("%s: the pipe is a recording: %+v", c.name, r)
			}
		}
		if len(inv.Recordings) != 1 {
			t.Errorf("%s: %d recordings, want a.wav only", c.name, len(inv.Recordings))
		}
	}
}
