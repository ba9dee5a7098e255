package main

import (
	"errors"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"thrum/machine/ledger"
	"thrum/machine/wavio"
)

// lightPlant is the bad-content plant with its costly room step replaced
// by a gain step.
func lightPlant(t *testing.T, takes int) string {
	t.Helper()
	plant := writeBadContentPlant(t, ordinaryRoom, takes)
	editPlant(t, plant, "  kind = \"room\"\n", "  kind = \"gain\"\n  range = [-3.0, 3.0]\n")
	return plant
}

func editPlant(t *testing.T, plant, old, new string) {
	t.Helper()
	b, err := os.ReadFile(plant)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(b), old) {
		t.Fatalf("plant has no %q", old)
	}
	if err := os.WriteFile(plant, []byte(strings.Replace(string(b), old, new, 1)), 0o644); err != nil {
		t.Fatal(err)
	}
}

// A plant that cannot work is refused by run before OUT is created, with
// every reason in one list; survey names the same and --strict exits 3.
func TestRunRefusesAnInfeasiblePlantBeforeWriting(t *testing.T) {
	plant := lightPlant(t, 6)
	dir := filepath.Dir(plant)
	// full-load keeps two takes: two groups for three splits
	for _, k := range []string{"03", "04", "05", "06"} {
		os.Remove(filepath.Join(dir, "recordings", "pump-a1", "full-load", "take-"+k+".wav"))
	}
	// part-load held out at 1470 rpm ± 3 %: full-load's 1480 rpm is in its
	// band (a warning: the split stage takes it as a load hold-out)
	editPlant(t, plant, "rpm = 1180.0\n  band_percent = 3.0\n", "rpm = 1470.0\n  band_percent = 3.0\n  hold_out = true\n")
	// a condition folder the plant does not declare
	extra := filepath.Join(dir, "recordings", "pump-a1", "half-load", "take-01.wav")
	os.MkdirAll(filepath.Dir(extra), 0o755)
	if err := wavio.WriteFile(extra, takeWith(-1, 0), 16000, 1, wavio.PCM16); err != nil {
		t.Fatal(err)
	}
	want := []string{
		"preflight found 2 problem(s)",
		"error: pump-a1/full-load: split-infeasible: 2 usable normal recording group(s)",
		"error: pump-a1/half-load: unknown-condition:",
		"warning: pump-a1/full-load: hold-out-conflict: training condition at 1480 rpm",
	}
	out := filepath.Join(dir, "out")
	_, stderr, code := cli(t, "run", plant, "--out", out, "-q")
	if code != exitError {
		t.Fatalf("run exit %d, want %d\n%s", code, exitError, stderr)
	}
	for _, w := range want {
		if !strings.Contains(stderr, w) {
			t.Errorf("run stderr lacks %q:\n%s", w, stderr)
		}
	}
	if _, err := os.Stat(out); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("run wrote %s before refusing (%v)", out, err)
	}
	stdout, _, code := cli(t, "survey", plant, "--strict")
	if code != exitProblems {
		t.Errorf("survey --strict exit %d, want %d", code, exitProblems)
	}
	for _, w := range want[1:] {
		if !strings.Contains(stdout, w) {
			t.Errorf("survey lacks %q:\n%s", w, stdout)
		}
	}
}

// A clipped take is excluded: named on stderr, in the summary, in the
// ledger as an excluded line and in the report; accepted in plant.toml it
// is used.
func TestClippedTakeIsExcludedUnlessAccepted(t *testing.T) {
	plant := lightPlant(t, 6)
	dir := filepath.Dir(plant)
	const bad = "pump-a1/full-load/take-01.wav"
	x := takeWith(-1, 0)
	for i := range x {
		x[i] = math.Max(-1, math.Min(1, 20*x[i])) // overdriven: flat tops at full scale
	}
	if err := wavio.WriteFile(filepath.Join(dir, "recordings", filepath.FromSlash(bad)), x, 16000, 1, wavio.PCM16); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	stdout, stderr, code := cli(t, "run", plant, "--out", out, "-q")
	if code != exitOK {
		t.Fatalf("run exit %d\n%s\n%s", code, stdout, stderr)
	}
	if !strings.Contains(stderr, "survey: "+bad+": clipped: ") {
		t.Errorf("stderr does not name the clipped take:\n%s", stderr)
	}
	if !strings.Contains(stdout, "excluded recording: "+bad+": clipped: ") {
		t.Errorf("summary does not name the clipped take:\n%s", stdout)
	}
	es, err := ledger.ReadFile(ledger.Path(out, "pump-a1"))
	if err != nil {
		t.Fatal(err)
	}
	excluded, used := 0, 0
	for _, e := range es {
		if e.Source != bad {
			continue
		}
		if e.Kind == ledger.KindExcluded && e.Stage == ledger.Expand && strings.HasPrefix(e.Reason, "clipped: ") && e.Path == "" {
			excluded++
		} else {
			used++
		}
	}
	if excluded != 1 || used != 0 {
		t.Errorf("ledger: %d excluded and %d other lines for %s, want 1 and 0", excluded, used, bad)
	}
	rep, err := os.ReadFile(filepath.Join(out, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(rep), "Excluded recordings") || !strings.Contains(string(rep), bad+": clipped: ") {
		t.Errorf("report does not list the excluded take")
	}

	b, _ := os.ReadFile(plant)
	os.WriteFile(plant, append(b, []byte("\n[[quality.accept]]\npath = \""+bad+"\"\nreason = \"transient overload, kept on purpose\"\n")...), 0o644)
	stdout, stderr, code = cli(t, "run", plant, "--out", out, "-q")
	if code != exitOK || strings.Contains(stdout+stderr, "clipped: ") {
		t.Fatalf("accepted: run exit %d\n%s\n%s", code, stdout, stderr)
	}
	es, _ = ledger.ReadFile(ledger.Path(out, "pump-a1"))
	used = 0
	for _, e := range es {
		if e.Source == bad && e.Kind == ledger.KindOutput {
			used++
		}
		if e.Kind == ledger.KindExcluded {
			t.Errorf("accepted: excluded line %+v", e)
		}
	}
	if used == 0 {
		t.Errorf("accepted: no output from %s", bad)
	}
}
