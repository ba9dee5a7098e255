package online

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"thrum/augment"
	"thrum/machine"
	"thrum/machine/demoplant"
	"thrum/split"
)

// fixture is a split output root of the demo plant with short recordings
// cut into 1 s clips, made once for the package's tests (read-only for
// them: each test serving writes its record into a copy of OUT).
type fixture struct {
	plant string
	out   string
	err   error
}

var (
	fixOnce sync.Once
	fix     fixture
	fixDir  string
)

func TestMain(m *testing.M) {
	code := m.Run()
	if fixDir != "" {
		os.RemoveAll(fixDir)
	}
	os.Exit(code)
}

func splitPlant(t testing.TB) (plantPath, out string) {
	t.Helper()
	fixOnce.Do(func() {
		dir, err := os.MkdirTemp("", "online-test-")
		if err != nil {
			fix.err = err
			return
		}
		fixDir = dir
		fix.plant, fix.err = demoplant.Write(dir, demoplant.Options{Seconds: 3})
		if fix.err != nil {
			return
		}
		// 1 s clips: three per recording, so speed changes have room
		b, err := os.ReadFile(fix.plant)
		if err != nil {
			fix.err = err
			return
		}
		text := strings.Replace(string(b), "clip_seconds = 3\n", "clip_seconds = 1\n", 1)
		if text == string(b) {
			fix.err = os.ErrInvalid
			return
		}
		if fix.err = os.WriteFile(fix.plant, []byte(text), 0o644); fix.err != nil {
			return
		}
		fix.out = filepath.Join(dir, "out")
		inv := scan(t, fix.plant)
		if _, fix.err = augment.Expand(context.Background(), inv, augment.Options{Out: fix.out, Policy: split.TrainingPolicy(inv), Workers: 2}); fix.err != nil {
			return
		}
		_, fix.err = split.Run(context.Background(), inv.Plant, fix.out)
	})
	if fix.err != nil {
		t.Fatal(fix.err)
	}
	return fix.plant, fix.out
}

func scan(t testing.TB, plantPath string) *machine.Inventory {
	t.Helper()
	p, err := machine.Load(plantPath)
	if err != nil {
		t.Fatal(err)
	}
	inv, err := machine.Scan(context.Background(), p, machine.ScanOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return inv
}

// newServer starts a server on the fixture with its own output root copy
// (ledgers and splits; the record goes there).
func newServer(t testing.TB, opt Options) (*Server, *machine.Inventory) {
	t.Helper()
	plant, out := splitPlant(t)
	inv := scan(t, plant)
	if opt.Out == "" {
		opt.Out = copyOut(t, out)
	}
	s, err := New(inv, opt)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { s.Close() })
	return s, inv
}

// copyOut copies the ledgers and split lists of an output root (not the
// audio) into a new temporary root.
func copyOut(t testing.TB, out string) string {
	t.Helper()
	dst := t.TempDir()
	err := filepath.WalkDir(out, func(p string, d os.DirEntry, err error) error {
		if err != nil || d.IsDir() || strings.HasSuffix(p, ".wav") {
			return err
		}
		rel, _ := filepath.Rel(out, p)
		b, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		if err := os.MkdirAll(filepath.Join(dst, filepath.Dir(rel)), 0o755); err != nil {
			return err
		}
		return os.WriteFile(filepath.Join(dst, rel), b, 0o644)
	})
	if err != nil {
		t.Fatal(err)
	}
	return dst
}
