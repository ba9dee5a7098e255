package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"sort"
	"strings"
	"testing"

	"thrum/features/evalstage"
)

// run ends with evaluate on a plant whose eval and test hold real
// anomalous recordings (the demo's pump); evaluate alone writes the same
// summary.json bytes with any worker count; --no-evaluate leaves the
// report without the section; every key of summary.json is documented in
// README.
func TestEvaluateEndToEnd(t *testing.T) {
	plant := shortDemo(t)
	out := filepath.Join(filepath.Dir(plant), "out")
	stdout, stderr, code := cli(t, "run", plant, "--out", out, "-q")
	if code != exitOK {
		t.Fatalf("run exit %d: %s", code, stderr)
	}
	for _, want := range []string{"AUC on real anomalies", "PROXY AUC", "Credibility of the variants", "evaluate: summary in"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("run's output has no %q:\n%s", want, stdout)
		}
	}
	file := filepath.Join(out, evalstage.Dir, evalstage.SummaryFile)
	first, err := os.ReadFile(file)
	if err != nil {
		t.Fatal(err)
	}
	report, _ := os.ReadFile(filepath.Join(out, "report.html"))
	if !bytes.Contains(report, []byte("Detector evaluation")) || !bytes.Contains(report, []byte("pump-p1-roc.png")) {
		t.Error("report.html has no evaluation section with the pump's ROC picture")
	}
	for _, j := range []string{"1", "2"} {
		// without the summary, nothing is reused: evaluate computes afresh
		if err := os.Remove(file); err != nil {
			t.Fatal(err)
		}
		if _, stderr, code := cli(t, "evaluate", out, "-q", "-j", j); code != exitOK {
			t.Fatalf("evaluate -j %s: exit %d: %s", j, code, stderr)
		}
		b, err := os.ReadFile(file)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(b, first) {
			t.Errorf("evaluate -j %s wrote other summary.json bytes than run", j)
		}
	}
	var sum evalstage.Summary
	if err := json.Unmarshal(first, &sum); err != nil {
		t.Fatal(err)
	}
	real := 0
	for _, m := range sum.Machines {
		for _, ts := range m.Training {
			for o := range ts.Origins {
				if o != "recorded" && o != "augmented" && o != "masked" {
					t.Errorf("%s: training set %s holds %d %s clip(s)", m.Machine, ts.Name, ts.Origins[o], o)
				}
			}
		}
		real += len(m.Results)
	}
	if real == 0 {
		t.Error("no real result although the pump has anomalous recordings in eval and test")
	}
	// the schema: every key of summary.json is named in README
	readme, err := os.ReadFile(filepath.Join(repoRoot(t), "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	var doc any
	json.Unmarshal(first, &doc)
	keys := map[string]bool{}
	jsonKeys(doc, keys)
	var missing []string
	for k := range keys {
		if !regexp.MustCompile("`" + regexp.QuoteMeta(k) + "`").Match(readme) {
			missing = append(missing, k)
		}
	}
	sort.Strings(missing)
	if len(missing) > 0 {
		t.Errorf("summary.json keys not documented in README: %v", missing)
	}
	// a rerun with --no-evaluate writes the report without the section
	if _, stderr, code := cli(t, "run", plant, "--out", out, "-q", "--no-evaluate"); code != exitOK {
		t.Fatalf("run --no-evaluate: exit %d: %s", code, stderr)
	}
	report, _ = os.ReadFile(filepath.Join(out, "report.html"))
	if bytes.Contains(report, []byte("Detector evaluation")) {
		t.Error("run --no-evaluate still reports the evaluation")
	}
	// --ablate adds one training set per step kind of the pump's recipe
	stdout, stderr, code = cli(t, "evaluate", out, "-q", "--ablate", "--rounds", "50")
	if code != exitOK {
		t.Fatalf("evaluate --ablate: exit %d: %s", code, stderr)
	}
	if err := json.Unmarshal(mustRead(t, file), &sum); err != nil {
		t.Fatal(err)
	}
	for _, m := range sum.Machines {
		if m.Machine != "pump-p1" {
			continue
		}
		var names []string
		for _, ts := range m.Training {
			names = append(names, ts.Name)
			if ts.LeftOut != "" && (ts.Dropped == 0 || ts.Name != evalstage.SetWithout+ts.LeftOut) {
				t.Errorf("ablation set %+v", ts)
			}
		}
		if !slices.Contains(names, evalstage.SetWithout+"speed") || !strings.Contains(stdout, evalstage.SetWithout+"speed") {
			t.Errorf("pump training sets %v, output lacks the speed ablation", names)
		}
	}
}

func mustRead(t *testing.T, f string) []byte {
	t.Helper()
	b, err := os.ReadFile(f)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// jsonKeys collects the object keys of a decoded JSON value.
func jsonKeys(v any, keys map[string]bool) {
	switch x := v.(type) {
	case map[string]any:
		for k, e := range x {
			keys[k] = true
			if k != "origins" && k != "params" { // their keys are values (origins, parameter names)
				jsonKeys(e, keys)
			}
		}
	case []any:
		for _, e := range x {
			jsonKeys(e, keys)
		}
	}
}

// BenchmarkDemoEvaluate compares evaluate with the run before it on the
// demo plant: "run" is the pipeline without evaluate on a fresh output
// root, "evaluate" the evaluate stage alone on its result (computed afresh
// each time).
func BenchmarkDemoEvaluate(b *testing.B) {
	plant := demo(b)
	dir := filepath.Dir(plant)
	out := filepath.Join(dir, "out")
	b.Run("run", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			o := filepath.Join(dir, "bench-run", strings.Repeat("x", i+1))
			if _, stderr, code := cli(b, "run", plant, "--out", o, "-q", "--no-evaluate"); code != exitOK {
				b.Fatal(stderr)
			}
			if i == 0 {
				b.StopTimer()
				os.Rename(o, out)
				b.StartTimer()
			}
		}
	})
	b.Run("evaluate", func(b *testing.B) {
		if _, err := os.Stat(out); err != nil {
			b.StopTimer()
			if _, stderr, code := cli(b, "run", plant, "--out", out, "-q", "--no-evaluate"); code != exitOK {
				b.Fatal(stderr)
			}
			b.StartTimer()
		}
		for i := 0; i < b.N; i++ {
			os.Remove(filepath.Join(out, evalstage.Dir, evalstage.SummaryFile))
			if _, stderr, code := cli(b, "evaluate", out, "-q"); code != exitOK {
				b.Fatal(stderr)
			}
		}
	})
}
