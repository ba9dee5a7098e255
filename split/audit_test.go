package split

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"thrum/augment"
	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/wavio"
	"thrum/split/internal/synthtest"
)

// writeTree writes an output tree: one machine, 12 recordings of 3 s at
// 16 kHz, one augmented variant each (gain), ledgers, lists and stats.
func writeTree(t *testing.T, dir string) ([]Row, Policy) {
	t.Helper()
	const fs = 16000
	rng := rand.New(rand.NewPCG(3, 4))
	mm := synthtest.NewMachine(rng, fs)
	p := Policy{Seed: 42, Conditions: []ConditionPolicy{{Machine: "pump-a1", Name: "nominal", RPM: 1480, BandPercent: 3},
		{Machine: "pump-a1", Name: "fast", RPM: 1800, BandPercent: 2, HoldOut: true}}, Backgrounds: []string{"hall", "yard", "dock", "roof", "pit", "gate"}}
	bg := AssignBackgrounds(p.Backgrounds, p)
	var trainBG string
	for _, id := range p.Backgrounds {
		if bg[id] == machine.SplitTrain {
			trainBG = id
			break
		}
	}
	var lines bytes.Buffer
	write := func(e ledger.Entry, x []float64) {
		full := filepath.Join(dir, filepath.FromSlash(e.Path))
		os.MkdirAll(filepath.Dir(full), 0o755)
		if err := wavio.WriteFile(full, x, fs, 1, wavio.PCM16); err != nil {
			t.Fatal(err)
		}
		e.SHA256 = fileHash(t, full)
		e.Kind = ledger.KindOutput
		b, _ := json.Marshal(e)
		lines.Write(append(b, '\n'))
	}
	for g := range 12 {
		cond := "nominal"
		if g >= 10 {
			cond = "fast"
		}
		x := mm.Record(rng, 3)
		src := fmt.Sprintf("pump-a1/%s/rec%02d.wav", cond, g)
		base := ledger.Entry{Stage: ledger.Expand, Source: src, SourceSHA256: fmt.Sprintf("src%02d", g), Machine: "pump-a1", Condition: cond,
			Label: machine.LabelNormal, Group: src, Speed: 1, SampleRate: fs}
		rec := base
		rec.Path, rec.Origin = fmt.Sprintf("pump-a1/%s/rec%02d-c0.wav", cond, g), machine.OriginRecorded
		write(rec, x)
		aug := base
		aug.Path, aug.Origin, aug.Variant, aug.Speed = fmt.Sprintf("pump-a1/%s/rec%02d-c0-v1.wav", cond, g), machine.OriginAugmented, 1, 1.01
		aug.Backgrounds = []string{trainBG}
		write(aug, synthtest.Gain(x, -3))
	}
	if err := os.WriteFile(filepath.Join(dir, "pump-a1", "ledger.jsonl"), lines.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	entries, err := ledger.ReadTree(dir)
	if err != nil {
		t.Fatal(err)
	}
	rows, err := Assign(context.Background(), ItemsFromLedger(entries), p)
	if err != nil {
		t.Fatal(err)
	}
	if err := WriteSplits(dir, rows, p); err != nil {
		t.Fatal(err)
	}
	var inputs []string
	for _, r := range rows {
		if r.Split == machine.SplitTrain {
			inputs = append(inputs, r.Path)
		}
	}
	writeStats(t, dir, inputs)
	return rows, p
}

func writeStats(t *testing.T, dir string, inputs []string) {
	b, _ := json.Marshal(map[string]any{"machine": "pump-a1", "inputs": inputs})
	os.MkdirAll(filepath.Join(dir, "features", "pump-a1"), 0o755)
	if err := os.WriteFile(filepath.Join(dir, "features", "pump-a1", "stats.json"), b, 0o644); err != nil {
		t.Fatal(err)
	}
}

func fileHash(t *testing.T, p string) string {
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:])
}

func TestAuditClean(t *testing.T) {
	dir := t.TempDir()
	writeTree(t, dir)
	rep, err := Audit(context.Background(), dir, AuditOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	rep.WriteText(&buf)
	if !rep.OK() {
		t.Fatalf("clean tree fails the audit:\n%s", buf.String())
	}
	if rep.Queries == 0 || rep.Indexed == 0 {
		t.Fatalf("near-duplicate search did not run: %+v", rep)
	}
	t.Logf("%s", buf.String())
}

// TestAuditLeaks writes a tree, injects one leak of each kind, and checks
// the report names each with its rule and file.
func TestAuditLeaks(t *testing.T) {
	dir := t.TempDir()
	rows, p := writeTree(t, dir)
	var evalRec, trainAug, excluded, trainRec *Row
	for i := range rows {
		r := &rows[i]
		switch {
		case r.Split != machine.SplitTrain && r.Split != Excluded && r.Condition == "nominal" && evalRec == nil:
			evalRec = r
		case r.Split == machine.SplitTrain && r.Origin == machine.OriginAugmented && trainAug == nil:
			trainAug = r
		case r.Split == Excluded && r.Condition == "nominal" && excluded == nil:
			excluded = r
		case r.Split == machine.SplitTrain && r.Origin == machine.OriginRecorded && trainRec == nil:
			trainRec = r
		}
	}
	if evalRec == nil || trainAug == nil || excluded == nil || trainRec == nil {
		t.Fatal("tree lacks an eval clip, a training variant or an excluded variant")
	}
	bg := AssignBackgrounds(p.Backgrounds, p)
	var testBG string
	for id, s := range bg {
		if s != machine.SplitTrain {
			testBG = id
		}
	}
	// 1. A gain/shift-changed copy of an eval clip smuggled into training.
	a, err := wavio.ReadFile(filepath.Join(dir, evalRec.Path))
	if err != nil {
		t.Fatal(err)
	}
	leak := synthtest.Shift(synthtest.Gain(a.Mono(nil), 4), 2000)
	leakPath := "pump-a1/nominal/extra-take.wav"
	if err := wavio.WriteFile(filepath.Join(dir, leakPath), leak, 16000, 1, wavio.PCM16); err != nil {
		t.Fatal(err)
	}
	leakRow := Row{Item: Item{Path: leakPath, SHA256: fileHash(t, filepath.Join(dir, leakPath)), Machine: "pump-a1", Condition: "nominal",
		Origin: machine.OriginRecorded, Label: machine.LabelNormal, Group: "extra-take", SourceSHA256: "extra", Speed: 1}, Split: machine.SplitTrain}
	// 2. A derived file of an eval group moved into train.
	excluded.Split = machine.SplitTrain
	// 3. An augmented file in test.
	trainAug.Split = machine.SplitTest
	// 4. A training file mixed with a non-training background.
	trainRec.Backgrounds = []string{testBG}
	// 5. An eval clip altered on disk.
	var other *Row
	for i := range rows {
		if rows[i].Split == machine.SplitEval || rows[i].Split == machine.SplitTest {
			if rows[i].Path != evalRec.Path && rows[i].Origin == machine.OriginRecorded && rows[i].Condition == "nominal" {
				other = &rows[i]
			}
		}
	}
	if other == nil {
		t.Fatal("need two eval/test recorded clips")
	}
	tampered := filepath.Join(dir, other.Path)
	b, _ := os.ReadFile(tampered)
	b[len(b)-1] ^= 0x55
	os.WriteFile(tampered, b, 0o644)
	// 6. A hold-out clip listed as train.
	var hold *Row
	for i := range rows {
		if rows[i].Condition == "fast" && rows[i].Origin == machine.OriginRecorded {
			hold = &rows[i]
			break
		}
	}
	hold.Split = machine.SplitTrain
	rows = append(rows, leakRow)
	var buf bytes.Buffer
	if err := WriteListsCSV(&buf, rows); err != nil {
		t.Fatal(err)
	}
	machine.WriteFileAtomic(filepath.Join(dir, SplitsDir, ListsFile), buf.Bytes())
	// 7. Statistics fitted on an eval clip as well.
	writeStats(t, dir, []string{trainRec.Path, evalRec.Path})

	rep, err := Audit(context.Background(), dir, AuditOptions{})
	if err != nil {
		t.Fatal(err)
	}
	buf.Reset()
	rep.WriteText(&buf)
	text := buf.String()
	t.Logf("report:\n%s", text)
	if rep.OK() {
		t.Fatal("leaked tree passes the audit")
	}
	for _, want := range []struct{ rule, file string }{
		{RuleNearDup, leakPath},
		{RuleGroupOneSplit, excluded.Path},
		{RuleOriginTrain, trainAug.Path},
		{RuleBackgrounds, trainRec.Path},
		{RuleListed, other.Path},
		{RuleRecordedEval, other.Path},
		{RuleHoldOut, hold.Path},
		{RuleStats, evalRec.Path},
		{RuleReDerived, excluded.Path},
	} {
		found := false
		for _, v := range rep.Violations {
			if v.Rule == want.rule && strings.Contains(strings.Join(v.Files, " "), want.file) {
				found = true
			}
		}
		if !found {
			t.Errorf("no %s violation naming %s", want.rule, want.file)
		}
	}
}

func TestAuditLists(t *testing.T) {
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(9, 10))
	mm := synthtest.NewMachine(rng, 16000)
	var train, eval []string
	for i := range 8 {
		x := mm.Record(rng, 10)
		p := filepath.Join(dir, fmt.Sprintf("train%d.wav", i))
		wavio.WriteFile(p, x, 16000, 1, wavio.PCM16)
		train = append(train, p)
		if i < 2 { // two leaked copies after noise at 10 dB SNR
			q := filepath.Join(dir, fmt.Sprintf("eval-leak%d.wav", i))
			wavio.WriteFile(q, synthtest.Noise(x, rng, 10), 16000, 1, wavio.PCM16)
			eval = append(eval, q)
		}
		if i == 2 { // a copy resampled to 44.1 kHz: found across rates
			q := filepath.Join(dir, "eval-leak2.wav")
			y := augment.NewResampler(16000.0/44100).Apply(nil, x)
			wavio.WriteFile(q, y, 44100, 1, wavio.PCM16)
			eval = append(eval, q)
		}
	}
	for i := range 6 {
		q := filepath.Join(dir, fmt.Sprintf("eval%d.wav", i))
		wavio.WriteFile(q, mm.Record(rng, 10), 16000, 1, wavio.PCM16)
		eval = append(eval, q)
	}
	bad := filepath.Join(dir, "eval-bad.wav")
	os.WriteFile(bad, []byte("not a wav file"), 0o644)
	eval = append(eval, bad)
	rep, err := AuditLists(context.Background(), train, eval, AuditOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var flagged []string
	for _, v := range rep.Violations {
		flagged = append(flagged, v.Files...)
	}
	got := strings.Join(flagged, " ")
	for i := range 3 {
		if !strings.Contains(got, fmt.Sprintf("eval-leak%d.wav", i)) {
			t.Errorf("leak %d not flagged", i)
		}
	}
	if !strings.Contains(got, "eval-bad.wav") {
		t.Error("an undecodable file is not reported")
	}
	if n := len(rep.Violations); n != 4 {
		t.Errorf("%d violations, want 4: %v", n, rep.Violations)
	}
}

func TestListPaths(t *testing.T) {
	dir := t.TempDir()
	os.MkdirAll(filepath.Join(dir, "a", "b"), 0o755)
	for _, p := range []string{"a/x.wav", "a/b/y.WAV", "a/notes.txt"} {
		os.WriteFile(filepath.Join(dir, filepath.FromSlash(p)), []byte("x"), 0o644)
	}
	os.WriteFile(filepath.Join(dir, "list.txt"), []byte("# train\na/x.wav\n\n/abs/z.wav\n"), 0o644)
	os.WriteFile(filepath.Join(dir, "list.csv"), []byte("split,path\ntrain,a/x.wav\n"), 0o644)
	for _, tc := range []struct {
		arg  string
		want []string
	}{
		{filepath.Join(dir, "a"), []string{filepath.Join(dir, "a", "b", "y.WAV"), filepath.Join(dir, "a", "x.wav")}},
		{filepath.Join(dir, "list.txt"), []string{filepath.Join(dir, "a", "x.wav"), "/abs/z.wav"}},
		{filepath.Join(dir, "list.csv"), []string{filepath.Join(dir, "a", "x.wav")}},
		{filepath.Join(dir, "a", "x.wav"), []string{filepath.Join(dir, "a", "x.wav")}},
	} {
		got, err := ListPaths(tc.arg)
		if err != nil || fmt.Sprint(got) != fmt.Sprint(tc.want) {
			t.Errorf("ListPaths(%s) = %v, %v; want %v", tc.arg, got, err, tc.want)
		}
	}
	if _, err := ListPaths(filepath.Join(dir, "missing")); err == nil {
		t.Error("no error for a missing path")
	}
}
