package main

import (
	"encoding/json"
	"fmt"

	"github.com/spf13/cobra"

	"thrum/split"
)

type auditOptions struct {
	Train, Eval []string
	Lists       bool
	JSON        bool
	Fast        bool
	MaxBER      float64
}

func newAuditCmd(g *globals) *cobra.Command {
	var o auditOptions
	cmd := &cobra.Command{
		Use:   "audit DIR | audit --lists TRAIN EVAL | audit --train A --eval B",
		Short: "Prove from the files that no evaluation data leaks into training",
		Long: `audit re-derives every rule from the files, the ledgers and the split lists of an output
root, and exits with code 3 and a report naming each leak when a rule is broken: every
eval/test file hashes to a recorded clip; no group spans two splits; no augmented or synthetic
file outside training; hold-out conditions intact; normalisation statistics fitted on
training files only; backgrounds partitioned. It also searches for near-duplicates across the
split boundary with an audio fingerprint robust to gain, time shift, added noise and small
speed changes, so it finds copies that no ledger mentions. Every clip is resampled to 8 kHz
before it is printed, so copies at another sample rate are found too; silent and zero-padded
stretches take no part; the decision threshold falls with the number of bits compared (a bit
error model with a false-alarm bound per pair), so short clips are held to the same
false-alarm rate as long ones.

Without a ledger (a dataset assembled by hand or by another tool), use the lists mode:
--lists TRAIN EVAL, or --train and --eval (repeatable). Each side is a folder (searched for
.wav files), a .wav file, a text file listing one path per line, or a CSV with a "path"
column; only the near-duplicate search runs.`,
		Args: rangeArgs(0, 2),
		RunE: func(cmd *cobra.Command, args []string) error {
			if o.Lists {
				if len(args) != 2 {
					return &usageError{fmt.Errorf("--lists takes two arguments: TRAIN EVAL")}
				}
				o.Train, o.Eval, args = append(o.Train, args[0]), append(o.Eval, args[1]), nil
			}
			opt := split.AuditOptions{SkipNearDuplicates: o.Fast, MaxBER: o.MaxBER}
			var rep *split.Report
			var err error
			switch {
			case len(args) == 1 && len(o.Train) == 0 && len(o.Eval) == 0:
				rep, err = split.Audit(cmd.Context(), args[0], opt)
			case len(args) == 0 && len(o.Train) > 0 && len(o.Eval) > 0:
				var tr, ev []string
				if tr, err = expandLists(o.Train); err != nil {
					return err
				}
				if ev, err = expandLists(o.Eval); err != nil {
					return err
				}
				rep, err = split.AuditLists(cmd.Context(), tr, ev, opt)
			default:
				return &usageError{fmt.Errorf("give an output root, or both --train and --eval")}
			}
			if err != nil {
				return err
			}
			if o.JSON {
				enc := json.NewEncoder(g.stdout)
				enc.SetIndent("", "  ")
				if err := enc.Encode(rep); err != nil {
					return err
				}
			} else if err := rep.WriteText(g.stdout); err != nil {
				return err
			}
			if !rep.OK() {
				return &problemsError{fmt.Sprintf("audit found %d violation(s)", len(rep.Violations))}
			}
			return nil
		},
	}
	f := cmd.Flags()
	f.BoolVar(&o.Lists, "lists", false, "lists mode: the two arguments are the training and evaluation sides")
	f.StringSliceVar(&o.Train, "train", nil, "training side: folders or list files (no ledger needed)")
	f.StringSliceVar(&o.Eval, "eval", nil, "evaluation side: folders or list files")
	f.BoolVar(&o.JSON, "json", false, "print the report as JSON")
	f.BoolVar(&o.Fast, "no-near-duplicates", false, "skip the fingerprint search (rules from ledgers and lists only)")
	f.Float64Var(&o.MaxBER, "max-ber", 0, "cap of the near-duplicate threshold: fingerprint bit error rate; the threshold itself falls with fewer bits compared (0 = default 0.39)")
	return cmd
}

// expandLists turns each argument into audio paths (see split.ListPaths).
func expandLists(args []string) ([]string, error) {
	var out []string
	for _, a := range args {
		ps, err := split.ListPaths(a)
		if err != nil {
			return nil, err
		}
		out = append(out, ps...)
	}
	return out, nil
}
