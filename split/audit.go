package split

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"maps"
	"os"
	"path/filepath"
	"slices"
	"sort"
	"strings"

	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/wavio"
	"thrum/split/neardup"
)

// Leakage types, named after the taxonomy of Kapoor & Narayanan (2023),
// "Leakage and the reproducibility crisis in machine-learning-based
// science", Patterns 4(9), 100804 (the L-numbers are from memory).
const (
	LeakNoCleanSplit   = "no clean train/test split (L1.1)"
	LeakPreprocessing  = "pre-processing on train and test data together (L1.2)"
	LeakDuplicates     = "duplicates across train and test (L1.4)"
	LeakNonIndependent = "non-independence between train and test samples (L3.2)"
	LeakSamplingBias   = "test set not drawn from the distribution of interest (L3.3)"
)

// Audit rules.
const (
	RuleListed        = "listed-file-exists-and-matches"
	RuleReDerived     = "lists-match-re-derived-assignment"
	RuleRecordedEval  = "eval-test-file-is-a-recorded-clip"
	RuleOriginTrain   = "derived-files-training-only"
	RuleGroupOneSplit = "group-in-one-split"
	RuleSourceOne     = "source-recording-in-one-split"
	RuleAnomalous     = "real-anomalies-not-in-training"
	RuleHoldOut       = "hold-out-condition-intact"
	RuleHoldOutBand   = "no-training-speed-in-hold-out-band"
	RuleStats         = "statistics-fitted-on-training-only"
	RuleBackgrounds   = "backgrounds-partitioned"
	RuleExactDup      = "no-identical-file-across-splits"
	RuleNearDup       = "no-near-duplicate-across-splits"
)

// ruleLeak maps each rule to the leakage type it guards against.
var ruleLeak = map[string]string{
	RuleListed:        LeakNoCleanSplit,
	RuleReDerived:     LeakNoCleanSplit,
	RuleRecordedEval:  LeakSamplingBias,
	RuleOriginTrain:   LeakSamplingBias,
	RuleGroupOneSplit: LeakNonIndependent,
	RuleSourceOne:     LeakNonIndependent,
	RuleAnomalous:     LeakNoCleanSplit,
	RuleHoldOut:       LeakNonIndependent,
	RuleHoldOutBand:   LeakNonIndependent,
	RuleStats:         LeakPreprocessing,
	RuleBackgrounds:   LeakNonIndependent,
	RuleExactDup:      LeakDuplicates,
	RuleNearDup:       LeakDuplicates,
}

// Violation is one broken rule.
type Violation struct {
	Rule    string   `json:"rule"`
	Leakage string   `json:"leakage"`
	Files   []string `json:"files"`
	Detail  string   `json:"detail"`
}

// String is the report line: rule, leakage type, files, detail.
func (v Violation) String() string {
	return fmt.Sprintf("%s [%s]: %s: %s", v.Rule, v.Leakage, strings.Join(v.Files, ", "), v.Detail)
}

// Report is the audit's result.
type Report struct {
	Violations []Violation `json:"violations"`
	// Checked counts the files (or groups, stats files) each rule looked at.
	Checked map[string]int `json:"checked"`
	// Covered lists the leakage types the rules that ran guard against.
	Covered []string `json:"covered"`
	// NearDuplicate search figures.
	Queries int `json:"queries,omitempty"`
	Indexed int `json:"indexed,omitempty"`
	// Groups counts the violations by rule and machine pair, in the order
	// of Grouped (the violations themselves are in Violations).
	Groups []GroupCount `json:"groups,omitempty"`
}

// GroupCount is the size of one group of Grouped.
type GroupCount struct {
	Rule     string `json:"rule"`
	Leakage  string `json:"leakage"`
	Machines string `json:"machines"`
	Count    int    `json:"count"`
}

// OK reports whether no rule was broken.
func (r *Report) OK() bool { return len(r.Violations) == 0 }

// TextGroupLines is how many violations of a group WriteText prints; the
// rest of the group is summarised in one line.
const TextGroupLines = 5

// WriteText writes the violations grouped by rule and machine pair
// (Grouped): for each group a heading with the rule, its leakage type, the
// machines and the count, then the group's first TextGroupLines
// violations, one line each (files: detail), and a line counting the rest;
// then a one-line verdict.
func (r *Report) WriteText(w io.Writer) error {
	groups := r.Grouped()
	for _, g := range groups {
		head := g.Rule + " [" + g.Leakage + "]"
		if g.Machines != "" {
			head += " " + g.Machines
		}
		if _, err := fmt.Fprintf(w, "%s: %d violation(s)\n", head, len(g.Violations)); err != nil {
			return err
		}
		for i, v := range g.Violations {
			if i == TextGroupLines {
				if _, err := fmt.Fprintf(w, "  … and %d more (--json lists every one)\n", len(g.Violations)-i); err != nil {
					return err
				}
				break
			}
			if _, err := fmt.Fprintf(w, "  %s: %s\n", strings.Join(v.Files, ", "), v.Detail); err != nil {
				return err
			}
		}
	}
	verdict := "ok"
	if !r.OK() {
		verdict = fmt.Sprintf("%d violation(s) in %d group(s)", len(r.Violations), len(groups))
	}
	_, err := fmt.Fprintf(w, "audit: %s; leakage types checked: %s\n", verdict, strings.Join(r.Covered, "; "))
	return err
}

func (r *Report) add(rule, detail string, files ...string) {
	r.Violations = append(r.Violations, Violation{Rule: rule, Leakage: ruleLeak[rule], Files: files, Detail: detail})
}

func (r *Report) ran(rule string, n int) {
	if r.Checked == nil {
		r.Checked = map[string]int{}
	}
	r.Checked[rule] += n
}

func (r *Report) finish() {
	set := map[string]bool{}
	for rule := range r.Checked {
		set[ruleLeak[rule]] = true
	}
	r.Covered = r.Covered[:0]
	for l := range set {
		r.Covered = append(r.Covered, l)
	}
	sort.Strings(r.Covered)
	sort.SliceStable(r.Violations, func(i, j int) bool { return r.Violations[i].Rule < r.Violations[j].Rule })
	r.Groups = nil
	for _, g := range r.Grouped() {
		r.Groups = append(r.Groups, GroupCount{Rule: g.Rule, Leakage: g.Leakage, Machines: g.Machines, Count: len(g.Violations)})
	}
}

// LoadFunc reads an audio file as mono samples and its sample rate.
type LoadFunc = neardup.LoadFunc

// LoadWAV reads a WAV file with wavio and mixes it to mono.
func LoadWAV(path string) ([]float64, float64, error) {
	a, err := wavio.ReadFile(path)
	if err != nil {
		return nil, 0, err
	}
	return a.Mono(nil), float64(a.Format.SampleRate), nil
}

// AuditOptions tune Audit and AuditLists. The zero value runs every rule.
type AuditOptions struct {
	// SkipNearDuplicates turns the fingerprint search off (it reads every
	// listed audio file).
	SkipNearDuplicates bool
	// MaxBER caps the near-duplicate threshold, which otherwise follows the
	// number of bits compared (neardup.Threshold; 0 means DefaultMaxBER).
	MaxBER float64
	// Load reads audio (nil means LoadWAV). It is called from several
	// goroutines at once.
	Load LoadFunc
	// Workers is the number of files fingerprinted or searched at once (0
	// means GOMAXPROCS).
	Workers int
	// Progress, when set, is called after each file of a stage
	// ("fingerprint", "search"); see neardup.Options.Progress.
	Progress func(stage string, done, total int)
}

func (o AuditOptions) load() LoadFunc {
	if o.Load != nil {
		return o.Load
	}
	return LoadWAV
}

// Audit re-derives the evaluation safety of the output tree out from its
// files alone: OUT/<machine>/ledger.jsonl, OUT/splits/{lists.csv,plan.json},
// OUT/features/<machine>/stats.json and the audio. It returns an error only
// when the tree cannot be read, or ctx's error when ctx is done (checked
// between files and within large ones); broken rules are violations in the
// report.
func Audit(ctx context.Context, out string, opt AuditOptions) (*Report, error) {
	opt.Load = loadRegular(opt.load())
	rows, plan, err := ReadSplits(out)
	if err != nil {
		return nil, err
	}
	entries, err := ledger.ReadTreeContext(ctx, out)
	if err != nil {
		return nil, err
	}
	rep := &Report{}
	byPath := map[string]ledger.Entry{}
	recordedHash := map[string]bool{}
	for _, e := range entries {
		if e.Kind != ledger.KindOutput {
			continue
		}
		byPath[e.Path] = e
		if e.Origin == machine.OriginRecorded {
			recordedHash[e.SHA256] = true
		}
	}

	// Re-derive the assignment and compare.
	want, aerr := Assign(ctx, ItemsFromLedger(entries), plan.Policy)
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if aerr != nil {
		rep.add(RuleReDerived, "the ledgers cannot be assigned under plan.json: "+aerr.Error(), filepath.ToSlash(filepath.Join(SplitsDir, PlanFile)))
	} else {
		listed := map[string]machine.Split{}
		for _, r := range rows {
			listed[r.Path] = r.Split
		}
		for _, w := range want {
			got, ok := listed[w.Path]
			switch {
			case !ok:
				rep.add(RuleReDerived, "in the ledger but not in lists.csv (want "+string(w.Split)+")", w.Path)
			case got != w.Split:
				rep.add(RuleReDerived, fmt.Sprintf("listed in %s, re-derived assignment says %s (%s)", got, w.Split, w.Reason), w.Path)
			}
		}
		rep.ran(RuleReDerived, len(want))
	}

	active := rows[:0:0]
	for _, r := range rows {
		if r.Split != Excluded {
			active = append(active, r)
		}
	}
	// Every listed file exists, matches its listed hash and its ledger line.
	hashes := map[string]string{}
	for _, r := range active {
		h, err := machine.HashFileContext(ctx, filepath.Join(out, filepath.FromSlash(r.Path)))
		if cerr := ctx.Err(); cerr != nil {
			return nil, cerr
		}
		if err != nil {
			rep.add(RuleListed, "cannot read: "+err.Error(), r.Path)
			continue
		}
		hashes[r.Path] = h
		if h != r.SHA256 {
			rep.add(RuleListed, "sha256 on disk "+h[:12]+"… differs from the listed "+short(r.SHA256), r.Path)
		}
		e, ok := byPath[r.Path]
		if !ok {
			rep.add(RuleListed, "listed but in no ledger", r.Path)
		} else if e.SHA256 != h {
			rep.add(RuleListed, "sha256 on disk differs from the ledger's "+short(e.SHA256), r.Path)
		}
		if r.Split != machine.SplitTrain {
			rep.ran(RuleRecordedEval, 1)
			if !recordedHash[h] {
				rep.add(RuleRecordedEval, string(r.Split)+" file's content is not a recorded clip of any ledger", r.Path)
			}
		}
	}
	rep.ran(RuleListed, len(active))
	// The ledger, not the list, is authoritative for origin, label and speed.
	checked := make([]Row, len(active))
	for i, r := range active {
		if e, ok := byPath[r.Path]; ok {
			r.Origin, r.Label = e.Origin, e.Label
			if e.Speed != 0 {
				r.Speed = e.Speed
			}
		}
		checked[i] = r
	}
	checkRows(rep, checked, plan, hashes)

	// Statistics fitted on training only.
	split := map[string]machine.Split{}
	for _, r := range rows {
		split[r.Path] = r.Split
	}
	statFiles, _ := filepath.Glob(filepath.Join(out, "features", "*", "stats.json"))
	sort.Strings(statFiles)
	for _, sf := range statFiles {
		rel := relSlash(out, sf)
		b, err := os.ReadFile(sf)
		if err != nil {
			return nil, fmt.Errorf("split: %w", err)
		}
		var st struct {
			Machine string   `json:"machine"`
			Inputs  []string `json:"inputs"`
		}
		if err := json.Unmarshal(b, &st); err != nil {
			rep.add(RuleStats, "unreadable: "+err.Error(), rel)
			continue
		}
		rep.ran(RuleStats, 1)
		for _, in := range st.Inputs {
			if s := split[in]; s != machine.SplitTrain {
				if s == "" {
					s = "no split"
				}
				rep.add(RuleStats, "normalisation statistics fitted on a file of "+string(s), rel, in)
			}
		}
	}

	if !opt.SkipNearDuplicates {
		var train, other []string
		for _, r := range active {
			if _, err := os.Stat(filepath.Join(out, filepath.FromSlash(r.Path))); err != nil {
				continue
			}
			if r.Split == machine.SplitTrain {
				train = append(train, r.Path)
			} else {
				other = append(other, r.Path)
			}
		}
		if err := nearDuplicates(ctx, rep, out, train, other, opt); err != nil {
			return nil, err
		}
	}
	rep.finish()
	return rep, nil
}

// loadRegular wraps load so that a path that is not a regular file is
// never opened (a named pipe would block).
func loadRegular(load LoadFunc) LoadFunc {
	return func(path string) ([]float64, float64, error) {
		if err := machine.CheckRegular(path); err != nil {
			return nil, 0, err
		}
		return load(path)
	}
}

// checkRows applies the rules that need only the rows and the plan.
func checkRows(rep *Report, rows []Row, plan Plan, hashes map[string]string) {
	groupSplit := map[string]map[machine.Split][]string{}
	sourceSplit := map[string]map[machine.Split][]string{}
	add := func(m map[string]map[machine.Split][]string, k string, s machine.Split, path string) {
		if m[k] == nil {
			m[k] = map[machine.Split][]string{}
		}
		m[k][s] = append(m[k][s], path)
	}
	bg := plan.Backgrounds
	for _, r := range rows {
		o, l := r.Origin, r.Label
		add(groupSplit, r.Machine+"\x00"+r.Group, r.Split, r.Path)
		if r.SourceSHA256 != "" {
			add(sourceSplit, r.SourceSHA256, r.Split, r.Path)
		}
		if r.Split != machine.SplitTrain && o != machine.OriginRecorded {
			rep.add(RuleOriginTrain, string(o)+" file in "+string(r.Split), r.Path)
		}
		if r.Split == machine.SplitTrain && o == machine.OriginRecorded && l == machine.LabelAnomalous {
			rep.add(RuleAnomalous, "real anomalous recording in train", r.Path)
		}
		if r.Split == machine.SplitTrain {
			c, ok := plan.Policy.condition(r.Machine, r.Condition)
			if ok && c.HoldOut {
				rep.add(RuleHoldOut, "training file from hold-out condition "+c.Name, r.Path)
			} else if ok {
				if h, in := plan.Policy.HoldOutBand(r.Machine, r.Condition, c.RPM*r.Speed); in {
					rep.add(RuleHoldOutBand, fmt.Sprintf("training file at %.6g rpm lies in hold-out condition %s's band %g rpm ± %g %%", c.RPM*r.Speed, h.Name, h.RPM, h.BandPercent), r.Path)
				}
			}
		}
		for _, b := range r.Backgrounds {
			s, ok := bg[b]
			switch {
			case !ok:
				rep.add(RuleBackgrounds, "background "+b+" is not in the partition", r.Path)
			case r.Split == machine.SplitTrain && s != machine.SplitTrain:
				rep.add(RuleBackgrounds, "training file mixed with "+string(s)+" background "+b, r.Path)
			case r.Split != machine.SplitTrain && s == machine.SplitTrain:
				rep.add(RuleBackgrounds, string(r.Split)+" file mixed with training background "+b, r.Path)
			}
		}
	}
	rep.ran(RuleOriginTrain, len(rows))
	rep.ran(RuleAnomalous, len(rows))
	rep.ran(RuleHoldOut, len(rows))
	rep.ran(RuleHoldOutBand, len(rows))
	rep.ran(RuleBackgrounds, len(rows))
	spans := func(rule, what string, m map[string]map[machine.Split][]string) {
		keys := make([]string, 0, len(m))
		for k := range m {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		for _, k := range keys {
			if len(m[k]) < 2 {
				continue
			}
			var files, names []string
			for _, s := range []machine.Split{machine.SplitTrain, machine.SplitEval, machine.SplitTest} {
				if p := m[k][s]; len(p) > 0 {
					names = append(names, string(s))
					files = append(files, p[0])
				}
			}
			rep.add(rule, fmt.Sprintf("%s %s spans %s", what, strings.ReplaceAll(k, "\x00", "/"), strings.Join(names, " and ")), files...)
		}
		rep.ran(rule, len(m))
	}
	spans(RuleGroupOneSplit, "group", groupSplit)
	spans(RuleSourceOne, "source recording", sourceSplit)
	// Identical bytes on both sides of the boundary.
	byHash := map[string]map[machine.Split][]string{}
	for _, r := range rows {
		if h := hashes[r.Path]; h != "" {
			side := machine.SplitTrain
			if r.Split != machine.SplitTrain {
				side = "eval/test"
			}
			add(byHash, h, side, r.Path)
		}
	}
	for _, h := range slices.Sorted(maps.Keys(byHash)) {
		if len(byHash[h]) == 2 {
			rep.add(RuleExactDup, "identical content in train and eval/test", byHash[h][machine.SplitTrain][0], byHash[h]["eval/test"][0])
		}
	}
	rep.ran(RuleExactDup, len(byHash))
}

// AuditLists runs the near-duplicate search between two sets of audio files
// with no ledger or plan: every eval file against every training file. It
// also flags byte-identical files. When ctx is done it stops and returns
// ctx's error.
func AuditLists(ctx context.Context, trainPaths, evalPaths []string, opt AuditOptions) (*Report, error) {
	opt.Load = loadRegular(opt.load())
	rep := &Report{}
	hashes := map[string]string{}
	for _, p := range append(append([]string(nil), trainPaths...), evalPaths...) {
		if err := machine.CheckRegular(p); err != nil {
			return nil, fmt.Errorf("split: %s: %w", p, err)
		}
		h, err := machine.HashFileContext(ctx, p)
		if cerr := ctx.Err(); cerr != nil {
			return nil, cerr
		}
		if err != nil {
			return nil, err
		}
		hashes[p] = h
	}
	byHash := map[string][]string{}
	for _, p := range trainPaths {
		byHash[hashes[p]] = append(byHash[hashes[p]], p)
	}
	for _, p := range evalPaths {
		if t := byHash[hashes[p]]; len(t) > 0 {
			rep.add(RuleExactDup, "identical content in train and eval/test", t[0], p)
		}
	}
	rep.ran(RuleExactDup, len(evalPaths))
	if !opt.SkipNearDuplicates {
		if err := nearDuplicates(ctx, rep, "", trainPaths, evalPaths, opt); err != nil {
			return nil, err
		}
	}
	rep.finish()
	return rep, nil
}

// nearDuplicates runs the fingerprint search of eval against train (paths
// joined to root when root is not empty) and reports its matches and the
// files it could not check.
func nearDuplicates(ctx context.Context, rep *Report, root string, train, eval []string, opt AuditOptions) error {
	res, err := neardup.Search(ctx, root, train, eval, neardup.Options{
		MaxBER: opt.MaxBER, Load: opt.load(), Workers: opt.Workers, Progress: opt.Progress})
	if err != nil {
		if ctx.Err() != nil {
			return ctx.Err()
		}
		return fmt.Errorf("split: near-duplicate search: %w", err)
	}
	all := append(append([]string(nil), train...), eval...)
	for i, err := range res.Errs {
		if err != nil {
			rep.add(RuleNearDup, "not checked: "+err.Error(), all[i])
		}
	}
	rep.Indexed = len(train)
	rep.Queries = res.Queries
	for i, p := range eval {
		for _, m := range res.Found[i] {
			rep.add(RuleNearDup, fmt.Sprintf("near-duplicate: fingerprint BER %.3f at offset %.3f s, at or below the threshold %.3f for the %d bits compared", m.BER, float64(m.Offset)*res.Hops[i], m.Threshold, m.Bits), m.ID, p)
		}
	}
	rep.ran(RuleNearDup, len(eval))
	return nil
}

func relSlash(root, p string) string {
	r, err := filepath.Rel(root, p)
	if err != nil {
		return p
	}
	return filepath.ToSlash(r)
}

func short(h string) string {
	if len(h) > 12 {
		return h[:12] + "…"
	}
	return h
}

// ViolationGroup is the violations of one rule between one pair of
// machines (or within one machine), for a report that would otherwise be a
// long flat list.
type ViolationGroup struct {
	Rule    string `json:"rule"`
	Leakage string `json:"leakage"`
	// Machines is the machine id of the files, "a ↔ b" when they belong to
	// two machines (in lexical order), "" when a file has no machine folder.
	Machines   string      `json:"machines"`
	Violations []Violation `json:"violations"`
}

// Grouped returns the violations grouped by rule and machine pair, in rule
// then machine order; within a group they keep the report's order. A
// file's machine is the first folder of its path (OUT/<machine>/…).
func (r *Report) Grouped() []ViolationGroup {
	type key struct{ rule, machines string }
	at := map[key]int{}
	var out []ViolationGroup
	for _, v := range r.Violations {
		set := map[string]bool{}
		for _, f := range v.Files {
			if i := strings.IndexByte(f, '/'); i > 0 {
				set[f[:i]] = true
			}
		}
		ms := slices.Sorted(maps.Keys(set))
		k := key{v.Rule, strings.Join(ms, " ↔ ")}
		i, ok := at[k]
		if !ok {
			i = len(out)
			at[k] = i
			out = append(out, ViolationGroup{Rule: v.Rule, Leakage: v.Leakage, Machines: k.machines})
		}
		out[i].Violations = append(out[i].Violations, v)
	}
	sort.SliceStable(out, func(i, j int) bool {
		if out[i].Rule != out[j].Rule {
			return out[i].Rule < out[j].Rule
		}
		return out[i].Machines < out[j].Machines
	})
	return out
}
