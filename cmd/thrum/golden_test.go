package main

import (
	"flag"
	"fmt"
	"maps"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"

	"thrum/machine/demoplant"
)

var update = flag.Bool("update", false, "rewrite the golden files under testdata/golden from this run")

// goldenSeconds is the length of each demo recording in TestGolden: one
// clip per recording keeps the run to a couple of seconds.
const goldenSeconds = 1

// TestGolden runs survey, the whole pipeline and audit on the demo plant
// with 1 s recordings and compares what the project promises to keep
// stable with the files under testdata/golden: every machine's
// ledger.jsonl, splits/lists.csv, the header of features/index.csv, and
// the survey and audit text. Temporary paths and wall times are normalised
// first. After a deliberate change, rewrite them with
//
//	go test ./cmd/thrum -run TestGolden -update
//
// and review the diff.
func TestGolden(t *testing.T) {
	dir := t.TempDir()
	plant, err := demoplant.Write(filepath.Join(dir, "plant"), demoplant.Options{Seconds: goldenSeconds})
	if err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	norm := normaliser(dir)

	got := map[string]string{} // golden name → normalised text
	survey, stderr, code := cli(t, "survey", plant)
	if code != exitOK {
		t.Fatalf("survey exit %d: %s", code, stderr)
	}
	got["survey.txt"] = survey
	if _, stderr, code := cli(t, "run", plant, "--out", out, "-q"); code != exitOK {
		t.Fatalf("run exit %d: %s", code, stderr)
	}
	audit, stderr, code := cli(t, "audit", out)
	if code != exitOK {
		t.Fatalf("audit exit %d: %s", code, stderr)
	}
	got["audit.txt"] = audit
	ledgers, err := filepath.Glob(filepath.Join(out, "*", "ledger.jsonl"))
	if err != nil || len(ledgers) == 0 {
		t.Fatalf("no ledgers under OUT (%v)", err)
	}
	for _, l := range ledgers {
		got["ledger/"+filepath.Base(filepath.Dir(l))+".jsonl"] = readText(t, l)
	}
	got["lists.csv"] = readText(t, filepath.Join(out, "splits", "lists.csv"))
	index := readText(t, filepath.Join(out, "features", "index.csv"))
	header, _, _ := strings.Cut(index, "\n")
	got["index-header.csv"] = header + "\n"
	for k, v := range got {
		got[k] = norm(v)
	}

	root := filepath.Join(repoRoot(t), "testdata", "golden")
	if *update {
		writeGolden(t, root, got)
		return
	}
	want := readGolden(t, root)
	names := map[string]bool{}
	for k := range got {
		names[k] = true
	}
	for k := range want {
		names[k] = true
	}
	for _, name := range slices.Sorted(maps.Keys(names)) {
		g, gok := got[name]
		w, wok := want[name]
		switch {
		case !wok:
			t.Errorf("%s: made by this run but not in testdata/golden", name)
		case !gok:
			t.Errorf("%s: in testdata/golden but not made by this run", name)
		default:
			if d := firstDiff(w, g); d != "" {
				t.Errorf("%s differs from testdata/golden/%s: %s", name, name, d)
			}
		}
	}
	if t.Failed() {
		t.Log("if the change is deliberate: go test ./cmd/thrum -run TestGolden -update, then review the diff")
	}
}

// normaliser returns a function that replaces the temporary folder (as
// given and with symbolic links resolved) by $DIR and every wall time by
// "wall time X".
func normaliser(dir string) func(string) string {
	dirs := []string{dir}
	if real, err := filepath.EvalSymlinks(dir); err == nil && real != dir {
		dirs = append(dirs, real)
	}
	wall := regexp.MustCompile(`wall time [0-9]+(\.[0-9]+)? ?(ns|µs|us|ms|s|m|min|h)\b`)
	return func(s string) string {
		for _, d := range dirs {
			s = strings.ReplaceAll(s, d, "$DIR")
			s = strings.ReplaceAll(s, filepath.ToSlash(d), "$DIR")
		}
		return wall.ReplaceAllString(s, "wall time X")
	}
}

// firstDiff describes the first line where got differs from want, or
// returns "" when they are equal.
func firstDiff(want, got string) string {
	if want == got {
		return ""
	}
	wl := strings.Split(want, "\n")
	gl := strings.Split(got, "\n")
	for i := 0; i < len(wl) || i < len(gl); i++ {
		w, g := "<end of file>", "<end of file>"
		if i < len(wl) {
			w = wl[i]
		}
		if i < len(gl) {
			g = gl[i]
		}
		if w != g {
			return fmt.Sprintf("first difference at line %d (golden %d lines, got %d)\n  golden: %s\n  got:    %s", i+1, len(wl), len(gl), w, g)
		}
	}
	return "" // unreachable: equal line lists mean equal strings
}

func readText(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// readGolden reads every file under root, keyed by its slash path.
func readGolden(t *testing.T, root string) map[string]string {
	t.Helper()
	m := map[string]string{}
	err := filepath.WalkDir(root, func(p string, d os.DirEntry, err error) error {
		if err != nil || d.IsDir() || d.Name() == "README.md" {
			return err
		}
		rel, _ := filepath.Rel(root, p)
		m[filepath.ToSlash(rel)] = readText(t, p)
		return nil
	})
	if err != nil {
		t.Fatalf("%v (write the golden files with -update)", err)
	}
	return m
}

// writeGolden replaces the golden files by got, removing ledgers of
// machines the run no longer makes; README.md stays.
func writeGolden(t *testing.T, root string, got map[string]string) {
	t.Helper()
	if err := os.RemoveAll(filepath.Join(root, "ledger")); err != nil {
		t.Fatal(err)
	}
	for name, text := range got {
		p := filepath.Join(root, filepath.FromSlash(name))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	t.Logf("wrote %d golden files under %s", len(got), root)
}

// repoRoot walks up from the working directory to the folder of go.mod.
func repoRoot(t *testing.T) string {
	t.Helper()
	d, err := os.Getwd()
	if err != nil {
		t.Fatal(err)
	}
	for {
		if _, err := os.Stat(filepath.Join(d, "go.mod")); err == nil {
			return d
		}
		up := filepath.Dir(d)
		if up == d {
			t.Fatal("no go.mod above the working directory")
		}
		d = up
	}
}

func TestGoldenHelpers(t *testing.T) {
	norm := normaliser("/tmp/x")
	for _, c := range []struct{ in, want string }{
		{"outputs in /tmp/x/out; wall time 1.6 s", "outputs in $DIR/out; wall time X"},
		{"audit: clean; wall time 250 ms; report: /tmp/x/out/report.html", "audit: clean; wall time X; report: $DIR/out/report.html"},
		{"no path here", "no path here"},
	} {
		if got := norm(c.in); got != c.want {
			t.Errorf("normalise(%q) = %q, want %q", c.in, got, c.want)
		}
	}
	for _, c := range []struct {
		want, got string
		line      string // "" when equal
	}{
		{"a\nb\n", "a\nb\n", ""},
		{"a\nb\n", "a\nc\n", "line 2 "},
		{"a\n", "a\nb\n", "line 2 "},
		{"a\nb\n", "a\n", "line 2 "},
	} {
		d := firstDiff(c.want, c.got)
		if (c.line == "") != (d == "") || !strings.Contains(d, c.line) {
			t.Errorf("firstDiff(%q, %q) = %q, want a report of %q", c.want, c.got, d, c.line)
		}
	}
}
