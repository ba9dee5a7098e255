package split

import (
	"context"
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"math"
	"sort"
	"strings"

	"thrum/machine"
	"thrum/machine/ledger"
)

// Excluded is the split of a file kept out of every list: a derived file
// of an eval/test group, or a training file mixed with a background that is
// not a training background. Lists write it beside machine's splits.
const Excluded machine.Split = "excluded"

// Item is one output file as the split sees it.
type Item struct {
	Path, SHA256, Machine, Condition string
	Origin                           machine.Origin
	Label                            machine.Label
	Group, Source, SourceSHA256      string
	// Speed is the total speed ratio applied (1 for a recorded clip).
	Speed       float64
	Backgrounds []string
	// Clip is the clip index inside Source (for the guard gaps between
	// blocks).
	Clip int
}

// ItemsFromLedger turns the "output" lines of a ledger into items; other
// lines, and the features stage's lines, are skipped. A missing Speed (0) is taken as 1, a missing Group as
// the Source.
func ItemsFromLedger(entries []ledger.Entry) []Item {
	var out []Item
	for _, e := range entries {
		// Features-stage lines name feature arrays (masked copies of a
		// training clip's features), not audio: they follow their input
		// clip's split and are checked against it by the audit.
		if e.Kind != ledger.KindOutput || e.Stage == ledger.Features {
			continue
		}
		it := Item{
			Path: e.Path, SHA256: e.SHA256, Machine: e.Machine, Condition: e.Condition,
			Origin: e.Origin, Label: e.Label, Group: e.Group, Source: e.Source,
			SourceSHA256: e.SourceSHA256, Speed: e.Speed, Clip: e.Clip,
			Backgrounds: append([]string(nil), e.Backgrounds...),
		}
		if it.Speed == 0 {
			it.Speed = 1
		}
		if it.Group == "" {
			it.Group = it.Source
		}
		out = append(out, it)
	}
	return out
}

// Fractions are the shares of groups per split for one machine.
type Fractions struct {
	Train float64 `json:"train"`
	Eval  float64 `json:"eval"`
	Test  float64 `json:"test"`
	// AnomalousEval is the share of real anomalous groups sent to eval; the
	// rest go to test.
	AnomalousEval float64 `json:"anomalous_eval"`
}

// DefaultFractions are used when a plant and a machine set none: the common
// 70/15/15 division (common practice), anomalous groups halved between eval
// and test.
var DefaultFractions = Fractions{Train: 0.7, Eval: 0.15, Test: 0.15, AnomalousEval: 0.5}

// ConditionPolicy is one operating condition of one machine.
type ConditionPolicy struct {
	Machine     string  `json:"machine"`
	Name        string  `json:"name"`
	RPM         float64 `json:"rpm"`
	BandPercent float64 `json:"band_percent"`
	HoldOut     bool    `json:"hold_out"`
}

// Band returns the condition's speed band [lo, hi] in rpm, by the same
// formula as machine.Condition.Band.
func (c ConditionPolicy) Band() (lo, hi float64) {
	return (&machine.Condition{RPM: c.RPM, BandPercent: c.BandPercent}).Band()
}

// Policy is everything assignment depends on. It is written to plan.json so
// the audit can redo the assignment from the output tree alone.
type Policy struct {
	Seed uint64 `json:"seed"`
	// Default fractions; the zero value means DefaultFractions.
	Default Fractions `json:"default"`
	// Machines overrides the fractions per machine id.
	Machines   map[string]Fractions `json:"machines,omitempty"`
	Conditions []ConditionPolicy    `json:"conditions"`
	// Backgrounds lists the plant's background ids (more may be found in
	// the items).
	Backgrounds []string `json:"backgrounds,omitempty"`
	// Method is "shares" or "stable-hash" (see Decide); empty means
	// "stable-hash", the only method of plans written before there was a
	// choice.
	Method string `json:"method,omitempty"`
	// Pins fix the split of named groups.
	Pins []PinPolicy `json:"pins,omitempty"`
}

// PolicyFromPlant builds the policy of a loaded plant.
func PolicyFromPlant(p *machine.Plant) Policy {
	pol := Policy{Seed: p.Seed, Default: Fractions(p.Split), Machines: map[string]Fractions{}, Method: p.SplitMethod}
	if pol.Method == "" {
		pol.Method = machine.SplitShares
	}
	for _, m := range p.Machines {
		if m.Split != nil {
			pol.Machines[m.ID] = Fractions(*m.Split)
		}
		for _, pn := range m.Pins {
			pol.Pins = append(pol.Pins, PinPolicy{Machine: m.ID, Group: pn.Group, Split: pn.Split})
		}
		for _, c := range m.Conditions {
			pol.Conditions = append(pol.Conditions, ConditionPolicy{
				Machine: m.ID, Name: c.Name, RPM: c.RPM, BandPercent: c.BandPercent, HoldOut: c.HoldOut,
			})
		}
	}
	for _, b := range p.Backgrounds {
		pol.Backgrounds = append(pol.Backgrounds, b.ID)
	}
	return pol
}

// FractionsFor returns the checked fractions of machine id.
func (p Policy) FractionsFor(id string) (Fractions, error) {
	f, ok := p.Machines[id]
	if !ok {
		f = p.Default
	}
	if f == (Fractions{}) {
		return DefaultFractions, nil
	}
	for _, v := range []float64{f.Train, f.Eval, f.Test, f.AnomalousEval} {
		if !(v >= 0 && v <= 1) {
			return f, fmt.Errorf("split: machine %q: fractions must be in [0, 1], got %+v", id, f)
		}
	}
	if s := f.Train + f.Eval + f.Test; math.Abs(s-1) > 1e-9 {
		return f, fmt.Errorf("split: machine %q: train+eval+test = %g, want 1", id, s)
	}
	return f, nil
}

func (p Policy) condition(machineID, name string) (ConditionPolicy, bool) {
	for _, c := range p.Conditions {
		if c.Machine == machineID && c.Name == name {
			return c, true
		}
	}
	return ConditionPolicy{}, false
}

// HoldOutBand returns the first hold-out condition of machineID whose band
// contains rpm, among those that do not share the speed of condition cond
// (a hold-out at a training condition's own speed, a load condition say,
// tests something other than speed and keeps no band free; see
// machine.Condition.SharesSpeed).
func (p Policy) HoldOutBand(machineID, cond string, rpm float64) (ConditionPolicy, bool) {
	own, _ := p.condition(machineID, cond)
	oc := machine.Condition{RPM: own.RPM}
	for _, c := range p.Conditions {
		if c.Machine != machineID || !c.HoldOut || c.Name == cond {
			continue
		}
		if oc.SharesSpeed(&machine.Condition{RPM: c.RPM, BandPercent: c.BandPercent}) {
			continue
		}
		if lo, hi := c.Band(); rpm >= lo && rpm <= hi {
			return c, true
		}
	}
	return ConditionPolicy{}, false
}

// Unit returns the stable hash of (seed, kind, machine id, key) mapped to
// [0, 1). It depends on nothing else, so adding groups never moves existing
// ones. The hash is SHA-256 of the byte string
//
//	"thrum/split/v1" 0x00
//	seed as 8 bytes little-endian
//	kind 0x00 machineID 0x00 key 0x00
//
// (the strings as their UTF-8 bytes, each followed by one NUL); its first
// 8 bytes read as a big-endian uint64, shifted right by 11 (the top 53
// bits), divided by 2^53. The byte string is a stability promise: changing
// it moves groups between train, eval and test.
func Unit(seed uint64, kind, machineID, key string) float64 {
	h := sha256.New()
	h.Write([]byte("thrum/split/v1\x00"))
	var b [8]byte
	binary.LittleEndian.PutUint64(b[:], seed)
	h.Write(b[:])
	for _, s := range []string{kind, machineID, key} {
		h.Write([]byte(s))
		h.Write([]byte{0})
	}
	sum := h.Sum(nil)
	return float64(binary.BigEndian.Uint64(sum[:8])>>11) / (1 << 53)
}

// pick maps u against the cumulative fractions.
func pick(u float64, f Fractions) machine.Split {
	switch {
	case u < f.Train:
		return machine.SplitTrain
	case u < f.Train+f.Eval:
		return machine.SplitEval
	default:
		return machine.SplitTest
	}
}

// Row is one item with its split. Reason says which rule decided it.
type Row struct {
	Item
	Split  machine.Split
	Reason string
}

// Reasons.
const (
	ReasonHash          = "hash"            // normal group, by its own hash (stable-hash)
	ReasonShares        = "shares"          // normal group, dealt by shares over the hash order
	ReasonAnomalous     = "anomalous"       // real anomalous group, eval/test
	ReasonHoldOut       = "hold-out"        // group of a hold-out condition
	ReasonPinned        = "pinned"          // group pinned in plant.toml
	ReasonDerivedOfEval = "derived-of-eval" // derived file of an eval/test group: dropped
	ReasonBackground    = "background-not-train"
	ReasonGuardGap      = "guard-gap" // last clip of a block whose neighbour block has another split
)

// AssignBackgrounds partitions background ids with the default fractions,
// by the same stable hash (kind "background", machine id empty).
func AssignBackgrounds(ids []string, p Policy) map[string]machine.Split {
	f, err := p.FractionsFor("")
	if err != nil {
		f = DefaultFractions
	}
	out := make(map[string]machine.Split, len(ids))
	for _, id := range ids {
		out[id] = pick(Unit(p.Seed, "background", "", id), f)
	}
	return out
}

type groupKey struct{ machine, group string }

// Assign gives every item its split. The rules (see doc.go):
//   - the unit is the group (machine id, Group): all its files share a split;
//   - a group's split is pick(Unit(seed, "group", machine, group)) against
//     the machine's cumulative train/eval/test fractions;
//   - a group with a real anomalous recorded clip goes to eval (Unit <
//     AnomalousEval) or test, never train;
//   - a group with a clip in a hold-out condition goes to test;
//   - only recorded files go to eval/test; the derived files of an eval/test
//     group are excluded (never moved to train, which would leak it);
//   - a training file mixed with a background that is not a train
//     background is excluded.
//
// It returns an error for malformed items (duplicate path, unknown origin,
// label or condition, empty group), for a training file whose speed (the
// condition's rpm × Speed) lies in a hold-out band of its machine, and when
// the normal groups of a machine and condition are fewer than the splits
// with a non-zero fraction. Rows are sorted by machine, then path. When ctx
// is done it stops and returns ctx's error.
func Assign(ctx context.Context, items []Item, p Policy) ([]Row, error) {
	seen := map[string]bool{}
	groups := map[groupKey][]int{}
	for i, it := range items {
		if i%1024 == 0 {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
		}
		if it.Path == "" {
			return nil, fmt.Errorf("split: item %d: empty path", i)
		}
		if seen[it.Path] {
			return nil, fmt.Errorf("split: %s: listed twice", it.Path)
		}
		seen[it.Path] = true
		switch it.Origin {
		case machine.OriginRecorded, machine.OriginAugmented, machine.OriginSyntheticFault:
		default:
			return nil, fmt.Errorf("split: %s: unknown origin %q", it.Path, it.Origin)
		}
		switch it.Label {
		case machine.LabelNormal, machine.LabelAnomalous:
		default:
			return nil, fmt.Errorf("split: %s: unknown label %q", it.Path, it.Label)
		}
		if it.Group == "" {
			return nil, fmt.Errorf("split: %s: empty group", it.Path)
		}
		if _, ok := p.condition(it.Machine, it.Condition); !ok {
			return nil, fmt.Errorf("split: %s: machine %q has no condition %q in the policy", it.Path, it.Machine, it.Condition)
		}
		k := groupKey{it.Machine, it.Group}
		groups[k] = append(groups[k], i)
	}
	bg := AssignBackgrounds(p.Backgrounds, p)
	bgSplit := func(id string) machine.Split {
		if s, ok := bg[id]; ok {
			return s
		}
		s := AssignBackgrounds([]string{id}, p)[id]
		bg[id] = s
		return s
	}

	infos := make([]GroupInfo, 0, len(groups))
	flags := map[groupKey]GroupInfo{}
	var blocks []blockClip
	for k, idx := range groups {
		g := GroupInfo{Machine: k.machine, Group: k.group}
		for _, i := range idx {
			it := items[i]
			g.Condition = it.Condition
			if it.Origin == machine.OriginRecorded && it.Label == machine.LabelAnomalous {
				g.Anomalous = true
			}
			if c, _ := p.condition(it.Machine, it.Condition); c.HoldOut {
				g.HoldOut = true
			}
			if it.Origin == machine.OriginRecorded {
				blocks = append(blocks, blockClip{it.Machine, it.Group, it.Clip})
			}
		}
		infos = append(infos, g)
		flags[k] = g
	}
	dec, err := p.Decide(infos)
	if err != nil {
		return nil, err
	}
	guard := guardClips(blocks, dec)

	// Normal groups per machine and condition, for the too-few check.
	type mc struct{ machine, cond string }
	normal := map[mc]map[string]bool{}
	rows := make([]Row, len(items))
	for k, idx := range groups {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		d := dec[k]
		split, reason := d.Split, d.Reason
		holdOut, anomalous := flags[k].HoldOut, flags[k].Anomalous
		for _, i := range idx {
			it := items[i]
			r := Row{Item: it, Split: split, Reason: reason}
			if split != machine.SplitTrain && it.Origin != machine.OriginRecorded {
				r.Split, r.Reason = Excluded, ReasonDerivedOfEval
			}
			if guard[clipKey{it.Machine, it.Group, it.Clip}] {
				r.Split, r.Reason = Excluded, ReasonGuardGap
			}
			if r.Split == machine.SplitTrain {
				for _, b := range it.Backgrounds {
					if bgSplit(b) != machine.SplitTrain {
						r.Split, r.Reason = Excluded, ReasonBackground
					}
				}
				c, _ := p.condition(it.Machine, it.Condition)
				if h, ok := p.HoldOutBand(it.Machine, it.Condition, c.RPM*it.Speed); ok {
					return nil, fmt.Errorf("split: %s: training file at %.6g rpm (condition %q %g rpm × speed %g) lies in the band of hold-out condition %q (%g rpm ± %g %%)",
						it.Path, c.RPM*it.Speed, c.Name, c.RPM, it.Speed, h.Name, h.RPM, h.BandPercent)
				}
			}
			if !holdOut && !anomalous && it.Origin == machine.OriginRecorded {
				key := mc{it.Machine, it.Condition}
				if normal[key] == nil {
					normal[key] = map[string]bool{}
				}
				normal[key][it.Group] = true
			}
			rows[i] = r
		}
	}
	// Too few groups: a deterministic order for the error message.
	keys := make([]mc, 0, len(normal))
	for k := range normal {
		keys = append(keys, k)
	}
	sort.Slice(keys, func(i, j int) bool {
		if keys[i].machine != keys[j].machine {
			return keys[i].machine < keys[j].machine
		}
		return keys[i].cond < keys[j].cond
	})
	for _, k := range keys {
		f, _ := p.FractionsFor(k.machine)
		var need []machine.Split
		for _, s := range []struct {
			name machine.Split
			v    float64
		}{{machine.SplitTrain, f.Train}, {machine.SplitEval, f.Eval}, {machine.SplitTest, f.Test}} {
			if s.v > 0 {
				need = append(need, s.name)
			}
		}
		if n := len(normal[k]); n < len(need) {
			return nil, &TooFewGroupsError{Machine: k.machine, Condition: k.cond, Groups: n, Splits: need}
		}
	}
	sortRows(rows)
	return rows, nil
}

// TooFewGroupsError says a machine and condition has fewer normal groups
// than splits to fill.
type TooFewGroupsError struct {
	Machine, Condition string
	Groups             int
	Splits             []machine.Split
}

func (e *TooFewGroupsError) Error() string {
	return fmt.Sprintf("split: machine %q condition %q: %d normal recording group(s) cannot fill the %d splits with a non-zero fraction (%s); record more sessions or set that split's fraction to 0",
		e.Machine, e.Condition, e.Groups, len(e.Splits), joinSplits(e.Splits))
}

func joinSplits(ss []machine.Split) string {
	var b strings.Builder
	for i, s := range ss {
		if i > 0 {
			b.WriteString(", ")
		}
		b.WriteString(string(s))
	}
	return b.String()
}

func sortRows(rows []Row) {
	sort.Slice(rows, func(i, j int) bool {
		if rows[i].Machine != rows[j].Machine {
			return rows[i].Machine < rows[j].Machine
		}
		return rows[i].Path < rows[j].Path
	})
}

// EmptySplits lists, for each machine and condition that is not held out,
// the splits with a non-zero fraction that received no normal recorded
// group (with method "stable-hash", possible by chance with few groups;
// with "shares" only when pins take a split's place), then, per machine,
// the evaluation splits left without a real anomalous recording (no AUC can
// be computed on them), and pins that name no group. The messages are
// meant as warnings.
func EmptySplits(rows []Row, p Policy) []string {
	type mc struct{ m, c string }
	got := map[mc]map[machine.Split]bool{}
	anom := map[string]map[machine.Split]bool{}
	groups := map[groupKey]bool{}
	for _, r := range rows {
		groups[groupKey{r.Machine, r.Group}] = true
		if r.Origin != machine.OriginRecorded {
			continue
		}
		if r.Label == machine.LabelAnomalous {
			if anom[r.Machine] == nil {
				anom[r.Machine] = map[machine.Split]bool{}
			}
			anom[r.Machine][r.Split] = true
			continue
		}
		if r.Reason != ReasonHash && r.Reason != ReasonShares && r.Reason != ReasonPinned {
			continue
		}
		k := mc{r.Machine, r.Condition}
		if got[k] == nil {
			got[k] = map[machine.Split]bool{}
		}
		got[k][r.Split] = true
	}
	var out []string
	var machines []string
	seen := map[string]bool{}
	for _, c := range p.Conditions {
		if !seen[c.Machine] {
			seen[c.Machine] = true
			machines = append(machines, c.Machine)
		}
		if c.HoldOut {
			continue
		}
		f, err := p.FractionsFor(c.Machine)
		if err != nil {
			continue
		}
		have := got[mc{c.Machine, c.Name}]
		for _, s := range []struct {
			name machine.Split
			v    float64
		}{{machine.SplitTrain, f.Train}, {machine.SplitEval, f.Eval}, {machine.SplitTest, f.Test}} {
			if s.v > 0 && !have[s.name] {
				why := "the stable hash put every group elsewhere: add recordings or sessions"
				if p.byShares() {
					why = "pins or too few groups leave it none: add recordings or sessions, or change the pins"
				}
				out = append(out, fmt.Sprintf("machine %q condition %q: no normal %s group; %s", c.Machine, c.Name, s.name, why))
			}
		}
	}
	for _, id := range machines {
		a := anom[id]
		switch {
		case len(a) == 0:
			out = append(out, fmt.Sprintf("machine %q: no real anomalous recording: eval and test hold normal clips only, so no AUC can be computed on real faults", id))
		case !a[machine.SplitEval] || !a[machine.SplitTest]:
			miss := machine.SplitTest
			if !a[machine.SplitEval] {
				miss = machine.SplitEval
			}
			out = append(out, fmt.Sprintf("machine %q: no real anomalous recording in %s, so no AUC can be computed on it: add a second anomalous recording (or session)", id, miss))
		}
	}
	for _, pn := range p.Pins {
		if !groups[groupKey{pn.Machine, pn.Group}] {
			out = append(out, fmt.Sprintf("machine %q: pin of group %q to %s names no group of the outputs", pn.Machine, pn.Group, pn.Split))
		}
	}
	return out
}
