package main

import (
	"context"
	"fmt"
	"io"
	"maps"
	"path/filepath"
	"slices"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/spf13/cobra"

	"thrum/augment"
	"thrum/features"
	"thrum/features/evalstage"
	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/split"
)

func newRunCmd(g *globals) *cobra.Command {
	var o stageOptions
	cmd := &cobra.Command{
		Use:   "run PLANT.toml --out DIR",
		Short: "Run the whole pipeline, resumably: survey, expand, faults, split, features, audit",
		Long: `run does every stage in order. Each stage skips work already done and verified (ledger
line and file hash), so a run interrupted anywhere (Ctrl-C or kill) resumes to byte-identical
results when started again with the same arguments.

With --shard I/N (or a batch scheduler's index, see --shard), run does only this shard's
share of expand and faults and writes its own ledger parts; a later run without a shard
joins the parts and finishes split, features and audit.`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if err := o.validate(); err != nil {
				return err
			}
			o.Command = commandLine(cmd, args)
			return runPipeline(cmd.Context(), g, o, args[0])
		},
	}
	o.addFlags(cmd)
	o.addLockFlag(cmd)
	cmd.Flags().BoolVar(&o.NoEvaluate, "no-evaluate", false, "do not end with the evaluate stage (it runs when eval or test hold real anomalous recordings)")
	return cmd
}

type machineReport struct {
	clips, recorded, augmented int
	rejected, faults           map[string]int
	splits                     map[string]int
	excluded                   []string
}

func runPipeline(ctx context.Context, g *globals, o stageOptions, plantPath string) error {
	t0 := time.Now()
	p, err := machine.Load(plantPath) // holdOut checks OUT
	if err != nil {
		return err
	}
	sh, _ := o.shard()
	// Survey and preflight read only: a plan that cannot work is refused
	// with its whole list before OUT is locked or written.
	inv, err := machine.Scan(ctx, p, machine.ScanOptions{})
	if err != nil {
		return err
	}
	for _, pr := range inv.Problems {
		fmt.Fprintf(g.stderr, "survey: %s\n", pr)
	}
	pf := machine.Preflight(inv, machine.PreflightOptions{Out: o.Out})
	if !o.Quiet || !pf.OK() {
		pf.WriteText(g.stderr)
	}
	if !pf.OK() {
		return pf
	}
	lock, err := holdOut(ctx, g, p, o, ledger.Shard(sh))
	if err != nil {
		return err
	}
	defer lock.Release()
	if sh.N <= 1 {
		if _, err := ledger.Merge(p, o.Out); err != nil {
			return err
		}
	}
	// the survey problems are printed above, with the preflight
	r := o.renderer(g)
	opt, err := augmentOptions(inv, o, r)
	if err != nil {
		return err
	}
	exp, err := augment.Expand(ctx, inv, opt)
	if err != nil {
		r.finish()
		return err
	}
	flt, err := augment.Faults(ctx, inv, opt)
	r.finish()
	if err != nil {
		return err
	}
	printUndefined(g, "expand", exp)
	printUndefined(g, "faults", flt)
	for _, s := range exp {
		printStale(g, "expand", o.Out, s.Stale)
	}
	for _, s := range flt {
		printStale(g, "faults", o.Out, s.Stale)
	}
	if sh.N > 1 {
		printSummaries(g, o.JSON, "expand", exp)
		printSummaries(g, o.JSON, "faults", flt)
		fmt.Fprintf(g.stdout, "shard %d/%d done in %.1f s; when every shard is done, run without --shard to join them and finish\n", sh.I, sh.N, time.Since(t0).Seconds())
		return nil
	}
	sres, err := runSplitQuiet(ctx, p, o.Out, g.stderr)
	if err != nil {
		return err
	}
	fsums, err := runFeatures(ctx, g, o, p)
	if err != nil {
		return err
	}
	for _, s := range fsums {
		printStale(g, "features", o.Out, s.Stale)
	}
	rep, err := split.Audit(ctx, o.Out, split.AuditOptions{})
	if err != nil {
		return err
	}
	reports := map[string]*machineReport{}
	get := func(id string) *machineReport {
		if reports[id] == nil {
			reports[id] = &machineReport{rejected: map[string]int{}, faults: map[string]int{}, splits: map[string]int{}}
		}
		return reports[id]
	}
	for _, s := range exp {
		m := get(s.Machine)
		m.clips, m.recorded, m.augmented = s.Clips, s.Recorded, s.Augmented
		m.excluded = append(m.excluded, s.Excluded...)
		for k, v := range s.Rejected {
			m.rejected[k] += v
		}
	}
	for _, s := range flt {
		for k, v := range s.Faults {
			get(s.Machine).faults[k] += v
		}
	}
	rows, _, err := split.ReadSplits(o.Out)
	if err != nil {
		return err
	}
	for _, row := range rows {
		get(row.Machine).splits[string(row.Split)]++
	}
	verdict := "clean"
	if !rep.OK() {
		verdict = fmt.Sprintf("%d violation(s)", len(rep.Violations))
	}
	// evaluate ends the run when there are real anomalies to score, and
	// only on a clean audit: a leak would inflate every score
	var evsum *evalstage.Summary
	evalNote := ""
	switch {
	case o.NoEvaluate || !hasRealAnomalies(rows):
	case !rep.OK():
		evalNote = "evaluate: skipped, the audit found violations (a leak would inflate every score)"
	default:
		if evsum, err = evaluate(ctx, g, o, evalstage.Options{}); err != nil {
			return err
		}
	}
	wall := time.Since(t0)
	rd := features.ReportData{Plant: plantPath, Out: o.Out, WallSeconds: wall.Seconds(), Audit: verdict}
	for _, v := range rep.Violations {
		rd.Violations = append(rd.Violations, v.String())
	}
	fillReport(&rd, p, inv, sres, rep, rows)
	for _, id := range slices.Sorted(maps.Keys(reports)) {
		m := reports[id]
		rd.Machines = append(rd.Machines, features.MachineReport{ID: id, Clips: m.clips, Recorded: m.recorded,
			Augmented: m.augmented, Rejected: m.rejected, Faults: m.faults, Splits: m.splits, Excluded: m.excluded})
	}
	if evsum != nil {
		rd.Evaluation = evsum.Report()
	}
	reportPath := filepath.Join(o.Out, "report.html")
	if err := features.WriteReport(reportPath, rd); err != nil {
		return err
	}
	if o.JSON {
		for _, id := range slices.Sorted(maps.Keys(reports)) {
			m := reports[id]
			ev := map[string]any{"event": "machine", "machine": id, "clips": m.clips, "recorded": m.recorded,
				"augmented": m.augmented, "rejected": m.rejected, "faults": m.faults, "splits": m.splits}
			if len(m.excluded) > 0 {
				ev["excluded_recordings"] = m.excluded
			}
			writeJSONLine(g.stdout, ev)
		}
		for _, w := range sres.Warnings {
			writeJSONLine(g.stdout, map[string]any{"event": "warning", "stage": "split", "message": w})
		}
		if evsum != nil {
			if err := printEvaluation(g, o, evsum); err != nil {
				return err
			}
		}
		writeJSONLine(g.stdout, map[string]any{"event": "done", "audit": verdict, "violations": len(rep.Violations), "wall_s": wall.Seconds(), "report": reportPath})
	} else {
		tw := tabwriter.NewWriter(g.stdout, 0, 0, 2, ' ', 0)
		fmt.Fprintln(tw, "machine\tclips\tvariants\trejected\tfault cues\ttrain\teval\ttest\texcluded")
		for _, id := range slices.Sorted(maps.Keys(reports)) {
			m := reports[id]
			fmt.Fprintf(tw, "%s\t%d\t%d\t%s\t%s\t%d\t%d\t%d\t%d\n", id, m.clips, m.augmented, counts(m.rejected), counts(m.faults),
				m.splits[string(machine.SplitTrain)], m.splits[string(machine.SplitEval)], m.splits[string(machine.SplitTest)], m.splits[string(split.Excluded)])
		}
		tw.Flush()
		for _, w := range sres.Warnings {
			fmt.Fprintf(g.stdout, "split: warning: %s\n", w)
		}
		for _, id := range slices.Sorted(maps.Keys(reports)) {
			for _, x := range reports[id].excluded {
				fmt.Fprintf(g.stdout, "excluded recording: %s\n", x)
			}
		}
		if evsum != nil {
			fmt.Fprintln(g.stdout)
			if err := printEvaluation(g, o, evsum); err != nil {
				return err
			}
		}
		if evalNote != "" {
			fmt.Fprintln(g.stdout, evalNote)
		}
		fmt.Fprintf(g.stdout, "audit: %s; wall time %.1f s; outputs in %s; report: %s\n", verdict, wall.Seconds(), o.Out, reportPath)
		if !rep.OK() {
			rep.WriteText(g.stdout)
		}
	}
	if !rep.OK() {
		return &problemsError{"audit found violations"}
	}
	return nil
}

func runSplitQuiet(ctx context.Context, p *machine.Plant, out string, _ io.Writer) (*split.Result, error) {
	// the warnings go to the run summary (and --json), not twice
	return runSplit(ctx, &globals{stdout: io.Discard, stderr: io.Discard}, stageOptions{Out: out}, p)
}

func counts(m map[string]int) string {
	if len(m) == 0 {
		return "0"
	}
	var parts []string
	total := 0
	for _, k := range slices.Sorted(maps.Keys(m)) {
		parts = append(parts, fmt.Sprintf("%s %d", k, m[k]))
		total += m[k]
	}
	return fmt.Sprintf("%d (%s)", total, strings.Join(parts, ", "))
}

// fillReport adds to the run report what a reader needs to judge the
// dataset: the violations grouped by rule and machine pair, the split's
// warnings, the hold-out conditions, the skipped recordings, the excluded
// outputs and the per-condition counts of each split.
func fillReport(rd *features.ReportData, p *machine.Plant, inv *machine.Inventory, sres *split.Result, rep *split.Report, rows []split.Row) {
	for _, g := range rep.Grouped() {
		vg := features.ViolationGroup{Rule: g.Rule, Machines: g.Machines}
		for _, v := range g.Violations {
			vg.Lines = append(vg.Lines, v.String())
		}
		rd.ViolationGroups = append(rd.ViolationGroups, vg)
	}
	rd.Warnings = append(rd.Warnings, sres.Warnings...)
	for _, pr := range inv.Problems {
		rd.Skipped = append(rd.Skipped, pr.String())
	}
	type mc struct{ m, c string }
	counts := map[mc]map[string]features.OriginCounts{}
	for _, r := range rows {
		if r.Split == split.Excluded {
			rd.Excluded = append(rd.Excluded, features.ExcludedFile{Path: r.Path, Reason: r.Reason})
			continue
		}
		k := mc{r.Machine, r.Condition}
		if counts[k] == nil {
			counts[k] = map[string]features.OriginCounts{}
		}
		oc := counts[k][string(r.Split)]
		switch {
		case r.Origin == machine.OriginAugmented:
			oc.Augmented++
		case r.Origin == machine.OriginSyntheticFault:
			oc.Faults++
		case r.Label == machine.LabelAnomalous:
			oc.Anomalous++
		default:
			oc.Recorded++
		}
		counts[k][string(r.Split)] = oc
	}
	for _, m := range p.Machines {
		for _, c := range m.Conditions {
			if c.HoldOut {
				rd.HoldOut = append(rd.HoldOut, m.ID+"/"+c.Name)
			}
			if got := counts[mc{m.ID, c.Name}]; got != nil {
				rd.Conditions = append(rd.Conditions, features.ConditionCounts{Machine: m.ID, Condition: c.Name, HoldOut: c.HoldOut, Splits: got})
			}
		}
	}
}
