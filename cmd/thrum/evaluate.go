package main

import (
	"context"
	"fmt"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

	"thrum/features/evalstage"
	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/split"
)

type evaluateOptions struct {
	Seed         uint64
	Rounds       int
	PerCondition bool
	Masked       bool
	Ablate       bool
	Workers      int
	Quiet        bool
	JSON         bool
	WaitLock     bool
}

func newEvaluateCmd(g *globals) *cobra.Command {
	var o evaluateOptions
	cmd := &cobra.Command{
		Use:   "evaluate OUT",
		Short: "Train baseline detectors with and without the variants and score the real eval and test clips",
		Long: `evaluate reads the features of an output root (run, or split and features, first) and trains
two baseline detectors per machine, on normal training clips only (never on synthetic fault
cues): a Gaussian model of log-mel context vectors with Ledoit–Wolf shrinkage, and the
k-nearest-neighbour distance between clip embeddings. Each is trained on the recorded clips
only and on the recorded clips with their variants, and scores the recorded eval and test
clips: AUC and partial AUC (false-positive rate ≤ 0.1, area divided by 0.1) per machine and
condition, hold-out conditions apart, with group-bootstrap intervals and the difference the
variants make. Where a condition has no real anomalous clip, a proxy row scores the synthetic
fault cues instead, always labelled proxy. It also measures how far the variants lie from the
recordings (Fréchet distances between embedding fits, per-variant outlier scores).

It writes OUT/evaluate/summary.json (schema in README) and one ROC picture per machine, and
prints the tables. The same inputs give the same bytes, whatever -j.`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runEvaluate(cmd.Context(), g, o, args[0], commandLine(cmd, args))
		},
	}
	f := cmd.Flags()
	f.Uint64Var(&o.Seed, "seed", 0, "seed of the bootstrap resamples (0 = the plant seed from splits/plan.json)")
	f.IntVar(&o.Rounds, "rounds", evalstage.DefaultRounds, "bootstrap resamples per interval")
	f.BoolVar(&o.PerCondition, "per-condition", false, "train one detector per machine and condition (hold-out conditions are scored by the machine-wide one)")
	f.BoolVar(&o.Masked, "masked", false, "add a training set with the masked copies of the features stage")
	f.BoolVar(&o.Ablate, "ablate", false, "add one training set per step kind, without the variants whose steps include it")
	f.IntVarP(&o.Workers, "jobs", "j", 0, "detectors fitted at once (0 = one per available CPU)")
	f.BoolVarP(&o.Quiet, "quiet", "q", false, "no progress output")
	f.BoolVar(&o.JSON, "json", false, "progress and the summary's path as JSON lines on stdout")
	f.BoolVar(&o.WaitLock, "wait-lock", false, "when another run holds the output root's lock, wait for it instead of refusing")
	return cmd
}

func runEvaluate(ctx context.Context, g *globals, o evaluateOptions, out, command string) error {
	if o.Rounds < 1 {
		return &usageError{fmt.Errorf("--rounds %d: at least 1", o.Rounds)}
	}
	if st, err := os.Stat(out); err != nil || !st.IsDir() {
		return fmt.Errorf("evaluate: %s: not an output folder", out)
	}
	lock, err := ledger.LockOut(ctx, out, ledger.LockOptions{Command: command, Wait: o.WaitLock})
	if err != nil {
		return err
	}
	defer lock.Release()
	so := stageOptions{Out: out, Workers: o.Workers, Quiet: o.Quiet, JSON: o.JSON}
	sum, err := evaluate(ctx, g, so, evalstage.Options{Seed: o.Seed, Rounds: o.Rounds, PerCondition: o.PerCondition,
		Masked: o.Masked, Ablate: o.Ablate})
	if err != nil {
		return err
	}
	return printEvaluation(g, so, sum)
}

// evaluate runs the evaluate stage with the progress of so; the caller
// holds the lock.
func evaluate(ctx context.Context, g *globals, so stageOptions, opt evalstage.Options) (*evalstage.Summary, error) {
	opt.Out, opt.Workers = so.Out, so.Workers
	r := so.renderer(g)
	opt.Progress = r.event
	sum, err := evalstage.Run(ctx, opt)
	r.finish()
	return sum, err
}

func printEvaluation(g *globals, so stageOptions, sum *evalstage.Summary) error {
	file := filepath.Join(so.Out, evalstage.Dir, evalstage.SummaryFile)
	if so.JSON {
		writeJSONLine(g.stdout, map[string]any{"event": "evaluate", "summary": file, "machines": len(sum.Machines)})
		return nil
	}
	if err := sum.WriteText(g.stdout); err != nil {
		return err
	}
	fmt.Fprintf(g.stdout, "evaluate: summary in %s\n", file)
	return nil
}

// hasRealAnomalies reports whether the split lists put a recorded
// anomalous clip in eval or test: then run ends with evaluate.
func hasRealAnomalies(rows []split.Row) bool {
	for _, r := range rows {
		if (r.Split == machine.SplitEval || r.Split == machine.SplitTest) && r.Label == machine.LabelAnomalous && r.Origin == machine.OriginRecorded {
			return true
		}
	}
	return false
}
