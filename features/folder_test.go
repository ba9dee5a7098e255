package features

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"thrum/machine/pool"
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

// A file that cannot be read does not stop the batch and gets no .npy (an
// old one of the same name is removed, so nothing stale or truncated
// stays); every bad file is named in the returned *pool.Failed.
func TestFolderLogMelBadFilesNamedRestWritten(t *testing.T) {
	in, out := t.TempDir(), t.TempDir()
	if err := wavio.WriteFile(filepath.Join(in, "good.wav"), noise(16000, 1), 16000, 1, wavio.PCM16); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(filepath.Join(in, "garbage.wav"), []byte("RIFF\x10\x00\x00\x00WAVEjunk"), 0o644)
	os.WriteFile(filepath.Join(out, "garbage.npy"), []byte("from an earlier run"), 0o644)
	os.Mkdir(filepath.Join(in, "folder.wav"), 0o755) // not a regular file
	files, frames, err := FolderLogMel(context.Background(), in, out, Config{}, 2)
	var failed *pool.Failed
	if !errors.As(err, &failed) {
		t.Fatalf("err = %v, want *pool.Failed", err)
	}
	if files != 1 || frames == 0 || failed.Total != 3 || len(failed.Errs) != 2 {
		t.Errorf("files %d, frames %d, failed %d of %d; want 1 file written, 2 of 3 failed", files, frames, len(failed.Errs), failed.Total)
	}
	cases := []struct {
		name      string
		npy       string
		written   bool
		errSubstr string
	}{
		{"good.wav", "good.npy", true, ""},
		{"garbage.wav", "garbage.npy", false, "garbage.wav"},
		{"folder.wav", "folder.npy", false, "not a regular file"},
	}
	for _, c := range cases {
		_, serr := os.Stat(filepath.Join(out, c.npy))
		if (serr == nil) != c.written {
			t.Errorf("%s: .npy present %v, want %v", c.name, serr == nil, c.written)
		}
		if c.errSubstr != "" && !strings.Contains(err.Error(), c.errSubstr) {
			t.Errorf("%s: error does not say %q: %v", c.name, c.errSubstr, err)
		}
	}
}
