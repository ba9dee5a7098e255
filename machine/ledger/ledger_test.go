package ledger

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"thrum/machine"
)

func must(t *testing.T, err error) {
	t.Helper()
	if err != nil {
		t.Fatal(err)
	}
}

// sample returns entries that use every field kind of a line.
func sample() []Entry {
	return []Entry{
		{Kind: KindOutput, Stage: Expand, Path: "pump/nominal/a-c0.wav", SHA256: "ab", Source: "pump/nominal/a.wav",
			SourceSHA256: "cd", Clip: 0, ClipStart: 0, ClipFrames: 160000, Machine: "pump", Condition: "nominal",
			Origin: machine.OriginRecorded, Label: machine.LabelNormal, Group: "pump/nominal/a.wav", Variant: -1,
			Seed: 1<<63 + 5, SampleRate: 16000, Speed: 1, Scale: 1, Tool: machine.ToolVersion},
		{Kind: KindOutput, Stage: Expand, Path: "pump/nominal/a-c0-v1.wav", SHA256: "ef", Source: "pump/nominal/a.wav",
			Machine: "pump", Condition: "nominal", Origin: machine.OriginAugmented, Label: machine.LabelNormal, Variant: 1,
			Speed: 1.0123456789, Scale: 0.5, Backgrounds: []string{"hall"}, Draw: "d1", Tool: machine.ToolVersion,
			Steps: []StepRecord{{Kind: "speed", Params: map[string]float64{"ratio": 1.0123456789}},
				{Kind: "room", Text: map[string]string{"room": "hall"}}, {Kind: "tempo", Nonphysical: true}}},
		{Kind: KindRejected, Stage: Expand, Source: "pump/nominal/a.wav", Machine: "pump", Condition: "nominal",
			Origin: machine.OriginAugmented, Label: machine.LabelNormal, Variant: 2, Reason: "snr-outside-range"},
		{Kind: KindOutput, Stage: Faults, Path: "pump/nominal/a-c0-f0.wav", Machine: "pump", Condition: "nominal",
			Origin: machine.OriginSyntheticFault, Label: machine.LabelAnomalous,
			Fault: &FaultRecord{Kind: "bearing-outer", Frequencies: map[string]float64{"bpfo": 87.5}, ShaftHz: 24.75, SeverityDB: -12, Seed: 9}},
		{Kind: KindOutput, Stage: Features, Path: "features/pump/a-mask0.npy", Machine: "pump",
			Extra: map[string]any{"mask": "time"}},
	}
}

func TestRoundTrip(t *testing.T) {
	in := sample()
	var buf bytes.Buffer
	must(t, Encode(&buf, in))
	for i, line := range strings.Split(strings.TrimSuffix(buf.String(), "\n"), "\n") {
		if !strings.HasPrefix(line, `{"schema":1,`) {
			t.Errorf("line %d does not start with the schema field: %.40s", i+1, line)
		}
	}
	if in[0].Schema != 0 {
		t.Error("Encode modified its input")
	}
	got, err := Read(bytes.NewReader(buf.Bytes()), "x.jsonl")
	must(t, err)
	want := sample()
	for i := range want {
		want[i].Schema = Schema
	}
	if !reflect.DeepEqual(got, want) {
		t.Fatalf("read back\n%+v\nwant\n%+v", got, want)
	}
	var again bytes.Buffer
	must(t, Encode(&again, got))
	if !bytes.Equal(again.Bytes(), buf.Bytes()) {
		t.Error("encode, read, encode is not byte-identical")
	}
}

func TestReadVersionsAndErrors(t *testing.T) {
	const ok = `{"kind":"output","stage":"expand","path":"a"}`
	for _, tc := range []struct {
		name, text string
		schemas    []int  // of the lines read, when no error
		err        string // substring of the error, "" for none
		future     bool   // a *SchemaError
	}{
		{"schema 0 (no field)", ok + "\n", []int{0}, "", false},
		{"explicit 0", `{"schema":0,"kind":"output","stage":"faults"}` + "\n", []int{0}, "", false},
		{"current", `{"schema":1,"kind":"rejected","stage":"expand"}`, []int{1}, "", false},
		{"mixed with blank lines", ok + "\n\n" + `{"schema":1,"kind":"output","stage":"features"}` + "\n", []int{0, 1}, "", false},
		{"future", ok + "\n" + `{"schema":2,"kind":"output","stage":"expand"}` + "\n", nil, "ledger: m/ledger.jsonl:2: schema 2 is newer", true},
		{"future after blank", "\n\n" + `{"schema":7,"kind":"output","stage":"expand"}`, nil, "m/ledger.jsonl:3: schema 7", true},
		{"negative", `{"schema":-1,"kind":"output","stage":"expand"}`, nil, "m/ledger.jsonl:1: schema -1 is not a version", false},
		{"bad json", ok + "\n" + `{"kind":"output",`, nil, "ledger: m/ledger.jsonl:2:", false},
		{"unknown stage", `{"schema":1,"kind":"output","stage":"survey"}`, nil, `m/ledger.jsonl:1: stage "survey" is not one of expand, faults, features`, false},
		{"missing stage", `{"schema":1,"kind":"output"}`, nil, `m/ledger.jsonl:1: stage ""`, false},
		{"unknown kind", `{"schema":1,"kind":"skipped","stage":"expand"}`, nil, `m/ledger.jsonl:1: kind "skipped"`, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			es, err := Read(strings.NewReader(tc.text), "m/ledger.jsonl")
			if tc.err != "" {
				if err == nil || !strings.Contains(err.Error(), tc.err) {
					t.Fatalf("error %v, want one containing %q", err, tc.err)
				}
				var se *SchemaError
				if errors.As(err, &se) != tc.future {
					t.Errorf("SchemaError %v, want %v", errors.As(err, &se), tc.future)
				}
				return
			}
			must(t, err)
			var got []int
			for _, e := range es {
				got = append(got, e.Schema)
			}
			if !reflect.DeepEqual(got, tc.schemas) {
				t.Errorf("schemas %v, want %v", got, tc.schemas)
			}
		})
	}
}

func TestStageOrderAndNames(t *testing.T) {
	for _, tc := range []struct {
		stage   Stage
		rank    int
		shard   Shard
		journal string
		part    string
	}{
		{Expand, 0, Shard{}, ".journal-expand.jsonl", ""},
		{Faults, 1, Shard{I: 0, N: 1}, ".journal-faults.jsonl", ""},
		{Features, 2, Shard{}, ".journal-features.jsonl", ""},
		{Expand, 0, Shard{I: 2, N: 4}, ".journal-expand-2-of-4.jsonl", "part-expand-2-of-4.jsonl"},
		{Faults, 1, Shard{I: 0, N: 12}, ".journal-faults-0-of-12.jsonl", "part-faults-0-of-12.jsonl"},
		{"survey", -1, Shard{}, ".journal-survey.jsonl", ""},
	} {
		if r := tc.stage.Rank(); r != tc.rank {
			t.Errorf("%s: rank %d, want %d", tc.stage, r, tc.rank)
		}
		if n := JournalName(tc.stage, tc.shard); n != tc.journal {
			t.Errorf("%s %v: journal %s, want %s", tc.stage, tc.shard, n, tc.journal)
		}
		if tc.part != "" {
			if n := PartName(tc.stage, tc.shard); n != tc.part || !partRE.MatchString(n) {
				t.Errorf("%s %v: part %s, want %s matching the merge pattern", tc.stage, tc.shard, n, tc.part)
			}
		}
	}
}

func TestCommitKeepsOtherSectionsInOrder(t *testing.T) {
	dir := t.TempDir()
	must(t, Commit(dir, Faults, Shard{}, []Entry{{Kind: KindOutput, Stage: Faults, Path: "f1"}}))
	must(t, Commit(dir, Expand, Shard{}, []Entry{{Kind: KindOutput, Stage: Expand, Path: "e1"}, {Kind: KindRejected, Stage: Expand, Reason: "snr-outside-range"}}))
	must(t, Commit(dir, Features, Shard{}, []Entry{{Kind: KindOutput, Stage: Features, Path: "m1"}}))
	// a rerun of expand replaces its own section only
	must(t, Commit(dir, Expand, Shard{}, []Entry{{Kind: KindOutput, Stage: Expand, Path: "e2"}}))
	es, err := ReadFile(filepath.Join(dir, FileName))
	must(t, err)
	var got []string
	for _, e := range es {
		got = append(got, string(e.Stage)+":"+e.Path)
	}
	if want := []string{"expand:e2", "faults:f1", "features:m1"}; !reflect.DeepEqual(got, want) {
		t.Fatalf("ledger %v, want %v", got, want)
	}
	if err := Commit(dir, "survey", Shard{}, nil); err == nil {
		t.Error("commit of an unknown stage succeeded")
	}
}

// TestCommitRewritesSchema0 checks that an older ledger's sections kept by
// a commit are rewritten in the current schema, their fields unchanged.
func TestCommitRewritesSchema0(t *testing.T) {
	dir := t.TempDir()
	old := `{"kind":"output","stage":"expand","path":"e1","source":"s","source_sha256":"","clip":0,"clip_start":0,"clip_frames":0,"machine":"m","condition":"c","origin":"recorded","label":"normal","group":"s","variant":-1,"seed":0,"sample_rate":16000,"speed":1,"scale":1,"tool":"thrum 0.1.0"}` + "\n"
	must(t, os.WriteFile(filepath.Join(dir, FileName), []byte(old), 0o644))
	must(t, Commit(dir, Faults, Shard{}, nil))
	b, err := os.ReadFile(filepath.Join(dir, FileName))
	must(t, err)
	if want := strings.Replace(old, "{", `{"schema":1,`, 1); string(b) != want {
		t.Errorf("rewritten\n%s\nwant\n%s", b, want)
	}
}

func TestJournalSurvivesTornLine(t *testing.T) {
	dir := t.TempDir()
	j, err := OpenJournal(dir, Expand, Shard{})
	must(t, err)
	must(t, j.Append(Entry{Kind: KindOutput, Stage: Expand, Path: "a"}))
	must(t, j.Close())
	// a crash in the middle of a line leaves a torn tail
	f, err := os.OpenFile(filepath.Join(dir, ".journal-expand.jsonl"), os.O_APPEND|os.O_WRONLY, 0)
	must(t, err)
	f.WriteString(`{"kind":"output","pa`)
	f.Close()
	es, err := Load(dir)
	if err != nil || len(es) != 1 || es[0].Path != "a" {
		t.Fatalf("Load: %v %v", es, err)
	}
	// committing the stage removes its journal
	must(t, Commit(dir, Expand, Shard{}, es))
	if _, err := os.Stat(filepath.Join(dir, ".journal-expand.jsonl")); !os.IsNotExist(err) {
		t.Errorf("journal left after commit: %v", err)
	}
}

func TestLoadRefusesFutureSchemaInJournal(t *testing.T) {
	dir := t.TempDir()
	name := filepath.Join(dir, ".journal-faults-1-of-2.jsonl")
	must(t, os.WriteFile(name, []byte(`{"schema":3,"kind":"output","stage":"faults"}`+"\n"), 0o644))
	_, err := Load(dir)
	var se *SchemaError
	if !errors.As(err, &se) || se.File != name || se.Line != 1 || se.Schema != 3 {
		t.Fatalf("Load: %v, want a SchemaError for %s:1", err, name)
	}
}

func TestSortCanonical(t *testing.T) {
	m := &machine.Machine{Conditions: []machine.Condition{{Name: "b"}, {Name: "a"}}}
	es := []Entry{
		{Condition: "a", Source: "x", Clip: 0, Variant: 0},
		{Condition: "b", Source: "y", Clip: 1, Variant: -1},
		{Condition: "b", Source: "y", Clip: 0, Variant: 1},
		{Condition: "b", Source: "y", Clip: 0, Variant: -1},
		{Condition: "b", Source: "x", Clip: 5, Variant: 0},
	}
	Sort(m, es)
	want := []string{"b x 5 0", "b y 0 -1", "b y 0 1", "b y 1 -1", "a x 0 0"}
	for i, e := range es {
		if got := fmt.Sprintf("%s %s %d %d", e.Condition, e.Source, e.Clip, e.Variant); got != want[i] {
			t.Errorf("position %d: %s, want %s", i, got, want[i])
		}
	}
}

// stageEntries makes the lines a stage could write for machine m: every
// source, clip and variant, shuffled by a fixed permutation.
func stageEntries(m *machine.Machine, stage Stage) []Entry {
	var es []Entry
	for ci, c := range m.Conditions {
		for s := 0; s < 4; s++ {
			for clip := 0; clip < 2; clip++ {
				for v := -1; v < 2; v++ {
					es = append(es, Entry{Kind: KindOutput, Stage: stage, Machine: m.ID, Condition: c.Name,
						Source: fmt.Sprintf("%s/%s/r%d.wav", m.ID, c.Name, s), Clip: clip, Variant: v,
						Path: fmt.Sprintf("%s/%s/r%d-c%d-v%d.wav", m.ID, c.Name, s, clip, v), Seed: uint64(ci*100 + s)})
				}
			}
		}
	}
	for i := range es {
		j := (i*7 + 3) % len(es)
		es[i], es[j] = es[j], es[i]
	}
	return es
}

func TestMergeOfPartsEqualsSingleRun(t *testing.T) {
	p := &machine.Plant{Machines: []machine.Machine{
		{ID: "fan", Conditions: []machine.Condition{{Name: "slow"}, {Name: "fast"}}},
		{ID: "pump", Conditions: []machine.Condition{{Name: "nominal"}}},
	}}
	single := t.TempDir()
	for i := range p.Machines {
		m := &p.Machines[i]
		for _, st := range []Stage{Expand, Faults} {
			es := stageEntries(m, st)
			Sort(m, es)
			must(t, Commit(filepath.Join(single, m.ID), st, Shard{}, es))
		}
	}
	for _, n := range []int{2, 3, 5} {
		t.Run(fmt.Sprint(n), func(t *testing.T) {
			out := t.TempDir()
			for i := range p.Machines {
				m := &p.Machines[i]
				// faults first: merge must still write expand's section first
				for _, st := range []Stage{Faults, Expand} {
					es := stageEntries(m, st)
					for k := 0; k < n; k++ {
						var part []Entry
						for _, e := range es {
							if (int(e.Seed)+e.Clip+e.Variant+1)%n == k {
								part = append(part, e)
							}
						}
						Sort(m, part)
						must(t, Commit(filepath.Join(out, m.ID), st, Shard{I: k, N: n}, part))
					}
				}
			}
			got, err := Merge(p, out)
			must(t, err)
			if got != 4 {
				t.Errorf("merged %d sections, want 4", got)
			}
			for _, m := range p.Machines {
				a, _ := os.ReadFile(filepath.Join(single, m.ID, FileName))
				b, _ := os.ReadFile(filepath.Join(out, m.ID, FileName))
				if len(a) == 0 || !bytes.Equal(a, b) {
					t.Errorf("%s: merged ledger (%d bytes) differs from the single run's (%d bytes)", m.ID, len(b), len(a))
				}
				if _, err := os.Stat(filepath.Join(out, m.ID, PartsDir)); !os.IsNotExist(err) {
					t.Errorf("%s: parts folder left after merge: %v", m.ID, err)
				}
			}
		})
	}
}

func TestMergeRefusesMissingPart(t *testing.T) {
	p := &machine.Plant{Machines: []machine.Machine{{ID: "pump", Conditions: []machine.Condition{{Name: "nominal"}}}}}
	out := t.TempDir()
	dir := filepath.Join(out, "pump")
	must(t, Commit(dir, Expand, Shard{I: 0, N: 3}, nil))
	must(t, Commit(dir, Expand, Shard{I: 2, N: 3}, nil))
	_, err := Merge(p, out)
	if err == nil || !strings.Contains(err.Error(), "shard 1 of 3 of stage expand is missing") {
		t.Fatalf("Merge: %v, want the missing shard named", err)
	}
	if _, err := os.Stat(filepath.Join(dir, FileName)); !os.IsNotExist(err) {
		t.Error("a ledger was written from incomplete parts")
	}
}

func TestReadTree(t *testing.T) {
	out := t.TempDir()
	write := func(rel, text string) {
		t.Helper()
		name := filepath.Join(out, filepath.FromSlash(rel))
		must(t, os.MkdirAll(filepath.Dir(name), 0o755))
		must(t, os.WriteFile(name, []byte(text), 0o644))
	}
	line := func(path string) string {
		return `{"schema":1,"kind":"output","stage":"expand","path":"` + path + `"}` + "\n"
	}
	write("pump/ledger.jsonl", line("pump/1")+line("pump/2"))
	write("fan/ledger.jsonl", line("fan/1"))
	write("fan/.journal-faults.jsonl", line("fan/journal"))       // not committed
	write("fan/parts/part-expand-0-of-2.jsonl", line("fan/part")) // not merged
	write("splits/lists.csv", "path,split\n")                     // not a machine folder
	write("features/pump/stats.json", "{}")                       // nor this
	es, err := ReadTree(out)
	must(t, err)
	var got []string
	for _, e := range es {
		got = append(got, e.Path)
	}
	if want := []string{"fan/1", "pump/1", "pump/2"}; !reflect.DeepEqual(got, want) {
		t.Errorf("ReadTree %v, want %v", got, want)
	}
	if es, err := ReadTree(filepath.Join(out, "missing")); err != nil || len(es) != 0 {
		t.Errorf("missing tree: %v %v, want empty", es, err)
	}
	write("pump/ledger.jsonl", line("pump/1")+`{"schema":2,"kind":"output","stage":"expand"}`+"\n")
	_, err = ReadTree(out)
	if want := filepath.Join(out, "pump", "ledger.jsonl") + ":2: schema 2"; err == nil || !strings.Contains(err.Error(), want) {
		t.Errorf("ReadTree: %v, want an error naming %s", err, want)
	}
}
