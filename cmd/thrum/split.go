package main

import (
	"context"
	"fmt"
	"path/filepath"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/split"
)

func newSplitCmd(g *globals) *cobra.Command {
	var o stageOptions
	cmd := &cobra.Command{
		Use:   "split PLANT.toml --out DIR",
		Short: "Write evaluation-safe train/eval/test lists from the ledgers",
		Long: `split joins any shard ledger parts, then assigns every output of the ledgers to train,
eval or test. The unit is the group (a recording, its session, or a block of a long recording when
block_seconds is set), with every variant derived from it. With split_method = "shares" (the
default) each machine and condition's groups, in the order of a stable hash of (plant seed,
machine id, group), are dealt so the counts meet the shares as closely as the number of groups
allows, every split with a non-zero share getting one; adding recordings may then move some
existing groups. split_method = "stable-hash" puts each group by its own hash, so adding
recordings never moves existing ones, but with few groups a split may stay empty. Groups pinned
with [[machine.pin]] keep their split; a guard clip is left out between neighbouring blocks of
different splits. Only recorded clips reach eval and test; augmented and synthetic
fault files are training only (the variants of an eval/test group are excluded); real
anomalous recordings go to eval or test (both, when a machine has two or more groups); a
hold-out condition goes entirely to test. Warnings (an empty split, a split without real
anomalies, a pin that names no group) go to stderr and, with --json, to stdout.
Lists go to DIR/splits/.`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if o.Out == "" {
				return &usageError{fmt.Errorf("--out is required")}
			}
			p, err := machine.Load(args[0]) // holdOut checks OUT
			if err != nil {
				return err
			}
			o.Command = commandLine(cmd, args)
			lock, err := holdOut(cmd.Context(), g, p, o, ledger.Shard{})
			if err != nil {
				return err
			}
			defer lock.Release()
			_, err = runSplit(cmd.Context(), g, o, p)
			return err
		},
	}
	cmd.Flags().StringVarP(&o.Out, "out", "o", "", "output root (required)")
	o.addLockFlag(cmd)
	cmd.Flags().BoolVar(&o.JSON, "json", false, "summary as JSON lines on stdout")
	return cmd
}

// runSplit runs the split stage and prints its summary; its warnings go to
// stderr, and with --json also to stdout as "warning" events.
func runSplit(ctx context.Context, g *globals, o stageOptions, p *machine.Plant) (*split.Result, error) {
	res, err := split.Run(ctx, p, o.Out)
	if err != nil {
		return nil, err
	}
	for _, w := range res.Warnings {
		fmt.Fprintf(g.stderr, "split: warning: %s\n", w)
	}
	if o.JSON {
		for _, s := range res.Summary {
			writeJSONLine(g.stdout, map[string]any{"event": "split", "machine": s.Machine, "split": s.Split,
				"origin": s.Origin, "label": s.Label, "files": s.Files, "groups": s.Groups})
		}
		for _, w := range res.Warnings {
			writeJSONLine(g.stdout, map[string]any{"event": "warning", "stage": "split", "message": w})
		}
		return res, nil
	}
	tw := tabwriter.NewWriter(g.stdout, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "machine\tsplit\torigin\tlabel\tfiles\tgroups")
	for _, s := range res.Summary {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%d\t%d\n", s.Machine, s.Split, s.Origin, s.Label, s.Files, s.Groups)
	}
	fmt.Fprintf(tw, "lists written to %s\n", filepath.Join(o.Out, split.SplitsDir))
	return res, tw.Flush()
}
