package evalstage

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"maps"
	"math"
	"os"
	"path"
	"path/filepath"
	"slices"
	"sort"
	"strings"

	"thrum/features"
	"thrum/features/evaluate"
	"thrum/machine"
	"thrum/machine/pool"
)

// Folder and file names of the stage under the output root.
const (
	Dir         = "evaluate"
	SummaryFile = "summary.json"
	// rocSuffix ends the name of a machine's ROC picture.
	rocSuffix = "-roc.png"
)

// Fixed settings of the stage.
const (
	// DefaultRounds is the number of bootstrap resamples unless given.
	DefaultRounds = 1000
	// Level is the coverage of every interval.
	Level = 0.95
	// MaxFPR bounds the partial AUC.
	MaxFPR = 0.1
	// OutlierThreshold: a variant scoring above it counts as an outlier
	// (three times the typical nearest-neighbour distance between
	// recordings).
	OutlierThreshold = 3.0
	// WorstListed is the number of worst variants listed per machine.
	WorstListed = 5
	// GaussianContext is the number of consecutive frames the Gaussian
	// detector stacks; KNNNeighbours the k of the kNN detector.
	GaussianContext = 3
	KNNNeighbours   = 1
)

// Names of the training sets.
const (
	SetRecorded = "recorded"
	SetExpanded = "expanded"
	SetMasked   = "expanded+masked"
	// SetWithout prefixes an ablation set's name; the step kind follows.
	SetWithout = "expanded-without-"
)

// Options configure Run. Out is required.
type Options struct {
	Out string
	// Seed seeds the bootstraps; 0 takes the plant seed from plan.json.
	Seed uint64
	// Rounds is the number of bootstrap resamples (0: DefaultRounds).
	Rounds int
	// PerCondition trains one detector per machine and condition.
	PerCondition bool
	// Masked adds the training set with the masked copies.
	Masked bool
	// Ablate adds one training set per step kind left out.
	Ablate  bool
	Workers int // pool.Size(Workers) goroutines
	// Progress, when set, is called after each clip loaded, from one
	// goroutine at a time.
	Progress func(pool.Event)
}

// detectorSpec builds a fresh detector.
type detectorSpec struct {
	name   string
	params map[string]int
	make   func() evaluate.Detector
}

func detectors() []detectorSpec {
	return []detectorSpec{
		{"gaussian", map[string]int{"context": GaussianContext}, func() evaluate.Detector { return evaluate.NewGaussian(GaussianContext) }},
		{"knn", map[string]int{"k": KNNNeighbours}, func() evaluate.Detector { return evaluate.NewKNN(KNNNeighbours) }},
	}
}

// trainSet is one training set of a machine.
type trainSet struct {
	info  TrainingSet
	clips []*clip
}

// Run evaluates every machine of the output root's features index and
// writes OUT/evaluate/summary.json and the ROC pictures. It reads
// OUT/features/index.csv and the .npy files it names, OUT/splits/plan.json
// and the ledgers; the caller holds the output root's lock.
func Run(ctx context.Context, opt Options) (*Summary, error) {
	if opt.Out == "" {
		return nil, errors.New("evalstage: no output folder")
	}
	if opt.Rounds == 0 {
		opt.Rounds = DefaultRounds
	}
	if opt.Rounds < 1 {
		return nil, fmt.Errorf("evalstage: %d bootstrap rounds", opt.Rounds)
	}
	dir := filepath.Join(opt.Out, Dir)
	if _, err := machine.RemoveTemps(dir); err != nil {
		return nil, fmt.Errorf("evalstage: %w", err)
	}
	clips, rawIndex, err := readIndex(filepath.Join(opt.Out, features.Dir, features.IndexFile))
	if err != nil {
		return nil, err
	}
	pl, err := readPlan(opt.Out)
	if err != nil {
		return nil, err
	}
	kinds, err := stepKinds(ctx, opt.Out)
	if err != nil {
		return nil, err
	}
	for _, c := range clips {
		if c.origin == machine.OriginAugmented {
			c.steps = kinds[c.audio]
		}
	}
	seed := opt.Seed
	if seed == 0 {
		seed = pl.seed
	}
	sum := &Summary{Version: SummaryVersion, Seed: seed, Rounds: opt.Rounds, Level: Level, MaxFPR: MaxFPR,
		Scored: []string{string(machine.SplitEval), string(machine.SplitTest)}, PerCondition: opt.PerCondition,
		Masked: opt.Masked, Ablate: opt.Ablate}
	dets := detectors()
	for _, d := range dets {
		sum.Detectors = append(sum.Detectors, DetectorInfo{Name: d.name, Params: d.params})
	}
	sum.Inputs = inputsHash(sum, rawIndex, pl.raw, kinds)
	if old := previous(opt.Out, sum.Inputs); old != nil {
		return old, nil
	}
	byMachine := map[string][]*clip{}
	for _, c := range clips {
		byMachine[c.machine] = append(byMachine[c.machine], c)
	}
	ids := slices.Sorted(maps.Keys(byMachine))
	total := 0
	need := map[string][]*clip{}
	for _, id := range ids {
		need[id] = needed(byMachine[id], opt.Masked)
		total += len(need[id])
	}
	prog := pool.NewReporter(opt.Progress, "evaluate", pool.UnitClips, int64(total))
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("evalstage: %w", err)
	}
	written := map[string]bool{}
	for _, id := range ids {
		if err := load(ctx, opt.Out, need[id], opt.Workers, prog); err != nil {
			return nil, err
		}
		ms, err := evalMachine(ctx, id, byMachine[id], pl, seed, opt, dets)
		if err != nil {
			return nil, err
		}
		if ms.ROC != "" {
			written[path.Base(ms.ROC)] = true
		}
		sum.Machines = append(sum.Machines, *ms)
		for _, c := range need[id] {
			c.data, c.emb = nil, nil // memory stays one machine deep
		}
	}
	b, err := sum.JSON()
	if err != nil {
		return nil, fmt.Errorf("evalstage: summary: %w", err)
	}
	if err := writeIfChanged(filepath.Join(dir, SummaryFile), b); err != nil {
		return nil, err
	}
	if err := sweep(opt.Out, written); err != nil {
		return nil, err
	}
	return sum, nil
}

// inputsHash is the SHA-256 of everything a summary depends on: the tool
// version, the options and settings (the summary before any result), the
// features index and plan.json, and the step kinds of the variants.
func inputsHash(s *Summary, index, plan []byte, kinds map[string][]string) string {
	h := sha256.New()
	head, _ := json.Marshal(s)
	fmt.Fprintf(h, "%s\x00%s\x00", machine.ToolVersion, head)
	for _, b := range [][]byte{index, plan} {
		fmt.Fprintf(h, "%d\x00", len(b))
		h.Write(b)
	}
	for _, p := range slices.Sorted(maps.Keys(kinds)) {
		fmt.Fprintf(h, "%s\x00%s\x00", p, strings.Join(kinds[p], ","))
	}
	return hex.EncodeToString(h.Sum(nil))
}

// previous returns the summary already in OUT when it was made from the
// same inputs and its pictures are in place, else nil: a rerun then
// computes nothing and writes nothing.
func previous(out, inputs string) *Summary {
	b, err := os.ReadFile(filepath.Join(out, Dir, SummaryFile))
	if err != nil {
		return nil
	}
	var s Summary
	if json.Unmarshal(b, &s) != nil || s.Version != SummaryVersion || s.Inputs != inputs {
		return nil
	}
	for _, m := range s.Machines {
		if m.ROC == "" {
			continue
		}
		if _, err := os.Stat(filepath.Join(out, filepath.FromSlash(m.ROC))); err != nil {
			return nil
		}
	}
	if again, err := s.JSON(); err != nil || !bytes.Equal(again, b) {
		return nil
	}
	return &s
}

// needed lists the clips of one machine whose arrays the stage reads.
func needed(cs []*clip, masked bool) []*clip {
	anomalous := map[string]bool{}
	for _, c := range cs {
		if c.scored() && c.label == machine.LabelAnomalous {
			anomalous[c.condition] = true
		}
	}
	var out []*clip
	for _, c := range cs {
		switch {
		case c.training() && (c.maskOf == "" || masked):
			out = append(out, c)
		case c.scored():
			out = append(out, c)
		case c.cue() && !anomalous[c.condition]:
			out = append(out, c)
		}
	}
	return out
}

// evalMachine fits and scores one machine's detectors and measures its
// variants' credibility.
func evalMachine(ctx context.Context, id string, cs []*clip, pl plan, seed uint64, opt Options, dets []detectorSpec) (*MachineSummary, error) {
	ms := &MachineSummary{Machine: id, Results: []Result{}, Proxy: []Result{}, Shift: []Result{}, Notes: []string{}}
	conds := conditionOrder(id, cs, pl)
	holdOut := func(c string) bool { return pl.holdOut[id+"/"+c] }
	anomalous := map[string]bool{}
	for _, c := range cs {
		if c.scored() && c.label == machine.LabelAnomalous {
			anomalous[c.condition] = true
		}
	}
	// targets: every clip a detector scores
	var targets []*clip
	for _, c := range cs {
		if c.scored() || (c.cue() && !anomalous[c.condition]) {
			targets = append(targets, c)
		}
	}
	sets := trainingSets(cs, opt)
	for _, s := range sets {
		ms.Training = append(ms.Training, s.info)
	}
	// jobs: (set, detector, training condition or "" for machine-wide)
	type job struct {
		set, det int
		cond     string
	}
	var jobs []job
	scopes := []string{""}
	if opt.PerCondition {
		scopes = nil
		for _, c := range conds {
			if !holdOut(c) {
				scopes = append(scopes, c)
			}
		}
		for _, c := range conds {
			if holdOut(c) {
				scopes = append(scopes, "")
				break
			}
		}
	}
	for si := range sets {
		for di := range dets {
			for _, sc := range scopes {
				jobs = append(jobs, job{si, di, sc})
			}
		}
	}
	scores := make([][][]float64, len(sets))
	for si := range scores {
		scores[si] = make([][]float64, len(dets))
		for di := range dets {
			scores[si][di] = make([]float64, len(targets))
			for k := range scores[si][di] {
				scores[si][di][k] = math.NaN()
			}
		}
	}
	// a detector that cannot be fitted (training clips that do not vary)
	// leaves its scores without value and says why in the notes
	fitErrs := make([]error, len(jobs))
	err := pool.Each(ctx, len(jobs), opt.Workers, func(ctx context.Context, _, i int) error {
		j := jobs[i]
		var train [][][]float64
		for _, c := range sets[j.set].clips {
			if j.cond == "" || c.condition == j.cond {
				train = append(train, c.data)
			}
		}
		if len(train) == 0 {
			return nil
		}
		d := dets[j.det].make()
		if err := d.Fit(train); err != nil {
			where := ""
			if j.cond != "" {
				where = " of condition " + j.cond
			}
			fitErrs[i] = fmt.Errorf("%s detector on training set %s%s: %w", dets[j.det].name, sets[j.set].info.Name, where, err)
			return nil
		}
		for k, t := range targets {
			if err := ctx.Err(); err != nil {
				return err
			}
			mine := t.condition == j.cond
			if j.cond == "" {
				mine = !opt.PerCondition || holdOut(t.condition)
			}
			if mine {
				scores[j.set][j.det][k] = d.Score(t.data)
			}
		}
		return nil
	})
	if err != nil {
		return nil, err
	}
	for _, e := range fitErrs {
		if e != nil {
			ms.Notes = append(ms.Notes, e.Error())
		}
	}
	// scopes of the results: the machine's training conditions pooled,
	// then each condition
	type scope struct {
		name, cond string
		holdOut    bool
		in         func(c *clip) bool
	}
	scs := []scope{{name: "machine", in: func(c *clip) bool { return !holdOut(c.condition) }}}
	for _, c := range conds {
		c := c
		scs = append(scs, scope{name: "condition", cond: c, holdOut: holdOut(c), in: func(x *clip) bool { return x.condition == c }})
	}
	rocs := map[string][]rocSource{}
	for _, sc := range scs {
		var real, proxy []int
		var nNorm, nAnom, nCue int
		for k, t := range targets {
			if !sc.in(t) {
				continue
			}
			switch {
			case t.scored() && t.label == machine.LabelAnomalous:
				nAnom++
				real = append(real, k)
			case t.scored():
				nNorm++
				real = append(real, k)
				proxy = append(proxy, k)
			case t.cue():
				nCue++
				proxy = append(proxy, k)
			}
		}
		// the row's kind: real anomalies; else the condition's fault cues
		// (proxy); else, for a hold-out condition, its normal clips
		// against the trained conditions' normal clips (domain shift)
		kind, idx := "real", real
		pos := func(k int) bool { return targets[k].label == machine.LabelAnomalous || targets[k].cue() }
		switch {
		case nNorm > 0 && nAnom > 0:
		case nNorm > 0 && nAnom == 0 && nCue > 0:
			kind, idx = "proxy", proxy
		case sc.holdOut && nNorm > 0 && nAnom == 0:
			kind, idx = "shift", nil
			for k, t := range targets {
				if t.scored() && t.label == machine.LabelNormal && (sc.in(t) || !holdOut(t.condition)) {
					idx = append(idx, k)
				}
			}
			pos = func(k int) bool { return sc.in(targets[k]) }
			if len(idx) == nNorm {
				continue // no trained-condition normals to compare with
			}
		default:
			continue
		}
		isProxy := kind == "proxy"
		for di, d := range dets {
			r := Result{Scope: sc.name, Condition: sc.cond, HoldOut: sc.holdOut, Detector: d.name, Proxy: isProxy}
			lab := func(k int) bool { return pos(k) }
			ng, ag := map[string]bool{}, map[string]bool{}
			for _, k := range idx {
				if lab(k) {
					r.Anomalous++
					ag[targets[k].group] = true
				} else {
					r.Normal++
					ng[targets[k].group] = true
				}
			}
			r.NormalGroups, r.AnomalousGroups = len(ng), len(ag)
			cellSeed := func(metric string) uint64 {
				return seedOf(seed, id, sc.name, sc.cond, d.name, metric, kind)
			}
			scored := func(si int) []evaluate.Scored {
				out := make([]evaluate.Scored, len(idx))
				for n, k := range idx {
					out[n] = evaluate.Scored{Score: scores[si][di][k], Anomalous: lab(k), Group: targets[k].group}
				}
				return out
			}
			base := scored(0)
			for si, s := range sets {
				ss := scored(si)
				if !allFinite(ss) {
					r.Sets = append(r.Sets, SetScore{Set: s.info.Name, AUC: NaN, AUCCI: [2]Num{NaN, NaN}, PAUC: NaN, PAUCCI: [2]Num{NaN, NaN}})
					continue
				}
				st := SetScore{Set: s.info.Name, AUC: Num(evaluate.AUC(ss)), PAUC: Num(pauc(ss))}
				st.AUCCI = ci(evaluate.BootstrapCI(ss, evaluate.AUC, opt.Rounds, Level, cellSeed("auc")))
				st.PAUCCI = ci(evaluate.BootstrapCI(ss, pauc, opt.Rounds, Level, cellSeed("pauc")))
				if si > 0 && allFinite(base) {
					st.VsRecorded = &Diff{
						AUC: st.AUC - Num(evaluate.AUC(base)), AUCCI: ci(evaluate.BootstrapDiffCI(base, ss, evaluate.AUC, opt.Rounds, Level, cellSeed("auc"))),
						PAUC: st.PAUC - Num(pauc(base)), PAUCCI: ci(evaluate.BootstrapDiffCI(base, ss, pauc, opt.Rounds, Level, cellSeed("pauc"))),
					}
				}
				r.Sets = append(r.Sets, st)
				// the ROC picture: recorded and expanded, on the machine's
				// training conditions and on each hold-out condition
				if kind == "real" && si < 2 && (r.Scope == "machine" || r.HoldOut) {
					label := s.info.Name + " · all training conditions"
					if r.HoldOut {
						label = s.info.Name + " · " + r.Condition + " (hold-out)"
					}
					f, t := evaluate.ROC(ss)
					rocs[d.name] = append(rocs[d.name], rocSource{label: label, fpr: f, tpr: t, style: si, dashed: r.HoldOut})
				}
			}
			switch kind {
			case "proxy":
				ms.Proxy = append(ms.Proxy, r)
			case "shift":
				ms.Shift = append(ms.Shift, r)
			default:
				ms.Results = append(ms.Results, r)
			}
		}
	}
	if len(rocs) > 0 {
		var panels []features.ROCPanel
		for _, d := range dets {
			if len(rocs[d.name]) == 0 {
				continue
			}
			p := features.ROCPanel{Title: fmt.Sprintf("%s · %s detector\nrecorded eval and test clips", id, d.name), MaxFPR: MaxFPR}
			for _, s := range rocs[d.name] {
				p.Curves = append(p.Curves, features.ROCCurve{Label: s.label, FPR: s.fpr, TPR: s.tpr, Style: s.style, Dashed: s.dashed})
			}
			panels = append(panels, p)
		}
		name := id + rocSuffix
		if err := features.ROCPNG(filepath.Join(opt.Out, Dir, name), panels); err != nil {
			return nil, err
		}
		ms.ROC = path.Join(Dir, name)
	}
	cred, err := credibility(ctx, cs, conds, holdOut, opt.Workers)
	if err != nil {
		return nil, fmt.Errorf("evalstage: machine %s: %w", id, err)
	}
	ms.Credibility = cred
	return ms, nil
}

type rocSource struct {
	label    string
	fpr, tpr []float64
	style    int
	dashed   bool
}

func pauc(s []evaluate.Scored) float64 { return evaluate.PartialAUC(s, MaxFPR) }

func ci(iv evaluate.Interval) [2]Num { return [2]Num{Num(iv.Lo), Num(iv.Hi)} }

func allFinite(s []evaluate.Scored) bool {
	for _, x := range s {
		if math.IsNaN(x.Score) || math.IsInf(x.Score, 0) {
			return false
		}
	}
	return len(s) > 0
}

// conditionOrder lists a machine's conditions in plant order, then any
// other condition of the index in lexical order.
func conditionOrder(id string, cs []*clip, pl plan) []string {
	seen := map[string]bool{}
	for _, c := range cs {
		seen[c.condition] = true
	}
	var out []string
	for _, k := range pl.order {
		m, c, _ := strings.Cut(k, "/")
		if m == id && seen[c] {
			out = append(out, c)
			delete(seen, c)
		}
	}
	rest := make([]string, 0, len(seen))
	for c := range seen {
		rest = append(rest, c)
	}
	sort.Strings(rest)
	return append(out, rest...)
}

// trainingSets builds a machine's training sets from its train-normal
// rows, in index order.
func trainingSets(cs []*clip, opt Options) []trainSet {
	var rec, exp, masked []*clip
	kinds := map[string]bool{}
	for _, c := range cs {
		if !c.training() {
			continue
		}
		if c.maskOf != "" {
			masked = append(masked, c)
			continue
		}
		exp = append(exp, c)
		if c.origin == machine.OriginRecorded {
			rec = append(rec, c)
		}
		for _, k := range c.steps {
			kinds[k] = true
		}
	}
	mk := func(name string, clips []*clip) trainSet {
		t := trainSet{info: TrainingSet{Name: name, Clips: len(clips), Origins: map[string]int{}}, clips: clips}
		for _, c := range clips {
			o := string(c.origin)
			if c.maskOf != "" {
				o = "masked"
			}
			t.info.Origins[o]++
		}
		return t
	}
	sets := []trainSet{mk(SetRecorded, rec), mk(SetExpanded, exp)}
	if opt.Masked {
		sets = append(sets, mk(SetMasked, append(slices.Clone(exp), masked...)))
	}
	if opt.Ablate {
		for _, k := range slices.Sorted(maps.Keys(kinds)) {
			var keep []*clip
			for _, c := range exp {
				if !slices.Contains(c.steps, k) {
					keep = append(keep, c)
				}
			}
			t := mk(SetWithout+k, keep)
			t.info.LeftOut, t.info.Dropped = k, len(exp)-len(keep)
			sets = append(sets, t)
		}
	}
	return sets
}

// seedOf derives a bootstrap seed: the first 8 bytes (little-endian) of
// the SHA-256 of the base seed and the parts, each ended by a zero byte.
func seedOf(base uint64, parts ...string) uint64 {
	h := sha256.New()
	var b [8]byte
	binary.LittleEndian.PutUint64(b[:], base)
	h.Write(b[:])
	for _, p := range parts {
		h.Write([]byte(p))
		h.Write([]byte{0})
	}
	return binary.LittleEndian.Uint64(h.Sum(nil))
}

// writeIfChanged writes b to file atomically unless it already holds b.
func writeIfChanged(file string, b []byte) error {
	if old, err := os.ReadFile(file); err == nil && string(old) == string(b) {
		return nil
	}
	if err := machine.WriteFileAtomic(file, b); err != nil {
		return fmt.Errorf("evalstage: %w", err)
	}
	return nil
}

// sweep moves the ROC pictures of OUT/evaluate that this run did not write
// to OUT/.stale.
func sweep(out string, written map[string]bool) error {
	ents, err := os.ReadDir(filepath.Join(out, Dir))
	if err != nil {
		return fmt.Errorf("evalstage: %w", err)
	}
	for _, e := range ents {
		n := e.Name()
		if e.IsDir() || !strings.HasSuffix(n, rocSuffix) || written[n] {
			continue
		}
		if _, err := machine.MoveStale(out, path.Join(Dir, n)); err != nil {
			return err
		}
	}
	return nil
}
