package split

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/wavio"
	"thrum/split/internal/synthtest"
)

// A plant with 5 s clips and remainder = "pad" audits clean: two machines,
// eight recordings of 7.5 s each, cut into a 5 s clip and a last clip of
// 2.5 s zero-padded to 5 s, each recorded clip with a gain variant. The
// zero-padded halves and the 5 s clips of distinct recordings must not read
// as near-duplicates (within a machine or across machines); a gain copy of
// an eval clip slipped into training must.
func TestAuditPaddedShortClips(t *testing.T) {
	const fs, clip = 16000, 5 * 16000
	dir := t.TempDir()
	rng := rand.New(rand.NewPCG(21, 22))
	p := Policy{Seed: 5, Method: machine.SplitShares, Default: Fractions{Train: 0.6, Eval: 0.2, Test: 0.2, AnomalousEval: 0.5}}
	var recs = map[string][]float64{}
	var lines = map[string]*bytes.Buffer{}
	write := func(e ledger.Entry, x []float64) {
		full := filepath.Join(dir, filepath.FromSlash(e.Path))
		os.MkdirAll(filepath.Dir(full), 0o755)
		if err := wavio.WriteFile(full, x, fs, 1, wavio.PCM16); err != nil {
			t.Fatal(err)
		}
		e.SHA256 = fileHash(t, full)
		e.Kind = ledger.KindOutput
		b, _ := json.Marshal(e)
		lines[e.Machine].Write(append(b, '\n'))
	}
	for _, id := range []string{"conveyor-c1", "pump-p1"} {
		lines[id] = &bytes.Buffer{}
		p.Conditions = append(p.Conditions, ConditionPolicy{Machine: id, Name: "duty", RPM: 1480, BandPercent: 2})
		mm := synthtest.NewMachine(rng, fs)
		for g := range 8 {
			x := mm.Record(rng, 7.5)
			src := fmt.Sprintf("%s/duty/take-%02d.wav", id, g)
			for c, start := range []int{0, clip} {
				y := make([]float64, clip) // the last clip zero-padded
				copy(y, x[start:])
				base := ledger.Entry{Stage: ledger.Expand, Source: src, SourceSHA256: "s-" + src, Machine: id, Condition: "duty",
					Label: machine.LabelNormal, Group: src, Speed: 1, SampleRate: fs, Clip: c}
				rec := base
				rec.Path, rec.Origin = fmt.Sprintf("%s/duty/recorded/take-%02d-c%04d.wav", id, g, c), machine.OriginRecorded
				write(rec, y)
				recs[rec.Path] = y
				aug := base
				aug.Path, aug.Origin, aug.Variant = fmt.Sprintf("%s/duty/augmented/take-%02d-c%04d-v00.wav", id, g, c), machine.OriginAugmented, 0
				write(aug, synthtest.Gain(y, -4))
			}
		}
		if err := os.WriteFile(filepath.Join(dir, id, "ledger.jsonl"), lines[id].Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
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
	inputs := map[string][]string{}
	for _, r := range rows {
		if r.Split == machine.SplitTrain {
			inputs[r.Machine] = append(inputs[r.Machine], r.Path)
		}
	}
	for id, in := range inputs {
		b, _ := json.Marshal(map[string]any{"machine": id, "inputs": in})
		os.MkdirAll(filepath.Join(dir, "features", id), 0o755)
		os.WriteFile(filepath.Join(dir, "features", id, "stats.json"), b, 0o644)
	}
	rep, err := Audit(context.Background(), dir, AuditOptions{})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	rep.WriteText(&buf)
	if !rep.OK() || rep.Queries == 0 {
		t.Fatalf("padded 5 s plant: %d queries\n%s", rep.Queries, buf.String())
	}

	// The search is not blind: a gain copy of an eval clip (a padded one)
	// among the training files is found.
	var train, eval []string
	for _, r := range rows {
		switch r.Split {
		case machine.SplitTrain:
			train = append(train, filepath.Join(dir, filepath.FromSlash(r.Path)))
		case machine.SplitEval, machine.SplitTest:
			eval = append(eval, filepath.Join(dir, filepath.FromSlash(r.Path)))
		}
	}
	var leaked string
	for _, r := range rows {
		if r.Split == machine.SplitEval && r.Origin == machine.OriginRecorded && r.Clip == 1 {
			leaked = filepath.Join(dir, "leak.wav")
			wavio.WriteFile(leaked, synthtest.Gain(recs[r.Path], 3), fs, 1, wavio.PCM16)
			break
		}
	}
	rep, err = AuditLists(context.Background(), append(train, leaked), eval, AuditOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(rep.Violations) != 1 {
		t.Errorf("one leaked padded clip: %d violations %v", len(rep.Violations), rep.Violations)
	}
}
