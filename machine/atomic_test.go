package machine

import (
	"os"
	"path/filepath"
	"testing"
)

func TestWriteFileAtomicLeavesNoTemporary(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "sub", "x.bin")
	if err := WriteFileAtomic(p, []byte("abc")); err != nil {
		t.Fatal(err)
	}
	st, err := os.Stat(p)
	if err != nil || st.Mode().Perm() != 0o644 {
		t.Fatalf("mode %v, %v", st.Mode(), err)
	}
	ents, _ := os.ReadDir(filepath.Dir(p))
	if len(ents) != 1 {
		t.Errorf("folder holds %d entries, want only the file", len(ents))
	}
	// a destination that cannot be created fails and leaves nothing
	if err := WriteFileAtomic(filepath.Join(p, "y"), []byte("abc")); err == nil {
		t.Error("writing below a file succeeded")
	}
}
