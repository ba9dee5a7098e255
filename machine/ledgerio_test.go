package machine

import (
	"os"
	"path/filepath"
	"testing"
)

func TestCommitStageKeepsOtherSectionsInOrder(t *testing.T) {
	dir := t.TempDir()
	must := func(err error) {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
	}
	must(CommitStage(dir, "faults", []Entry{{Kind: EntryOutput, Stage: "faults", Path: "f1"}}))
	must(CommitStage(dir, "expand", []Entry{{Kind: EntryOutput, Stage: "expand", Path: "e1"}, {Kind: EntryRejected, Stage: "expand", Reason: "snr-outside-range"}}))
	must(CommitStage(dir, "features", []Entry{{Kind: EntryOutput, Stage: "features", Path: "m1"}}))
	// a rerun of expand replaces its own section only
	must(CommitStage(dir, "expand", []Entry{{Kind: EntryOutput, Stage: "expand", Path: "e2"}}))
	es, err := ReadLedgerFile(filepath.Join(dir, LedgerName))
	must(err)
	var got []string
	for _, e := range es {
		got = append(got, e.Stage+":"+e.Path)
	}
	want := []string{"expand:e2", "faults:f1", "features:m1"}
	if len(got) != len(want) {
		t.Fatalf("ledger %v, want %v", got, want)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("ledger %v, want %v", got, want)
		}
	}
}

func TestJournalSurvivesTornLine(t *testing.T) {
	dir := t.TempDir()
	j, err := OpenJournal(dir, "expand")
	if err != nil {
		t.Fatal(err)
	}
	j.Append(Entry{Kind: EntryOutput, Stage: "expand", Path: "a"})
	j.Close()
	// a crash in the middle of a line leaves a torn tail
	f, _ := os.OpenFile(filepath.Join(dir, ".journal-expand.jsonl"), os.O_APPEND|os.O_WRONLY, 0)
	f.WriteString(`{"kind":"output","pa`)
	f.Close()
	es, err := LoadLedger(dir)
	if err != nil || len(es) != 1 || es[0].Path != "a" {
		t.Fatalf("LoadLedger: %v %v", es, err)
	}
	// committing the stage removes its journal
	if err := CommitStage(dir, "expand", es); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(dir, ".journal-expand.jsonl")); !os.IsNotExist(err) {
		t.Errorf("journal left after commit: %v", err)
	}
}

func TestWriteFileAtomicLeavesNoTemporary(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "sub", "x.bin")
	if err := WriteFileAtomic(p, []byte("abc")); err != nil {
		t.Fatal(err)
	}
	st, err := os.Stat(p)
	if err != nil || st.Mode().Perm() != 0o644 {
		t.Fatalf("mode %v, %v", st.Mode(), err)
	}
	ents, _ := os.ReadDir(filepath.Dir(p))
	if len(ents) != 1 {
		t.Errorf("folder holds %d entries, want only the file", len(ents))
	}
	// a destination that cannot be created fails and leaves nothing
	if err := WriteFileAtomic(filepath.Join(p, "y"), []byte("abc")); err == nil {
		t.Error("writing below a file succeeded")
	}
}
