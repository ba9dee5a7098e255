package evalstage

import (
	"bytes"
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strconv"

	"thrum/features"
	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/pool"
	"thrum/split"
)

// clip is one row of the features index that the stage may use.
type clip struct {
	path      string // the log-mel .npy, relative to the output root
	audio     string // the audio file, relative to the output root
	use       string
	maskOf    string
	machine   string
	condition string
	group     string
	origin    machine.Origin
	label     machine.Label
	split     machine.Split
	frames    int
	bands     int
	// steps are the step kinds of a variant's ledger line (of the clip a
	// masked copy was made from).
	steps []string
	data  [][]float64 // [frame][band], loaded on demand
	emb   []float64
}

// training reports whether the row belongs in a normal-only training set.
func (c *clip) training() bool { return c.use == features.UseTrainNormal }

// scored reports whether the row is a recorded eval or test clip.
func (c *clip) scored() bool {
	return (c.use == features.UseEval || c.use == features.UseTest) && c.origin == machine.OriginRecorded && c.maskOf == ""
}

// cue reports whether the row is a synthetic fault cue (not a masked copy).
func (c *clip) cue() bool {
	return c.use == features.UseSyntheticAnomaly && c.maskOf == ""
}

var indexColumns = []string{"path", "use", "mask_of", "audio", "machine", "condition", "group", "origin", "label", "split", "frames", "bands"}

// readIndex reads OUT/features/index.csv and returns its rows and bytes.
// Errors name the file and line.
func readIndex(file string) ([]*clip, []byte, error) {
	b, err := os.ReadFile(file)
	if err != nil {
		if errors.Is(err, os.ErrNotExist) {
			return nil, nil, fmt.Errorf("evalstage: %s: no features index (run the features stage first)", file)
		}
		return nil, nil, fmt.Errorf("evalstage: %w", err)
	}
	cs, err := parseIndex(bytes.NewReader(b), file)
	return cs, b, err
}

func parseIndex(r io.Reader, file string) ([]*clip, error) {
	cr := csv.NewReader(r)
	head, err := cr.Read()
	if err != nil {
		return nil, fmt.Errorf("evalstage: %s: header: %w", file, err)
	}
	col := map[string]int{}
	for i, h := range head {
		col[h] = i
	}
	for _, k := range indexColumns {
		if _, ok := col[k]; !ok {
			return nil, fmt.Errorf("evalstage: %s: line 1: no %q column", file, k)
		}
	}
	var out []*clip
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("evalstage: %s: %w", file, err)
		}
		line, _ := cr.FieldPos(0)
		g := func(k string) string { return rec[col[k]] }
		c := &clip{path: g("path"), audio: g("audio"), use: g("use"), maskOf: g("mask_of"), machine: g("machine"),
			condition: g("condition"), group: g("group"), origin: machine.Origin(g("origin")), label: machine.Label(g("label")),
			split: machine.Split(g("split"))}
		for _, n := range []struct {
			key string
			dst *int
		}{{"frames", &c.frames}, {"bands", &c.bands}} {
			v, err := strconv.Atoi(g(n.key))
			if err != nil || v < 1 {
				return nil, fmt.Errorf("evalstage: %s: line %d: column %s: %q is not a positive count", file, line, n.key, g(n.key))
			}
			*n.dst = v
		}
		switch {
		case c.path == "" || c.machine == "" || c.condition == "":
			return nil, fmt.Errorf("evalstage: %s: line %d: empty path, machine or condition", file, line)
		case c.group == "":
			return nil, fmt.Errorf("evalstage: %s: line %d: %s has no group", file, line, c.path)
		}
		if err := checkTrainingRow(c); err != nil {
			return nil, fmt.Errorf("evalstage: %s: line %d: %w", file, line, err)
		}
		out = append(out, c)
	}
	return out, nil
}

// checkTrainingRow refuses a train-normal row that is not a normal clip of
// the train split recorded or augmented: a detector trained on normal data
// only must never see a fault cue or an anomalous recording.
func checkTrainingRow(c *clip) error {
	if !c.training() {
		return nil
	}
	if c.label != machine.LabelNormal || c.split != machine.SplitTrain ||
		(c.origin != machine.OriginRecorded && c.origin != machine.OriginAugmented) {
		return fmt.Errorf("%s is marked %s but is %s %s of split %s: not a normal training clip",
			c.path, c.use, c.origin, c.label, c.split)
	}
	return nil
}

// plan is what the stage takes from OUT/splits/plan.json.
type plan struct {
	raw  []byte // the file's bytes
	seed uint64
	// holdOut marks the hold-out conditions, order lists every condition,
	// both as "machine/condition", in plant order.
	holdOut map[string]bool
	order   []string
}

// readPlan reads OUT/splits/plan.json: the plant seed and the conditions.
func readPlan(out string) (plan, error) {
	file := filepath.Join(out, split.SplitsDir, split.PlanFile)
	raw, err := os.ReadFile(file)
	if err != nil {
		return plan{}, fmt.Errorf("evalstage: %w (run the split stage first)", err)
	}
	p, err := split.ReadPlan(bytes.NewReader(raw))
	if err != nil {
		return plan{}, fmt.Errorf("evalstage: %s: %w", file, err)
	}
	pl := plan{raw: raw, seed: p.Policy.Seed, holdOut: map[string]bool{}}
	for _, c := range p.Policy.Conditions {
		k := c.Machine + "/" + c.Name
		pl.order = append(pl.order, k)
		if c.HoldOut {
			pl.holdOut[k] = true
		}
	}
	return pl, nil
}

// stepKinds maps each augmented output of the ledgers to the sorted,
// distinct kinds of its steps.
func stepKinds(ctx context.Context, out string) (map[string][]string, error) {
	entries, err := ledger.ReadTreeContext(ctx, out)
	if err != nil {
		return nil, err
	}
	kinds := map[string][]string{}
	for _, e := range entries {
		if e.Kind != ledger.KindOutput || e.Origin != machine.OriginAugmented {
			continue
		}
		var ks []string
		for _, s := range e.Steps {
			if !slices.Contains(ks, s.Kind) {
				ks = append(ks, s.Kind)
			}
		}
		slices.Sort(ks)
		kinds[e.Path] = ks
	}
	return kinds, nil
}

// load reads the log-mel arrays of clips on the worker pool, in place.
func load(ctx context.Context, out string, clips []*clip, workers int, prog *pool.Reporter) error {
	return pool.Each(ctx, len(clips), workers, func(ctx context.Context, _, i int) error {
		c := clips[i]
		file := filepath.Join(out, filepath.FromSlash(c.path))
		b, err := os.ReadFile(file)
		if err != nil {
			return fmt.Errorf("evalstage: %w", err)
		}
		data, shape, err := features.ReadNPY(b, file)
		if err != nil {
			return fmt.Errorf("evalstage: %w", err)
		}
		if len(shape) != 2 || shape[0] != c.frames || shape[1] != c.bands {
			return fmt.Errorf("evalstage: %s: shape %v, the features index says (%d, %d)", file, shape, c.frames, c.bands)
		}
		c.data = make([][]float64, c.frames)
		flat := make([]float64, len(data))
		for k, v := range data {
			flat[k] = float64(v)
		}
		for f := range c.data {
			c.data[f] = flat[f*c.bands : (f+1)*c.bands : (f+1)*c.bands]
		}
		prog.Add(1, 0, 0, c.machine, c.path)
		return nil
	})
}
