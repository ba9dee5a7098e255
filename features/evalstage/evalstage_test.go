package evalstage

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"thrum/features"
	"thrum/machine"
	"thrum/split"
)

// fakeClip is one row of a synthetic output root.
type fakeClip struct {
	cond, group, use, origin, label, split string
	maskOf                                 string
	// raise lifts one band by 12 dB (an anomaly, or a fault cue); shift
	// moves every band (a variant's gain, or another condition).
	raise int
	shift float64
	// flat leaves the noise out: every frame the same
	flat bool
}

const (
	fakeFrames = 24
	fakeBands  = 8
)

// fakeOut writes OUT/splits/plan.json, OUT/features/index.csv and one .npy
// per row for machine m1 with conditions a, b (hold-out) and c. The
// log-mel of a clip is a fixed spectrum plus unit Gaussian noise per cell,
// drawn from a PCG keyed by the clip's number.
func fakeOut(t *testing.T, rows []fakeClip) string {
	t.Helper()
	out := t.TempDir()
	var buf bytes.Buffer
	pl := split.Plan{Version: 1, Policy: split.Policy{Seed: 7, Conditions: []split.ConditionPolicy{
		{Machine: "m1", Name: "a"}, {Machine: "m1", Name: "b", HoldOut: true}, {Machine: "m1", Name: "c"}}}}
	if err := split.WritePlan(&buf, pl); err != nil {
		t.Fatal(err)
	}
	if err := os.MkdirAll(filepath.Join(out, split.SplitsDir), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(out, split.SplitsDir, split.PlanFile), buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	var idx bytes.Buffer
	w := csv.NewWriter(&idx)
	w.Write(indexColumns)
	for i, r := range rows {
		rng := rand.New(rand.NewPCG(uint64(i), 1))
		data := make([]float32, fakeFrames*fakeBands)
		for f := 0; f < fakeFrames; f++ {
			for b := 0; b < fakeBands; b++ {
				v := -40 - 3*float64(b) + r.shift
				if !r.flat {
					v += rng.NormFloat64()
				}
				if b == r.raise && r.raise > 0 {
					v += 12
				}
				data[f*fakeBands+b] = float32(v)
			}
		}
		p := fmt.Sprintf("features/m1/%s/clip-%03d.npy", r.cond, i)
		if err := os.MkdirAll(filepath.Join(out, filepath.Dir(filepath.FromSlash(p))), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := features.WriteNPYFile(filepath.Join(out, filepath.FromSlash(p)), data, fakeFrames, fakeBands); err != nil {
			t.Fatal(err)
		}
		maskOf := ""
		if r.maskOf != "" {
			maskOf = "features/m1/" + r.maskOf
		}
		w.Write([]string{p, r.use, maskOf, strings.TrimSuffix(p, ".npy") + ".wav", "m1", r.cond, r.group, r.origin, r.label, r.split,
			fmt.Sprint(fakeFrames), fmt.Sprint(fakeBands)})
	}
	w.Flush()
	if err := os.WriteFile(filepath.Join(out, features.Dir, features.IndexFile), idx.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return out
}

// fakePlant: condition a with real anomalies, the hold-out b (shifted by
// 4 dB: another operating point) with real anomalies, and c with none but
// fault cues.
func fakePlant() []fakeClip {
	var rows []fakeClip
	add := func(n int, c fakeClip) {
		for i := 0; i < n; i++ {
			rows = append(rows, c)
		}
	}
	for _, cond := range []string{"a", "c"} {
		for g := 0; g < 4; g++ {
			grp := fmt.Sprintf("m1/%s/take-%d", cond, g)
			add(2, fakeClip{cond: cond, group: grp, use: features.UseTrainNormal, origin: "recorded", label: "normal", split: "train"})
			add(2, fakeClip{cond: cond, group: grp, use: features.UseTrainNormal, origin: "augmented", label: "normal", split: "train", shift: 1})
			add(2, fakeClip{cond: cond, group: grp, use: features.UseSyntheticAnomaly, origin: "synthetic-fault", label: "anomalous", split: "train", raise: 5})
		}
		for g := 0; g < 3; g++ {
			add(2, fakeClip{cond: cond, group: fmt.Sprintf("m1/%s/eval-%d", cond, g), use: features.UseEval, origin: "recorded", label: "normal", split: "eval"})
		}
	}
	for g := 0; g < 2; g++ {
		add(2, fakeClip{cond: "a", group: fmt.Sprintf("m1/a/anomalous-%d", g), use: features.UseTest, origin: "recorded", label: "anomalous", split: "test", raise: 3})
		add(2, fakeClip{cond: "b", group: fmt.Sprintf("m1/b/take-%d", g), use: features.UseTest, origin: "recorded", label: "normal", split: "test", shift: 4})
	}
	add(2, fakeClip{cond: "b", group: "m1/b/anomalous-0", use: features.UseTest, origin: "recorded", label: "anomalous", split: "test", shift: 4, raise: 3})
	// a masked copy of the first clip
	rows = append(rows, fakeClip{cond: "a", group: "m1/a/take-0", use: features.UseTrainNormal, origin: "recorded", label: "normal", split: "train", maskOf: "a/clip-000.npy"})
	return rows
}

func runFake(t *testing.T, out string, opt Options) (*Summary, []byte) {
	t.Helper()
	opt.Out = out
	opt.Rounds = 200
	s, err := Run(context.Background(), opt)
	if err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(filepath.Join(out, Dir, SummaryFile))
	if err != nil {
		t.Fatal(err)
	}
	return s, b
}

// The stage trains on normal training clips only, reports the hold-out
// condition apart, gives proxy rows only where no real anomaly exists, and
// writes the same bytes whatever the worker count.
func TestRunOnSmallPlant(t *testing.T) {
	out := fakeOut(t, fakePlant())
	// a machine's picture from an earlier run is moved to .stale
	if err := os.MkdirAll(filepath.Join(out, Dir), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(out, Dir, "gone"+rocSuffix), []byte("x"), 0o644); err != nil {
		t.Fatal(err)
	}
	s, b1 := runFake(t, out, Options{Workers: 1, Masked: true})
	if _, err := os.Stat(filepath.Join(out, machine.StaleDir, Dir, "gone"+rocSuffix)); err != nil {
		t.Errorf("the stray picture was not moved to %s: %v", machine.StaleDir, err)
	}
	// a rerun with the same inputs reuses the summary: nothing is written
	sumFile := filepath.Join(out, Dir, SummaryFile)
	st0, _ := os.Stat(sumFile)
	if err := os.Chtimes(sumFile, st0.ModTime().Add(-time.Hour), st0.ModTime().Add(-time.Hour)); err != nil {
		t.Fatal(err)
	}
	runFake(t, out, Options{Workers: 2, Masked: true})
	if st1, _ := os.Stat(sumFile); !st1.ModTime().Equal(st0.ModTime().Add(-time.Hour)) {
		t.Error("a rerun with the same inputs rewrote summary.json")
	}
	if err := os.Remove(sumFile); err != nil {
		t.Fatal(err)
	}
	_, b3 := runFake(t, out, Options{Workers: 3, Masked: true})
	if !bytes.Equal(b1, b3) {
		t.Error("summary.json differs between 1 and 3 workers")
	}
	// another option is another input
	s2, _ := runFake(t, out, Options{Workers: 3})
	if s2.Inputs == s.Inputs || s2.Masked {
		t.Error("dropping --masked reused the summary made with it")
	}
	if len(s.Machines) != 1 {
		t.Fatalf("%d machines, want 1", len(s.Machines))
	}
	m := s.Machines[0]
	// training sets: recorded 16 (2 per take, 4 takes, a and c), expanded
	// adds 16 variants, masked adds the one masked copy; no fault cue
	want := map[string]map[string]int{
		SetRecorded: {"recorded": 16},
		SetExpanded: {"recorded": 16, "augmented": 16},
		SetMasked:   {"recorded": 16, "augmented": 16, "masked": 1},
	}
	for _, ts := range m.Training {
		w, ok := want[ts.Name]
		if !ok {
			t.Errorf("unexpected training set %q", ts.Name)
			continue
		}
		if fmt.Sprint(ts.Origins) != fmt.Sprint(w) {
			t.Errorf("training set %s: origins %v, want %v", ts.Name, ts.Origins, w)
		}
	}
	scopes := map[string]Result{}
	for _, r := range m.Results {
		if r.Proxy {
			t.Errorf("proxy row among the real results: %+v", r)
		}
		scopes[r.Scope+"/"+r.Condition+"/"+r.Detector] = r
	}
	for _, k := range []string{"machine//gaussian", "machine//knn", "condition/a/knn", "condition/b/gaussian"} {
		if _, ok := scopes[k]; !ok {
			t.Errorf("no real result %s", k)
		}
	}
	if r := scopes["condition/b/knn"]; !r.HoldOut || r.Normal != 4 || r.Anomalous != 2 || r.NormalGroups != 2 || r.AnomalousGroups != 1 {
		t.Errorf("hold-out row: %+v", r)
	}
	if r := scopes["machine//knn"]; r.Normal != 12 || r.Anomalous != 4 {
		t.Errorf("machine row counts %d/%d, want 12 normal (a and c, not the hold-out) and 4 anomalous", r.Normal, r.Anomalous)
	}
	// a 12 dB band in unit noise is found by both detectors
	for _, d := range []string{"gaussian", "knn"} {
		r := scopes["condition/a/"+d]
		if len(r.Sets) != 3 || !(r.Sets[0].AUC > 0.9) {
			t.Errorf("%s on condition a: %+v", d, r.Sets)
		}
		if r.Sets[0].VsRecorded != nil || r.Sets[1].VsRecorded == nil {
			t.Errorf("%s: the difference belongs to the non-recorded sets only", d)
		}
	}
	for _, r := range m.Proxy {
		if !r.Proxy || r.Condition != "c" {
			t.Errorf("proxy row %+v: want condition c only", r)
		}
	}
	if len(m.Proxy) != 2 {
		t.Errorf("%d proxy rows, want one per detector for condition c", len(m.Proxy))
	}
	if m.ROC != path.Join(Dir, "m1"+rocSuffix) {
		t.Errorf("ROC picture %q", m.ROC)
	}
	if _, err := os.Stat(filepath.Join(out, filepath.FromSlash(m.ROC))); err != nil {
		t.Error(err)
	}
	// credibility: a and c have variants, the hold-out none
	for _, c := range m.Credibility.Conditions {
		if c.Condition == "b" != (c.Variants == 0) || c.Condition == "b" && c.FrechetVariants.Valid() {
			t.Errorf("credibility %+v", c)
		}
	}
	// summary.json reads back into the same value
	var back Summary
	if err := json.Unmarshal(b1, &back); err != nil {
		t.Fatal(err)
	}
	again, err := back.JSON()
	if err != nil || !bytes.Equal(again, b1) {
		t.Errorf("summary.json does not round-trip (%v)", err)
	}
}

// A features index that marks a fault cue or an anomalous recording as a
// normal training clip is refused, naming the file and the line.
func TestTrainingRowsAreNormalOnly(t *testing.T) {
	cases := []struct {
		name string
		row  fakeClip
	}{
		{"fault cue", fakeClip{cond: "a", group: "g", use: features.UseTrainNormal, origin: "synthetic-fault", label: "anomalous", split: "train"}},
		{"cue labelled normal", fakeClip{cond: "a", group: "g", use: features.UseTrainNormal, origin: "synthetic-fault", label: "normal", split: "train"}},
		{"anomalous recording", fakeClip{cond: "a", group: "g", use: features.UseTrainNormal, origin: "recorded", label: "anomalous", split: "train"}},
		{"eval clip", fakeClip{cond: "a", group: "g", use: features.UseTrainNormal, origin: "recorded", label: "normal", split: "eval"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rows := append(fakePlant()[:3:3], c.row)
			out := fakeOut(t, rows)
			_, err := Run(context.Background(), Options{Out: out, Rounds: 10})
			if err == nil || !strings.Contains(err.Error(), "index.csv: line 5") || !strings.Contains(err.Error(), "not a normal training clip") {
				t.Errorf("err = %v", err)
			}
		})
	}
}

// Training sets hold train-normal rows only; an ablation set drops exactly
// the variants whose steps include its kind.
func TestTrainingSets(t *testing.T) {
	mk := func(origin, use, maskOf string, steps ...string) *clip {
		return &clip{origin: machine.Origin(origin), use: use, maskOf: maskOf, label: machine.LabelNormal, split: machine.SplitTrain, steps: steps}
	}
	cs := []*clip{
		mk("recorded", features.UseTrainNormal, ""),
		mk("augmented", features.UseTrainNormal, "", "gain", "speed"),
		mk("augmented", features.UseTrainNormal, "", "noise"),
		mk("augmented", features.UseTrainNormal, "x.npy", "noise"),
		mk("synthetic-fault", features.UseSyntheticAnomaly, ""),
		mk("recorded", features.UseEval, ""),
	}
	sets := trainingSets(cs, Options{Masked: true, Ablate: true})
	got := map[string]int{}
	for _, s := range sets {
		got[s.info.Name] = len(s.clips)
		for _, c := range s.clips {
			if !c.training() || c.cue() {
				t.Errorf("set %s holds a %s row of use %s", s.info.Name, c.origin, c.use)
			}
		}
	}
	want := map[string]int{SetRecorded: 1, SetExpanded: 3, SetMasked: 4,
		SetWithout + "gain": 2, SetWithout + "noise": 2, SetWithout + "speed": 2}
	if fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("sets %v, want %v", got, want)
	}
	var names []string
	for _, s := range sets {
		names = append(names, s.info.Name)
	}
	if !slices.Equal(names, []string{SetRecorded, SetExpanded, SetMasked, SetWithout + "gain", SetWithout + "noise", SetWithout + "speed"}) {
		t.Errorf("set order %v", names)
	}
}

func TestIndexErrorsNameTheLine(t *testing.T) {
	head := strings.Join(indexColumns, ",") + "\n"
	good := "features/m/a.npy,train-normal,,m/a.wav,m,a,g,recorded,normal,train,10,4\n"
	cases := []struct{ name, text, want string }{
		{"no column", "path,use\n", `line 1: no "mask_of" column`},
		{"bad frames", head + good + strings.Replace(good, ",10,", ",x,", 1), "line 3: column frames"},
		{"no group", head + strings.Replace(good, ",g,", ",,", 1), "line 2: features/m/a.npy has no group"},
		{"short row", head + "a,b\n", "idx.csv"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := parseIndex(strings.NewReader(c.text), "idx.csv")
			if err == nil || !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), "idx.csv") {
				t.Errorf("err = %v, want …%s…", err, c.want)
			}
		})
	}
	if cs, err := parseIndex(strings.NewReader(head+good), "idx.csv"); err != nil || len(cs) != 1 {
		t.Errorf("good index: %d rows, %v", len(cs), err)
	}
}

func TestNumJSON(t *testing.T) {
	cases := []struct {
		in   Num
		want string
	}{
		{NaN, "null"}, {Num(math.Inf(1)), "null"}, {0, "0"}, {0.123456789, "0.123457"}, {-1, "-1"}, {1234567, "1.23457e+06"},
	}
	for _, c := range cases {
		b, err := json.Marshal(c.in)
		if err != nil || string(b) != c.want {
			t.Errorf("%v: %s %v, want %s", float64(c.in), b, err, c.want)
		}
	}
}

// The bootstrap seed's byte string is pinned: changing it changes every
// interval.
func TestSeedOf(t *testing.T) {
	// python3: int.from_bytes(hashlib.sha256(struct.pack('<Q', 97) +
	// b'pump-p1\0machine\0\0gaussian\0auc\0false\0').digest()[:8], 'little')
	if got := seedOf(97, "pump-p1", "machine", "", "gaussian", "auc", "false"); got != 16819706534085624263 {
		t.Errorf("seedOf = %d", got)
	}
}

// A hold-out condition without real anomalies gets domain-shift rows: its
// normal clips as positives against the trained conditions' normals.
func TestDomainShiftRows(t *testing.T) {
	var rows []fakeClip
	for _, r := range fakePlant() {
		if r.cond == "b" && r.label == "anomalous" {
			continue
		}
		rows = append(rows, r)
	}
	s, _ := runFake(t, fakeOut(t, rows), Options{})
	m := s.Machines[0]
	if len(m.Shift) != 2 {
		t.Fatalf("%d domain-shift rows, want one per detector", len(m.Shift))
	}
	for _, r := range m.Shift {
		// positives: b's 4 normal clips; negatives: the 12 eval normals of a and c
		if r.Condition != "b" || !r.HoldOut || r.Proxy || r.Anomalous != 4 || r.Normal != 12 || !r.Sets[0].AUC.Valid() {
			t.Errorf("shift row %+v", r)
		}
	}
	for _, r := range m.Results {
		if r.Condition == "b" {
			t.Errorf("real row for the hold-out without anomalies: %+v", r)
		}
	}
}

// A detector that cannot be fitted (training clips that never vary) leaves
// its numbers without value and a note saying why; the other still scores.
func TestUnfittableDetectorIsANote(t *testing.T) {
	var rows []fakeClip
	for g := 0; g < 3; g++ {
		grp := fmt.Sprintf("m1/a/take-%d", g)
		rows = append(rows, fakeClip{cond: "a", group: grp, use: features.UseTrainNormal, origin: "recorded", label: "normal", split: "train", flat: true},
			fakeClip{cond: "a", group: fmt.Sprintf("m1/a/eval-%d", g), use: features.UseEval, origin: "recorded", label: "normal", split: "eval", flat: true},
			fakeClip{cond: "a", group: fmt.Sprintf("m1/a/anomalous-%d", g), use: features.UseTest, origin: "recorded", label: "anomalous", split: "test", flat: true, raise: 3})
	}
	s, _ := runFake(t, fakeOut(t, rows), Options{})
	m := s.Machines[0]
	if len(m.Notes) == 0 || !strings.Contains(m.Notes[0], "gaussian detector on training set recorded") {
		t.Errorf("notes %q", m.Notes)
	}
	for _, r := range m.Results {
		if got := r.Sets[0].AUC.Valid(); got != (r.Detector == "knn") {
			t.Errorf("%s: AUC valid %v", r.Detector, got)
		}
	}
}
