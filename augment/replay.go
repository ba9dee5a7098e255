package augment

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"path/filepath"
	"strings"

	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/wavio"
)

// ReplayResult is the outcome of regenerating one output.
type ReplayResult struct {
	Entry ledger.Entry
	// SHA256 is the hash of the regenerated file.
	SHA256 string
}

// OK reports whether the regenerated file matches the ledger.
func (r ReplayResult) OK() bool { return r.SHA256 == r.Entry.SHA256 }

var errFound = errors.New("found")

// Replay regenerates the output at rel (a path relative to opt.Out, as in
// the ledger) from its ledger line, the plant and the source recording, and
// returns the regenerated file's hash next to the ledger's. Nothing is
// written. opt must match the run that made the output (same policy).
func Replay(inv *machine.Inventory, opt Options, rel string) (ReplayResult, error) {
	if err := opt.check(); err != nil {
		return ReplayResult{}, err
	}
	rel = filepath.ToSlash(rel)
	id, _, _ := strings.Cut(rel, "/")
	p := inv.Plant
	m := p.Machine(id)
	if m == nil {
		return ReplayResult{}, fmt.Errorf("augment: replay: %s: no machine %q in the plant", rel, id)
	}
	entries, err := ledger.Load(filepath.Join(opt.Out, id))
	if err != nil {
		return ReplayResult{}, err
	}
	var ent *ledger.Entry
	for i := range entries {
		if entries[i].Path == rel && entries[i].Kind == ledger.KindOutput {
			ent = &entries[i]
		}
	}
	if ent == nil {
		return ReplayResult{}, fmt.Errorf("augment: replay: %s: no ledger line in %s", rel, filepath.Join(opt.Out, id, ledger.FileName))
	}
	var rec *machine.Recording
	for _, r := range inv.Recordings {
		if r.Rel == ent.Source {
			rec = r
		}
	}
	if rec == nil || !rec.Usable() {
		return ReplayResult{Entry: *ent}, fmt.Errorf("augment: replay: %s: source recording %s is missing or unusable", rel, ent.Source)
	}
	if rec.SHA256 != ent.SourceSHA256 {
		return ReplayResult{Entry: *ent}, fmt.Errorf("augment: replay: %s: source %s has changed (sha256 %s, ledger %s)", rel, ent.Source, rec.SHA256, ent.SourceSHA256)
	}
	e, err := newEnv(p, m, opt, &Plans{})
	if err != nil {
		return ReplayResult{}, err
	}
	j := job{rec: rec, m: m, c: m.Condition(rec.Condition)}
	st := stem(rec)
	var y []float64
	var got ledger.Entry
	err = rec.ReadClips(func(c machine.Clip, x []float64) error {
		if c.Index != ent.Clip {
			return nil
		}
		switch ent.Origin {
		case machine.OriginRecorded:
			y, got = append([]float64(nil), x...), *ent
		case machine.OriginAugmented:
			recipe := p.RecipeFor(m, j.c)
			if recipe == nil {
				return fmt.Errorf("no recipe for %s/%s", m.ID, j.c.Name)
			}
			var err error
			y, got, err = e.render(&workspace{}, j, recipe, c, x, ent.Variant, st)
			if err != nil {
				return err
			}
		case machine.OriginSyntheticFault:
			plan := m.Faults
			if plan == nil || ent.Fault == nil {
				return fmt.Errorf("no fault plan for %s", m.ID)
			}
			ki := ent.Variant / plan.PerClip
			if ki >= len(plan.Kinds) || plan.Kinds[ki] != ent.Fault.Kind {
				return fmt.Errorf("fault plan of %s changed since the output was made", m.ID)
			}
			var err error
			y, got, err = e.faultRender(j, c, x, ki, ent.Variant%plan.PerClip, ent.Fault.Kind, st)
			if err != nil {
				return err
			}
		}
		return errFound
	})
	if err != nil && !errors.Is(err, errFound) {
		return ReplayResult{Entry: *ent}, fmt.Errorf("augment: replay: %s: %w", rel, err)
	}
	if y == nil {
		return ReplayResult{Entry: *ent}, fmt.Errorf("augment: replay: %s: the draw was rejected (%s) or clip %d is gone", rel, got.Reason, ent.Clip)
	}
	if got.Draw != ent.Draw {
		return ReplayResult{Entry: *ent}, fmt.Errorf("augment: replay: %s: the recipe has changed since the output was made", rel)
	}
	enc := opt.Encoding
	if enc == 0 {
		enc = wavio.PCM16
	}
	var buf bytes.Buffer
	if err := wavio.Encode(&buf, y, p.SampleRate, 1, enc); err != nil {
		return ReplayResult{}, err
	}
	s := sha256.Sum256(buf.Bytes())
	return ReplayResult{Entry: *ent, SHA256: hex.EncodeToString(s[:])}, nil
}
