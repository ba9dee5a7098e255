package ledger

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"thrum/machine"
)

// SchemaError refuses a line written by a newer thrum: its format may hold
// fields this version would silently drop on the next rewrite.
type SchemaError struct {
	File   string
	Line   int
	Schema int
}

func (e *SchemaError) Error() string {
	return fmt.Sprintf("ledger: %s:%d: schema %d is newer than this thrum reads (up to %d); use the thrum that wrote it or a newer one",
		e.File, e.Line, e.Schema, Schema)
}

// Read reads ledger lines from r; name is used in error messages, which
// give name:line. Blank lines are skipped. A line without a schema field is
// read as schema 0 (the format before the field existed, otherwise the same
// fields); a line with a schema above Schema is refused with a
// *SchemaError, as is a line of an unknown stage or kind.
func Read(r io.Reader, name string) ([]Entry, error) {
	var out []Entry
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 64<<10), 16<<20)
	line := 0
	for sc.Scan() {
		line++
		b := sc.Bytes()
		if len(bytes.TrimSpace(b)) == 0 {
			continue
		}
		var e Entry
		if err := json.Unmarshal(b, &e); err != nil {
			return out, fmt.Errorf("ledger: %s:%d: %w", name, line, err)
		}
		switch {
		case e.Schema > Schema:
			return out, &SchemaError{File: name, Line: line, Schema: e.Schema}
		case e.Schema < 0:
			return out, fmt.Errorf("ledger: %s:%d: schema %d is not a version", name, line, e.Schema)
		case e.Stage.Rank() < 0:
			return out, fmt.Errorf("ledger: %s:%d: stage %q is not one of %s", name, line, e.Stage, stageList())
		case e.Kind != KindOutput && e.Kind != KindRejected && e.Kind != KindExcluded:
			return out, fmt.Errorf("ledger: %s:%d: kind %q is not %q, %q or %q", name, line, e.Kind, KindOutput, KindRejected, KindExcluded)
		}
		out = append(out, e)
	}
	if err := sc.Err(); err != nil {
		return out, fmt.Errorf("ledger: %s:%d: %w", name, line+1, err)
	}
	return out, nil
}

func stageList() string {
	var s []string
	for _, t := range Stages() {
		s = append(s, string(t))
	}
	return strings.Join(s, ", ")
}

// ReadFile reads one ledger file (a ledger, a journal or a part); a
// missing file is empty, not an error.
func ReadFile(path string) ([]Entry, error) {
	b, err := os.ReadFile(path)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("ledger: %w", err)
	}
	return Read(bytes.NewReader(b), path)
}

// Path is the ledger file of machine id under the output root out.
func Path(out, id string) string { return filepath.Join(out, id, FileName) }

// Load reads everything a machine folder records: its ledger, the journals
// of interrupted stages and the parts of sharded runs. It is what a rerun
// resumes from. A journal may end in a torn line after a crash: the lines
// before it are kept. A missing ledger is empty, not an error.
func Load(machineDir string) ([]Entry, error) {
	files := []string{filepath.Join(machineDir, FileName)}
	js, _ := filepath.Glob(filepath.Join(machineDir, journalPrefix+"*.jsonl"))
	ps, _ := filepath.Glob(filepath.Join(machineDir, PartsDir, partPrefix+"*.jsonl"))
	files = append(append(files, js...), ps...)
	var all []Entry
	for _, name := range files {
		es, err := ReadFile(name)
		var se *SchemaError
		if err != nil && (!strings.HasPrefix(filepath.Base(name), journalPrefix) || errors.As(err, &se)) {
			return nil, err
		}
		all = append(all, es...)
	}
	return all, nil
}

// ReadFileContext is ReadFile that stops with ctx's error (wrapped, naming
// the file) when ctx is done, for ledgers large enough to take a while.
func ReadFileContext(ctx context.Context, path string) ([]Entry, error) {
	f, err := os.Open(path)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, fmt.Errorf("ledger: %w", err)
	}
	defer f.Close()
	es, err := Read(machine.ContextReader(ctx, f), path)
	if cerr := ctx.Err(); cerr != nil {
		// The reader stopped mid-line: ctx, not the line, is the cause.
		return nil, fmt.Errorf("ledger: %s: %w", path, cerr)
	}
	return es, err
}

// ReadTree reads the committed ledger of every machine folder under the
// output root out (OUT/*/ledger.jsonl), in folder-name order. Journals and
// parts are not read: they are not results until committed or merged.
func ReadTree(out string) ([]Entry, error) {
	return ReadTreeContext(context.Background(), out)
}

// ReadTreeContext is ReadTree that stops with ctx's error when ctx is done.
func ReadTreeContext(ctx context.Context, out string) ([]Entry, error) {
	files, err := filepath.Glob(filepath.Join(out, "*", FileName))
	if err != nil {
		return nil, fmt.Errorf("ledger: %w", err)
	}
	sort.Strings(files)
	var all []Entry
	for _, f := range files {
		es, err := ReadFileContext(ctx, f)
		if err != nil {
			return nil, err
		}
		all = append(all, es...)
	}
	return all, nil
}
