package main

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io/fs"
	"os"
	"path"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"thrum/machine"
	"thrum/machine/demoplant"
	"thrum/machine/ledger"
)

// shortDemo writes the invented plant with 10 s recordings (one clip
// each): the guard tests need the stages, not much audio.
func shortDemo(t testing.TB) string {
	t.Helper()
	p, err := demoplant.Write(t.TempDir(), demoplant.Options{Seconds: 10})
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// A second run on an output root refuses while the first holds its lock,
// naming the holder; shards of one run coexist but not with an unsharded
// run; the lock file is gone after a run.
func TestSecondRunRefusedWhileLocked(t *testing.T) {
	plant := shortDemo(t)
	out := filepath.Join(filepath.Dir(plant), "out")
	host, _ := os.Hostname()
	cases := []struct {
		name    string
		held    ledger.Shard
		args    []string
		refused bool
	}{
		{"unsharded vs unsharded expand", ledger.Shard{}, []string{"expand", plant, "--out", out, "-q"}, true},
		{"unsharded vs run", ledger.Shard{}, []string{"run", plant, "--out", out, "-q"}, true},
		{"unsharded vs split", ledger.Shard{}, []string{"split", plant, "--out", out}, true},
		{"unsharded vs features", ledger.Shard{}, []string{"features", plant, "--out", out, "-q"}, true},
		{"unsharded vs faults shard", ledger.Shard{}, []string{"faults", plant, "--out", out, "-q", "--shard", "1/2"}, true},
		{"shard vs joining run", ledger.Shard{I: 0, N: 2}, []string{"run", plant, "--out", out, "-q"}, true},
		{"shard vs same shard", ledger.Shard{I: 0, N: 2}, []string{"faults", plant, "--out", out, "-q", "--shard", "0/2"}, true},
		{"shard vs other shard", ledger.Shard{I: 0, N: 2}, []string{"faults", plant, "--out", out, "-q", "--shard", "1/2"}, false},
	}
	for _, c := range cases {
		l, err := ledger.LockOut(context.Background(), out, ledger.LockOptions{Shard: c.held, Command: "thrum held-by-test"})
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		_, stderr, code := cli(t, c.args...)
		l.Release()
		if !c.refused {
			if code != exitOK {
				t.Errorf("%s: exit %d, want 0: %s", c.name, code, stderr)
			}
			continue
		}
		want := fmt.Sprintf("is in use by pid %d on host %s since ", os.Getpid(), host)
		if code != exitError || !strings.Contains(stderr, want) || !strings.Contains(stderr, "thrum held-by-test") {
			t.Errorf("%s: exit %d, want %d and a message naming the holder (%q):\n%s", c.name, code, exitError, want, stderr)
		}
	}
	locks, _ := filepath.Glob(filepath.Join(out, ledger.LockName+"*"))
	if len(locks) != 0 {
		t.Errorf("lock files left after the runs: %v", locks)
	}
}

// A lock file whose holder died (its flock went with it) is taken over
// with a warning naming the dead holder, and removed when the run ends.
func TestStaleLockTakenOver(t *testing.T) {
	plant := shortDemo(t)
	out := filepath.Join(filepath.Dir(plant), "out")
	os.MkdirAll(out, 0o755)
	host, _ := os.Hostname()
	for _, name := range []string{ledger.LockName, ledger.LockName + "-3-of-4"} {
		content := fmt.Sprintf("pid 999999999\nhost %s\nsince 2001-02-03T04:05:06Z\ncommand thrum run dead\n", host)
		if err := os.WriteFile(filepath.Join(out, name), []byte(content), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	_, stderr, code := cli(t, "expand", plant, "--out", out, "-q")
	if code != exitOK {
		t.Fatalf("expand over a stale lock: exit %d: %s", code, stderr)
	}
	if !strings.Contains(stderr, "took over the stale lock") || !strings.Contains(stderr, "pid 999999999") {
		t.Errorf("no warning naming the stale holder:\n%s", stderr)
	}
	locks, _ := filepath.Glob(filepath.Join(out, ledger.LockName+"*"))
	if len(locks) != 0 {
		t.Errorf("lock files left after the run: %v", locks)
	}
}

// Lowering a recipe's variant count and rerunning moves the extra
// variants (and their features) to OUT/.stale, where no ledger line names
// them; temporary files of killed writes go, files thrum did not write
// stay.
func TestStaleOutputsAndTemporariesSwept(t *testing.T) {
	plant := shortDemo(t)
	out := filepath.Join(filepath.Dir(plant), "out")
	if _, stderr, code := cli(t, "run", plant, "--out", out, "-q"); code != exitOK {
		t.Fatalf("first run: %s", stderr)
	}
	before := tree(t, out)
	// the recipes make 4 and 3 variants; keep 2 of each
	b, _ := os.ReadFile(plant)
	lowered := strings.Replace(strings.Replace(string(b), "variants = 4", "variants = 2", 1), "variants = 3", "variants = 2", 1)
	if strings.Count(lowered, "variants = 2") != 2 {
		t.Fatal("the demo plant's recipes do not make 4 and 3 variants")
	}
	os.WriteFile(plant, []byte(lowered), 0o644)
	var extra []string // outputs of variants 2 and 3, and their features
	vre := regexp.MustCompile(`-v0[23](\.[a-z0-9]+)?\.(wav|npy)$`)
	for k := range before {
		if vre.MatchString(k) {
			extra = append(extra, k)
		}
	}
	if len(extra) == 0 {
		t.Fatal("no variant 2 or 3 in the first run")
	}
	// leftovers of killed writes, and files thrum did not write
	anyAug := ""
	for _, k := range extra {
		if strings.HasSuffix(k, ".wav") {
			anyAug = path.Dir(k)
			break
		}
	}
	temps := []string{
		path.Join(anyAug, ".take-01-c0000-v00.wav.tmp-123456"),
		"features/.index.csv.tmp-42",
		"splits/.lists.csv.tmp-7",
		".report.html.tmp-99",
		"evaluate/.summary.json.tmp-3",
		path.Join(path.Dir(path.Dir(anyAug)), ".ledger.jsonl.tmp-5"),
	}
	foreign := []string{
		path.Join(anyAug, "notes.txt"),
		path.Join(anyAug, "mine.wav"),
		path.Join(anyAug, ".draft.wav.tmp-abc"),
		"features/mine.npy",
	}
	for _, f := range append(append([]string{}, temps...), foreign...) {
		if err := os.WriteFile(filepath.Join(out, filepath.FromSlash(f)), []byte("x"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	_, stderr, code := cli(t, "run", plant, "--out", out, "-q")
	if code != exitOK {
		t.Fatalf("rerun: %s", stderr)
	}
	named := map[string]bool{}
	es, err := ledger.ReadTree(out)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range es {
		named[e.Path] = true
	}
	index, _ := os.ReadFile(filepath.Join(out, "features", "index.csv"))
	for _, k := range extra {
		if _, err := os.Stat(filepath.Join(out, filepath.FromSlash(k))); err == nil {
			t.Errorf("%s is still in place", k)
		}
		st, err := os.ReadFile(filepath.Join(out, machine.StaleDir, filepath.FromSlash(k)))
		if err != nil {
			t.Errorf("%s not moved to %s: %v", k, machine.StaleDir, err)
		} else if sum := sha(st); sum != before[k] {
			t.Errorf("%s changed on its way to %s", k, machine.StaleDir)
		}
		if named[k] || strings.Contains(string(index), k) {
			t.Errorf("%s is still named by a ledger line or the index", k)
		}
		if !strings.Contains(stderr, k) {
			t.Errorf("the move of %s is not listed on stderr", k)
		}
	}
	for _, f := range temps {
		if _, err := os.Stat(filepath.Join(out, filepath.FromSlash(f))); err == nil {
			t.Errorf("temporary file %s not removed", f)
		}
	}
	for _, f := range foreign {
		if b, err := os.ReadFile(filepath.Join(out, filepath.FromSlash(f))); err != nil || string(b) != "x" {
			t.Errorf("%s, which thrum did not write, was touched (%v)", f, err)
		}
	}
	// every remaining output is named; nothing else is swept on a rerun
	filepath.WalkDir(out, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		rel, _ := filepath.Rel(out, p)
		rel = filepath.ToSlash(rel)
		if machine.IsTemp(d.Name()) {
			t.Errorf("temporary file %s left", rel)
		}
		return nil
	})
	after := tree(t, out)
	_, stderr, code = cli(t, "run", plant, "--out", out, "-q")
	if code != exitOK || strings.Contains(stderr, "moved") {
		t.Errorf("third run: exit %d, stderr:\n%s", code, stderr)
	}
	diffTrees(t, after, tree(t, out), "rerun after the sweep")
}

// replay tells a corrupted file on disk from a ledger hash that does not
// match, and names the path.
func TestReplayNamesCorruptedFile(t *testing.T) {
	plant := shortDemo(t)
	out := filepath.Join(filepath.Dir(plant), "out")
	if _, stderr, code := cli(t, "expand", plant, "--out", out, "-q"); code != exitOK {
		t.Fatalf("expand: %s", stderr)
	}
	es, err := ledger.ReadTree(out)
	if err != nil {
		t.Fatal(err)
	}
	var aug []string
	for _, e := range es {
		if e.Kind == ledger.KindOutput && e.Origin == machine.OriginAugmented {
			aug = append(aug, e.Path)
		}
	}
	if len(aug) < 3 {
		t.Fatalf("%d augmented outputs, want 3", len(aug))
	}
	intact, corrupt, edited := aug[0], aug[1], aug[2]
	// one byte of the samples of one file
	f := filepath.Join(out, filepath.FromSlash(corrupt))
	b, _ := os.ReadFile(f)
	b[len(b)-2] ^= 0x40
	os.WriteFile(f, b, 0o644)
	// the ledger's hash of another
	id := strings.SplitN(edited, "/", 2)[0]
	lp := ledger.Path(out, id)
	lb, _ := os.ReadFile(lp)
	lines := strings.Split(string(lb), "\n")
	for i, l := range lines {
		if strings.Contains(l, `"path":"`+edited+`"`) {
			lines[i] = regexp.MustCompile(`"sha256":"[0-9a-f]{4}`).ReplaceAllString(l, `"sha256":"0000`)
		}
	}
	os.WriteFile(lp, []byte(strings.Join(lines, "\n")), 0o644)

	cases := []struct {
		path string
		code int
		want string
	}{
		{intact, exitOK, "ok   " + intact},
		{corrupt, exitProblems, "FAIL " + corrupt + ": file on disk differs (corrupted or edited): " + f},
		{edited, exitProblems, "FAIL " + edited + ": ledger hash mismatch"},
	}
	for _, c := range cases {
		stdout, stderr, code := cli(t, "replay", plant, "--out", out, c.path)
		if code != c.code || !strings.Contains(stdout, c.want) {
			t.Errorf("replay %s: exit %d (want %d), want %q in:\n%s%s", c.path, code, c.code, c.want, stdout, stderr)
		}
	}
	stdout, _, _ := cli(t, "replay", plant, "--out", out, edited)
	if strings.Contains(stdout, "file on disk differs") {
		t.Errorf("an intact file with an edited ledger hash is reported as corrupted:\n%s", stdout)
	}
}

func sha(b []byte) string {
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:])
}
