package machine

import (
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
)

// The temporary names CreateAtomic makes are exactly those IsTemp
// recognises; RemoveTemps removes them and nothing else.
func TestTemporaryFiles(t *testing.T) {
	root := t.TempDir()
	dst := filepath.Join(root, "m", "c", "x-c0000.wav")
	a, err := CreateAtomic(dst)
	if err != nil {
		t.Fatal(err)
	}
	if !IsTemp(filepath.Base(a.Name())) {
		t.Errorf("IsTemp(%q) = false for CreateAtomic's own name", filepath.Base(a.Name()))
	}
	a.File.Close() // killed before its rename: the temporary stays
	for _, c := range []struct {
		name string
		temp bool
	}{
		{".ledger.jsonl.tmp-123", true},
		{".a.b.npy.tmp-0", true},
		{"ledger.jsonl.tmp-123", false}, // not hidden
		{".x.wav.tmp-abc", false},       // not CreateAtomic's digits
		{".x.wav.tmp-", false},
		{".tmp-12", false},
		{"x-c0000.wav", false},
	} {
		if got := IsTemp(c.name); got != c.temp {
			t.Errorf("IsTemp(%q) = %v", c.name, got)
		}
	}
	keep := []string{"m/c/x-c0000.wav", "m/c/.x.wav.tmp-abc", "m/notes.txt"}
	for _, k := range keep {
		os.MkdirAll(filepath.Dir(filepath.Join(root, k)), 0o755)
		os.WriteFile(filepath.Join(root, k), []byte("k"), 0o644)
	}
	os.WriteFile(filepath.Join(root, "m", ".ledger.jsonl.tmp-9"), nil, 0o644)
	os.MkdirAll(filepath.Join(root, StaleDir, "m"), 0o755)
	os.WriteFile(filepath.Join(root, StaleDir, "m", ".y.wav.tmp-1"), nil, 0o644)
	got, err := RemoveTemps(root)
	if err != nil {
		t.Fatal(err)
	}
	sort.Strings(got)
	want := []string{"m/.ledger.jsonl.tmp-9", "m/c/" + filepath.Base(a.Name())}
	sort.Strings(want)
	if strings.Join(got, " ") != strings.Join(want, " ") {
		t.Errorf("removed %v, want %v", got, want)
	}
	for _, k := range append(keep, StaleDir+"/m/.y.wav.tmp-1") {
		if _, err := os.Stat(filepath.Join(root, k)); err != nil {
			t.Errorf("%s was removed: %v", k, err)
		}
	}
	if got, err := RemoveTemps(filepath.Join(root, "absent")); err != nil || len(got) != 0 {
		t.Errorf("missing root: %v %v", got, err)
	}
	// RemoveTempsOf removes only the given destination's temporaries
	os.WriteFile(filepath.Join(root, ".report.html.tmp-5"), nil, 0o644)
	os.WriteFile(filepath.Join(root, ".other.html.tmp-5"), nil, 0o644)
	if err := RemoveTempsOf(filepath.Join(root, "report.html")); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(root, ".report.html.tmp-5")); err == nil {
		t.Error("the report's temporary file is still there")
	}
	if _, err := os.Stat(filepath.Join(root, ".other.html.tmp-5")); err != nil {
		t.Error("another file's temporary file was removed")
	}
}

func TestMoveStale(t *testing.T) {
	out := t.TempDir()
	write := func(rel, s string) {
		os.MkdirAll(filepath.Dir(filepath.Join(out, rel)), 0o755)
		os.WriteFile(filepath.Join(out, rel), []byte(s), 0o644)
	}
	write("m/c/augmented/a-c0000-v03.wav", "first")
	got, err := MoveStale(out, "m/c/augmented/a-c0000-v03.wav")
	if err != nil || got != ".stale/m/c/augmented/a-c0000-v03.wav" {
		t.Fatalf("moved to %q, %v", got, err)
	}
	// the same name again: numbered, the first stale copy kept
	write("m/c/augmented/a-c0000-v03.wav", "second")
	got, err = MoveStale(out, "m/c/augmented/a-c0000-v03.wav")
	if err != nil || got != ".stale/m/c/augmented/a-c0000-v03.1.wav" {
		t.Fatalf("moved to %q, %v", got, err)
	}
	for rel, want := range map[string]string{".stale/m/c/augmented/a-c0000-v03.wav": "first", ".stale/m/c/augmented/a-c0000-v03.1.wav": "second"} {
		if b, _ := os.ReadFile(filepath.Join(out, rel)); string(b) != want {
			t.Errorf("%s holds %q, want %q", rel, b, want)
		}
	}
	for _, bad := range []string{"", ".", "../x.wav", "/etc/x.wav", ".stale/m/x.wav"} {
		if _, err := MoveStale(out, bad); err == nil {
			t.Errorf("MoveStale(%q) accepted", bad)
		}
	}
}
