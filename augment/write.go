package augment

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"path"
	"path/filepath"
	"strings"
	"sync"

	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/wavio"
)

// Writing outputs: file names, ledger entries, progress per clip, and
// reusing what a previous run already wrote.

// stem turns a recording's path inside its condition folder into a file
// name stem: folders joined with "--", unsafe characters replaced.
func stem(r *machine.Recording) string {
	rel := r.Rel
	if r.File != "" {
		rel = r.File
	}
	rel = strings.TrimPrefix(rel, r.Machine+"/"+r.Condition+"/")
	rel = strings.TrimPrefix(rel, machine.AnomalousDir+"/")
	rel = strings.TrimSuffix(rel, path.Ext(rel))
	var b strings.Builder
	for _, c := range rel {
		switch {
		case c == '/':
			b.WriteString("--")
		case c >= 'a' && c <= 'z', c >= 'A' && c <= 'Z', c >= '0' && c <= '9', c == '-', c == '_', c == '.':
			b.WriteRune(c)
		default:
			b.WriteByte('_')
		}
	}
	if r.Channel > 0 {
		fmt.Fprintf(&b, "-ch%d", r.Channel)
	}
	return b.String()
}

func (e *env) base(r *machine.Recording, c machine.Clip) ledger.Entry {
	ent := ledger.Entry{
		Kind: ledger.KindOutput, Source: r.Rel, SourceSHA256: r.SHA256, Clip: c.Index,
		ClipStart: c.Start, ClipFrames: c.Frames, Machine: r.Machine, Condition: r.Condition,
		Label: r.Label, Group: e.p.ClipGroup(r, c), SampleRate: e.p.SampleRate, Speed: 1, Scale: 1, Tool: machine.ToolVersion,
		Resample: r.Resample, BandwidthHz: r.BandwidthHz, Channel: r.Channel,
	}
	if r.Resample != "" {
		ent.SourceRate = r.Format.SampleRate
	}
	return ent
}

// drawHash is the ledger's draw field: the first 8 bytes, as 16 lower-case
// hex digits, of the SHA-256 of the steps' JSON encoding (encoding/json of
// the []ledger.StepRecord: a JSON array of objects with the fields in
// struct order, empty ones omitted, map keys sorted, no spaces, no trailing
// newline).
func drawHash(steps []ledger.StepRecord) string {
	b, _ := json.Marshal(steps)
	s := sha256.Sum256(b)
	return hex.EncodeToString(s[:8])
}

// reusable returns a previous entry when it still describes this output and
// its file on disk hashes to the recorded value.
func (e *env) reusable(want ledger.Entry) (ledger.Entry, bool) {
	old, ok := e.previous[entryKey(want)]
	if !ok || old.Seed != want.Seed || old.Draw != want.Draw || old.SourceSHA256 != want.SourceSHA256 {
		return ledger.Entry{}, false
	}
	if old.Kind == ledger.KindRejected {
		return old, true
	}
	if old.Path != want.Path {
		return ledger.Entry{}, false
	}
	sum, err := machine.HashFile(filepath.Join(e.opt.Out, filepath.FromSlash(old.Path)))
	if err != nil || sum != old.SHA256 {
		return ledger.Entry{}, false
	}
	return old, true
}

// reuse appends a previous entry that still describes want (same draw,
// seed, source and file hash) and reports whether it did.
func (e *env) reuse(res *jobResult, want ledger.Entry) bool {
	old, ok := e.reusable(want)
	if ok {
		res.entries = append(res.entries, old)
		res.reused++
	}
	return ok
}

// encoding is the encoding of written clips.
func (e *env) encoding() wavio.Encoding {
	if e.opt.Encoding == 0 {
		return wavio.PCM16
	}
	return e.opt.Encoding
}

// fit scales a rendered output y into range for its encoding and returns
// the factor applied (the ledger's scale). PCM clamps at full scale, so
// every PCM output is kept within Ceiling (see Protect); float32 keeps any
// value, and an output of sensor data beyond ±1 keeps its units there.
func (e *env) fit(r *machine.Recording, y []float64) float64 {
	if r.BeyondFullScale && e.encoding() == wavio.Float32 {
		return 1
	}
	return Protect(y)
}

// encodeBufs holds encoding buffers for reuse: a clip's bytes are written
// (to their temporary file) before the buffer goes back.
var encodeBufs = sync.Pool{New: func() any { return new(bytes.Buffer) }}

// encode encodes x in the stage's encoding into a buffer from encodeBufs
// and returns it with the sha256 of its bytes.
func (e *env) encode(x []float64) (*bytes.Buffer, string, error) {
	buf := encodeBufs.Get().(*bytes.Buffer)
	buf.Reset()
	buf.Grow(len(x)*3 + 64)
	if err := wavio.Encode(buf, x, e.p.SampleRate, 1, e.encoding()); err != nil {
		encodeBufs.Put(buf)
		return nil, "", err
	}
	s := sha256.Sum256(buf.Bytes())
	return buf, hex.EncodeToString(s[:]), nil
}

// emit writes y for an output entry (a rejected one has no file) atomically
// under Out through the stage's batch, journals the entry once its file is
// durable and in place (when the batch flushes), and appends it to the
// job's result.
func (e *env) emit(res *jobResult, ent ledger.Entry, y []float64) error {
	if ledger.Check(&ent) != nil {
		// belt and braces: the steps record undefined values themselves,
		// but a NaN that slips through rejects the variant, not the stage
		ent = ledger.Defined(ent, "not finite")
		ent.Kind, ent.Reason, ent.Path = ledger.KindRejected, RejectNonFiniteValue, ""
	}
	if ent.Kind != ledger.KindOutput {
		if err := e.journal.Append(ent); err != nil {
			return err
		}
		res.entries = append(res.entries, ent)
		return nil
	}
	buf, sum, err := e.encode(y)
	if err != nil {
		return err
	}
	ent.SHA256 = sum
	line := ent
	err = e.batch.Write(filepath.Join(e.opt.Out, filepath.FromSlash(ent.Path)), buf.Bytes(), func() error { return e.journal.Append(line) })
	encodeBufs.Put(buf)
	if err != nil {
		return err
	}
	res.entries = append(res.entries, ent)
	return nil
}

// counted wraps a per-clip function so that every clip it finishes is
// reported as progress.
func (e *env) counted(res *jobResult, fn func(machine.Clip, []float64) error) func(machine.Clip, []float64) error {
	return func(c machine.Clip, x []float64) error {
		if err := fn(c, x); err != nil {
			return err
		}
		res.ticked++
		e.progress.Add(1, 0, 0, res.job.m.ID, res.job.rec.Rel)
		return nil
	}
}
