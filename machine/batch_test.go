package machine

import (
	"fmt"
	"os"
	"path/filepath"
	"sync"
	"testing"
)

// A batch's files appear only when it flushes (at Max waiting files or at
// Flush), each in place before its after function runs; Abort leaves the
// destinations as they were and no temporary file; a nil batch writes at
// once.
func TestBatchWrites(t *testing.T) {
	for _, tc := range []struct {
		name    string
		nilB    bool
		max     int
		files   int
		visible int // destinations present before Flush
		abort   bool
	}{
		{"below max waits for Flush", false, 8, 5, 0, false},
		{"max reached flushes", false, 4, 6, 4, false},
		{"abort keeps the old files", false, 8, 3, 0, true},
		{"nil batch writes at once", true, 0, 3, 3, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dir := t.TempDir()
			var b *Batch
			if !tc.nilB {
				b = &Batch{Max: tc.max}
			}
			path := func(i int) string { return filepath.Join(dir, "sub", fmt.Sprintf("f%d.bin", i)) }
			if tc.abort {
				if err := WriteFileAtomic(path(0), []byte("old")); err != nil {
					t.Fatal(err)
				}
			}
			var after []int
			for i := range tc.files {
				err := b.Write(path(i), []byte(fmt.Sprintf("new %d", i)), func() error {
					if got, err := os.ReadFile(path(i)); err != nil || string(got) != fmt.Sprintf("new %d", i) {
						t.Errorf("after %d: file holds %q, %v", i, got, err)
					}
					after = append(after, i)
					return nil
				})
				if err != nil {
					t.Fatal(err)
				}
			}
			present := 0
			for i := range tc.files {
				if b, err := os.ReadFile(path(i)); err == nil && string(b) != "old" {
					present++
				}
			}
			if present != tc.visible {
				t.Errorf("%d files visible before Flush, want %d", present, tc.visible)
			}
			if tc.abort {
				b.Abort()
				if got, _ := os.ReadFile(path(0)); string(got) != "old" {
					t.Errorf("after Abort the destination holds %q, want the old file", got)
				}
				if len(after) != 0 {
					t.Errorf("after functions ran for an aborted batch: %v", after)
				}
			} else if err := b.Flush(); err != nil {
				t.Fatal(err)
			}
			ents, _ := os.ReadDir(filepath.Join(dir, "sub"))
			for _, e := range ents {
				if IsTemp(e.Name()) {
					t.Errorf("temporary file %s left", e.Name())
				}
				if st, _ := e.Info(); st.Mode().Perm() != 0o644 {
					t.Errorf("%s has mode %v, want 0644", e.Name(), st.Mode().Perm())
				}
			}
			if tc.abort {
				return
			}
			if len(after) != tc.files {
				t.Errorf("after functions ran %d times, want %d", len(after), tc.files)
			}
		})
	}
}

// Writers on several goroutines share one batch: every file lands once
// and its after function runs once.
func TestBatchConcurrent(t *testing.T) {
	dir := t.TempDir()
	b := &Batch{Max: 3}
	var mu sync.Mutex
	ran := map[int]int{}
	var wg sync.WaitGroup
	for g := range 4 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for k := range 10 {
				i := g*10 + k
				err := b.Write(filepath.Join(dir, fmt.Sprintf("%02d", i)), []byte{byte(i)}, func() error {
					mu.Lock()
					ran[i]++
					mu.Unlock()
					return nil
				})
				if err != nil {
					t.Error(err)
				}
			}
		}()
	}
	wg.Wait()
	if err := b.Flush(); err != nil {
		t.Fatal(err)
	}
	for i := range 40 {
		if got, err := os.ReadFile(filepath.Join(dir, fmt.Sprintf("%02d", i))); err != nil || len(got) != 1 || got[0] != byte(i) {
			t.Errorf("file %d: %v, %v", i, got, err)
		}
		if ran[i] != 1 {
			t.Errorf("after of file %d ran %d times", i, ran[i])
		}
	}
}

// A write whose folder cannot be made fails at once and leaves nothing
// waiting.
func TestBatchWriteFails(t *testing.T) {
	dir := t.TempDir()
	file := filepath.Join(dir, "f")
	if err := os.WriteFile(file, []byte("x"), 0o644); err != nil {
		t.Fatal(err)
	}
	b := &Batch{}
	if err := b.Write(filepath.Join(file, "below"), []byte("y"), nil); err == nil {
		t.Error("writing below a file succeeded")
	}
	if len(b.pending) != 0 {
		t.Errorf("%d files waiting after a failed write", len(b.pending))
	}
}
