package online

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"

	"thrum/machine"
)

// RecordDir is the folder under the output root that holds the served
// records, one <machine>.jsonl each.
const RecordDir = "serve"

// RecordPath is the served record of a machine.
func RecordPath(out, machineID string) string {
	return filepath.Join(out, RecordDir, machineID+".jsonl")
}

// recordLine is one line of a served record. Kind "session" fills Tool,
// PlantSHA256, PlantSeed, TrainingClips, TrainingSHA256 and MaxAttempts;
// "epoch" Epoch and OrderSeed; "batch" Epoch, Batch, Size, Items,
// Replaced, Fallbacks and SHA256.
type recordLine struct {
	Kind           string  `json:"kind"`
	Tool           string  `json:"tool,omitempty"`
	Machine        string  `json:"machine,omitempty"`
	PlantSHA256    string  `json:"plant_sha256,omitempty"`
	PlantSeed      *uint64 `json:"plant_seed,omitempty"`
	TrainingClips  int     `json:"training_clips,omitempty"`
	TrainingSHA256 string  `json:"training_sha256,omitempty"`
	MaxAttempts    int     `json:"max_attempts,omitempty"`
	Epoch          *int    `json:"epoch,omitempty"`
	OrderSeed      *uint64 `json:"order_seed,omitempty"`
	Batch          *int    `json:"batch,omitempty"`
	Size           int     `json:"size,omitempty"`
	Items          int     `json:"items,omitempty"`
	Replaced       int     `json:"rejections_replaced,omitempty"`
	Fallbacks      int     `json:"fallbacks,omitempty"`
	SHA256         string  `json:"sha256,omitempty"`
}

type servedKey struct{ epoch, batch, size int }

// recorder appends to the served records of a running server.
type recorder struct {
	mu     sync.Mutex
	files  map[string]*os.File
	served map[string]map[servedKey]bool
	epochs map[string]map[int]bool
	s      *Server
}

func openRecorder(out string, s *Server) (*recorder, error) {
	if err := os.MkdirAll(filepath.Join(out, RecordDir), 0o755); err != nil {
		return nil, fmt.Errorf("online: %w", err)
	}
	r := &recorder{files: map[string]*os.File{}, served: map[string]map[servedKey]bool{}, epochs: map[string]map[int]bool{}, s: s}
	for _, id := range s.ids {
		ms := s.machines[id]
		path := RecordPath(out, id)
		f, err := os.OpenFile(path, os.O_WRONLY|os.O_APPEND|os.O_CREATE, 0o644)
		if err != nil {
			r.close()
			return nil, fmt.Errorf("online: %w", err)
		}
		r.files[id] = f
		r.served[id] = map[servedKey]bool{}
		r.epochs[id] = map[int]bool{}
		// a line a killed server left unfinished is ended, so the session
		// line starts a line of its own
		if st, err := f.Stat(); err == nil && st.Size() > 0 {
			if last, err := lastByte(path); err == nil && last != '\n' {
				f.Write([]byte("\n"))
			}
		}
		seed := s.plant.Seed
		if err := r.write(id, recordLine{Kind: "session", Tool: machine.ToolVersion, Machine: id, PlantSHA256: s.plantSHA, PlantSeed: &seed,
			TrainingClips: len(ms.items), TrainingSHA256: ms.trainingSHA, MaxAttempts: MaxAttempts}); err != nil {
			r.close()
			return nil, err
		}
	}
	return r, nil
}

func lastByte(path string) (byte, error) {
	f, err := os.Open(path)
	if err != nil {
		return 0, err
	}
	defer f.Close()
	b := make([]byte, 1)
	st, err := f.Stat()
	if err != nil {
		return 0, err
	}
	_, err = f.ReadAt(b, st.Size()-1)
	return b[0], err
}

// write appends one line and syncs it (the caller holds mu or is alone).
func (r *recorder) write(id string, l recordLine) error {
	b, err := json.Marshal(l)
	if err != nil {
		return err
	}
	f := r.files[id]
	if _, err := f.Write(append(b, '\n')); err != nil {
		return fmt.Errorf("online: %s: %w", f.Name(), err)
	}
	if err := f.Sync(); err != nil {
		return fmt.Errorf("online: %s: %w", f.Name(), err)
	}
	return nil
}

// batch records a served batch once per session (a batch served again,
// or in another form, has the same digest).
func (r *recorder) batch(ms *machineState, d *Description) error {
	r.mu.Lock()
	defer r.mu.Unlock()
	id := ms.m.ID
	k := servedKey{d.Epoch, d.Batch, d.Size}
	if r.served[id][k] {
		return nil
	}
	if !r.epochs[id][d.Epoch] {
		e, seed := d.Epoch, ms.orderSeed(r.s.plant.Seed, d.Epoch)
		if err := r.write(id, recordLine{Kind: "epoch", Epoch: &e, OrderSeed: &seed}); err != nil {
			return err
		}
		r.epochs[id][d.Epoch] = true
	}
	e, b := d.Epoch, d.Batch
	if err := r.write(id, recordLine{Kind: "batch", Epoch: &e, Batch: &b, Size: d.Size, Items: len(d.Items),
		Replaced: d.RejectionsReplaced, Fallbacks: d.Fallbacks, SHA256: d.SHA256}); err != nil {
		return err
	}
	r.served[id][k] = true
	return nil
}

func (r *recorder) close() error {
	r.mu.Lock()
	defer r.mu.Unlock()
	var first error
	for _, f := range r.files {
		if err := f.Close(); err != nil && first == nil {
			first = err
		}
	}
	r.files = map[string]*os.File{}
	return first
}

// servedBatch is a batch line of a record with the session it belongs to.
type servedBatch struct {
	line    recordLine
	session recordLine
	lineNo  int
}

// readRecord reads a served record. A last line left unfinished by a
// killed server is ignored; any other unreadable line is an error.
func readRecord(path string) ([]servedBatch, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("online: %w", err)
	}
	var out []servedBatch
	var session recordLine
	br := bufio.NewReader(bytes.NewReader(b))
	for n := 1; ; n++ {
		line, err := br.ReadBytes('\n')
		if errors.Is(err, io.EOF) {
			// no newline: unfinished unless it reads whole
			var l recordLine
			if len(bytes.TrimSpace(line)) == 0 || json.Unmarshal(line, &l) != nil {
				return out, nil
			}
		} else if err != nil {
			return nil, fmt.Errorf("online: %s: %w", path, err)
		}
		if len(bytes.TrimSpace(line)) > 0 {
			var l recordLine
			if err := json.Unmarshal(line, &l); err != nil {
				return nil, fmt.Errorf("online: %s line %d: %w", path, n, err)
			}
			switch l.Kind {
			case "session":
				session = l
			case "epoch":
			case "batch":
				if l.Epoch == nil || l.Batch == nil || l.Size < 1 || l.Items < 1 {
					return nil, fmt.Errorf("online: %s line %d: batch line without epoch, batch, size or items", path, n)
				}
				if session.Kind == "" {
					return nil, fmt.Errorf("online: %s line %d: batch line before any session line", path, n)
				}
				out = append(out, servedBatch{line: l, session: session, lineNo: n})
			default:
				return nil, fmt.Errorf("online: %s line %d: unknown kind %q", path, n, l.Kind)
			}
		}
		if err != nil {
			return out, nil
		}
	}
}

// ParseItemID splits a served item's id, "<machine>/e<epoch>/p<position>".
func ParseItemID(id string) (machineID string, epoch, position int, err error) {
	parts := strings.Split(id, "/")
	if len(parts) < 3 {
		return "", 0, 0, fmt.Errorf("online: item %q: want <machine>/e<epoch>/p<position>", id)
	}
	m := strings.Join(parts[:len(parts)-2], "/")
	e, p := parts[len(parts)-2], parts[len(parts)-1]
	if m == "" || !strings.HasPrefix(e, "e") || !strings.HasPrefix(p, "p") {
		return "", 0, 0, fmt.Errorf("online: item %q: want <machine>/e<epoch>/p<position>", id)
	}
	epoch, err1 := strconv.Atoi(e[1:])
	position, err2 := strconv.Atoi(p[1:])
	if err1 != nil || err2 != nil || epoch < 0 || position < 0 {
		return "", 0, 0, fmt.Errorf("online: item %q: epoch and position must be whole numbers ≥ 0", id)
	}
	return m, epoch, position, nil
}

// ReplayResult is the outcome of regenerating a served item.
type ReplayResult struct {
	ID string
	// Item describes the regenerated item (seed, steps, sha256).
	Item ItemDesc
	// Epoch, Batch and Size name the recorded batch that served it;
	// Recorded is its digest in the record, SHA256 the regenerated one.
	Epoch, Batch, Size int
	Recorded           string
	SHA256             string
	// Record is the served record read.
	Record string
}

// OK reports whether the regenerated batch matches the record.
func (r ReplayResult) OK() bool { return r.SHA256 == r.Recorded }

// Replay regenerates the served item id ("<machine>/e<epoch>/p<position>",
// as batch descriptions name it) from the plant, the recordings and the
// served record, and checks the batch that served it against the record's
// digest. Nothing is written. The plant and recordings must be those the
// item was served from.
func Replay(ctx context.Context, inv *machine.Inventory, opt Options, id string) (ReplayResult, error) {
	res := ReplayResult{ID: id}
	mid, epoch, pos, err := ParseItemID(id)
	if err != nil {
		return res, err
	}
	opt.NoRecord = true
	opt.Ahead = -1
	s, err := New(inv, opt)
	if err != nil {
		return res, err
	}
	defer s.Close()
	ms := s.machines[mid]
	if ms == nil {
		return res, fmt.Errorf("online: replay %s: machine %q serves nothing (served: %s)", id, mid, strings.Join(s.ids, ", "))
	}
	res.Record = RecordPath(opt.Out, mid)
	batches, err := readRecord(res.Record)
	if err != nil {
		return res, err
	}
	var match, other *servedBatch
	for i := range batches {
		b := &batches[i]
		lo := *b.line.Batch * b.line.Size
		if *b.line.Epoch != epoch || pos < lo || pos >= lo+b.line.Items {
			continue
		}
		if b.session.PlantSHA256 == s.plantSHA && b.session.TrainingSHA256 == ms.trainingSHA {
			match = b
			break
		}
		if other == nil {
			other = b
		}
	}
	if match == nil {
		if other != nil {
			return res, fmt.Errorf("online: replay %s: served (%s line %d) from plant.toml sha256 %s and training clips sha256 %s; now %s and %s: the plant or its recordings changed",
				id, res.Record, other.lineNo, other.session.PlantSHA256, other.session.TrainingSHA256, s.plantSHA, ms.trainingSHA)
		}
		return res, fmt.Errorf("online: replay %s: no batch of epoch %d serving position %d in %s", id, epoch, pos, res.Record)
	}
	res.Epoch, res.Batch, res.Size, res.Recorded = epoch, *match.line.Batch, match.line.Size, match.line.SHA256
	req, err := s.Check(Request{Machine: mid, Epoch: epoch, Batch: res.Batch, Size: res.Size, Form: FormWave})
	if err != nil {
		return res, err
	}
	b, err := s.compute(ctx, req)
	if err != nil {
		return res, err
	}
	res.SHA256 = b.Desc.SHA256
	res.Item = b.Desc.Items[pos-res.Batch*res.Size]
	return res, nil
}
