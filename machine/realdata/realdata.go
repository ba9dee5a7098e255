// Package realdata finds, for tests, the measured recordings kept beside
// the repository (the folder shared/realdata next to the repository root;
// each data set's README names its source and licence). They are used in
// place and never copied into the project; a test that needs them skips
// when they are absent.
package realdata

import (
	"os"
	"path/filepath"
	"testing"
)

// Dir returns the folder of the real data set named set, or skips the test
// when the repository root (the folder holding go.mod, searched upwards
// from the working directory) or the data set is not found.
func Dir(t testing.TB, set string) string {
	t.Helper()
	dir, err := os.Getwd()
	if err != nil {
		t.Fatal(err)
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			break
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			t.Skip("repository root not found")
		}
		dir = parent
	}
	p := filepath.Join(dir, "..", "shared", "realdata", set)
	if _, err := os.Stat(p); err != nil {
		t.Skipf("real data %s not present", set)
	}
	return p
}
