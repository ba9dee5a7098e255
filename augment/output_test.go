package augment

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"thrum/machine"
)

// The output folder must be neither inside the recordings root nor around
// it, as written or through symbolic links; each case names the words the
// refusal must contain ("" means accepted).
func TestCheckOutputRefusesRecordingsRoot(t *testing.T) {
	dir := t.TempDir()
	for _, d := range []string{"recordings/pump", "elsewhere", "data"} {
		if err := os.MkdirAll(filepath.Join(dir, d), 0o755); err != nil {
			t.Fatal(err)
		}
	}
	link := func(target, name string) {
		if err := os.Symlink(target, filepath.Join(dir, name)); err != nil {
			t.Skipf("no symbolic links here: %v", err)
		}
	}
	link(filepath.Join(dir, "recordings"), "into-recordings")   // OUT through a link into the recordings
	link(filepath.Join(dir, "data"), "recordings-link")         // a linked recordings root …
	link(filepath.Join(dir, "recordings", "pump"), "pump-link") // a link to a machine folder
	plant := func(rec string) *machine.Plant {
		return &machine.Plant{Path: filepath.Join(dir, "plant.toml"), Recordings: rec}
	}
	cases := []struct {
		rec, out, want string
	}{
		{"recordings", dir + "/recordings", "is inside the recordings root"},
		{"recordings", dir + "/recordings/out", "is inside the recordings root"},
		{"recordings", dir + "/recordings/pump/new/deeper", "is inside the recordings root"},
		{"recordings", dir, "contains the recordings root"},
		{"recordings", dir + "/out", ""},
		{"recordings", dir + "/recordings-out", ""},
		{"recordings", dir + "/into-recordings/out", "is inside the recordings root"},
		{"recordings", dir + "/into-recordings/not-yet/out", "is inside the recordings root"},
		{"recordings", dir + "/pump-link", "is inside the recordings root"},
		{"recordings-link", dir + "/data/out", "is inside the recordings root"}, // … whose real target holds OUT
		{"recordings-link", dir + "/elsewhere", ""},
		{"pump-link", dir + "/recordings", "contains the recordings root"}, // the linked root's real folder is inside OUT
		{"/", dir + "/out", "is the file-system root"},
		{"/", "/", "is the file-system root"},
	}
	for _, c := range cases {
		err := CheckOutput(plant(c.rec), c.out)
		switch {
		case c.want == "" && err != nil:
			t.Errorf("recordings %s, out %s: %v", c.rec, c.out, err)
		case c.want != "" && (err == nil || !strings.Contains(err.Error(), c.want)):
			t.Errorf("recordings %s, out %s: got %v, want …%s…", c.rec, c.out, err, c.want)
		}
	}
}
