package features

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"testing"

	"thrum/machine/wavio"
)

// TestFolderLogMelFiles checks that the batch tool writes, for every clip,
// exactly the bytes of WriteNPY on LogMel.Compute of the decoded clip, and
// leaves no temporary files.
func TestFolderLogMelFiles(t *testing.T) {
	in, out := t.TempDir(), t.TempDir()
	cfg := Config{Log: LogNumpy}
	lengths := map[string]int{"a": 16000, "b": 5000, "c": 1500}
	for name, n := range lengths {
		if err := wavio.WriteFile(filepath.Join(in, name+".wav"), noise(n, uint64(n)), 16000, 1, wavio.PCM16); err != nil {
			t.Fatal(err)
		}
	}
	files, frames, err := FolderLogMel(context.Background(), in, out, cfg, 2)
	if err != nil {
		t.Fatal(err)
	}
	lm, err := NewLogMel(cfg, 16000)
	if err != nil {
		t.Fatal(err)
	}
	wantFrames := 0
	for name := range lengths {
		a, err := wavio.ReadFile(filepath.Join(in, name+".wav"))
		if err != nil {
			t.Fatal(err)
		}
		feat, nf := lm.Compute(nil, a.Data)
		wantFrames += nf
		var want bytes.Buffer
		if err := WriteNPY(&want, feat, nf, lm.Bands()); err != nil {
			t.Fatal(err)
		}
		got, err := os.ReadFile(filepath.Join(out, name+".npy"))
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got, want.Bytes()) {
			t.Errorf("%s.npy: %d bytes differ from WriteNPY's %d", name, len(got), want.Len())
		}
	}
	if files != len(lengths) || frames != wantFrames {
		t.Errorf("files, frames = %d, %d; want %d, %d", files, frames, len(lengths), wantFrames)
	}
	left, _ := filepath.Glob(filepath.Join(out, "*.tmp"))
	if len(left) != 0 {
		t.Errorf("temporary files left: %v", left)
	}
}
