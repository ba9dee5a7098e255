package main

import (
	"context"
	"errors"
	"fmt"

	"github.com/spf13/cobra"

	"thrum/augment"
	"thrum/augment/online"
	"thrum/machine"
)

func newReplayCmd(g *globals) *cobra.Command {
	var o stageOptions
	var served bool
	cmd := &cobra.Command{
		Use:   "replay PLANT.toml --out DIR PATH... | --served ITEM...",
		Short: "Regenerate outputs from their ledger lines and verify their hashes",
		Long: `replay regenerates each named output (a path relative to the output root, as in the
ledger) from the plant, the source recording and its ledger line, and checks that the result
hashes to the ledger's sha256 ("ledger hash mismatch" otherwise) and that the file on disk
still holds those bytes ("file on disk differs (corrupted or edited)" otherwise, with its
path). Nothing is written. Exit code 3 when any output fails.
With --served, each argument is an item thrum serve handed out (its id in the batch description,
<machine>/e<epoch>/p<position>): the batch that served it is regenerated and checked against the
digest recorded in DIR/serve/<machine>.jsonl.`,
		Args: func(cmd *cobra.Command, args []string) error {
			if len(args) < 2 {
				return &usageError{fmt.Errorf("replay needs the plant file and at least one output path")}
			}
			return nil
		},
		RunE: func(cmd *cobra.Command, args []string) error {
			if err := o.validate(); err != nil {
				return err
			}
			inv, err := loadPlant(cmd.Context(), args[0], o.Out)
			if err != nil {
				return err
			}
			if served {
				return replayServed(cmd.Context(), g, inv, o, args[1:])
			}
			opt, err := augmentOptions(inv, o, newRenderer(g.stderr, progressQuiet))
			if err != nil {
				return err
			}
			bad := 0
			for _, rel := range args[1:] {
				res, err := augment.Replay(inv, opt, rel)
				if err != nil {
					fmt.Fprintf(g.stdout, "FAIL %s: %v\n", rel, err)
					bad++
					continue
				}
				if !res.OK() {
					if !res.LedgerOK() {
						fmt.Fprintf(g.stdout, "FAIL %s: ledger hash mismatch: regenerated sha256 %s, ledger %s\n", rel, res.SHA256, res.Entry.SHA256)
					}
					switch {
					case res.DiskErr != nil:
						fmt.Fprintf(g.stdout, "FAIL %s: file on disk cannot be read: %v\n", rel, res.DiskErr)
					case !res.DiskOK():
						fmt.Fprintf(g.stdout, "FAIL %s: file on disk differs (corrupted or edited): %s sha256 %s, regenerated %s\n", rel, res.File, res.Disk, res.SHA256)
					}
					bad++
					continue
				}
				fmt.Fprintf(g.stdout, "ok   %s  sha256 %s\n", rel, res.SHA256)
			}
			if bad > 0 {
				return &problemsError{fmt.Sprintf("replay: %d of %d output(s) did not verify", bad, len(args)-1)}
			}
			return nil
		},
	}
	o.addFlags(cmd)
	cmd.Flags().BoolVar(&served, "served", false, "the arguments are items thrum serve handed out (<machine>/e<epoch>/p<position>)")
	return cmd
}

// replayServed regenerates served items and checks them against the
// served record.
func replayServed(ctx context.Context, g *globals, inv *machine.Inventory, o stageOptions, ids []string) error {
	bad := 0
	for _, id := range ids {
		res, err := online.Replay(ctx, inv, online.Options{Out: o.Out, Workers: o.Workers}, id)
		if err != nil {
			if errors.Is(err, context.Canceled) {
				return err
			}
			fmt.Fprintf(g.stdout, "FAIL %s: %v\n", id, err)
			bad++
			continue
		}
		if !res.OK() {
			fmt.Fprintf(g.stdout, "FAIL %s: batch %d (size %d) of epoch %d regenerates to digest %s, %s recorded %s\n",
				id, res.Batch, res.Size, res.Epoch, res.SHA256, res.Record, res.Recorded)
			bad++
			continue
		}
		fmt.Fprintf(g.stdout, "ok   %s  %s clip %d seed %d  sha256 %s  (batch %d, size %d, digest %s)\n",
			id, res.Item.Source, res.Item.Clip, res.Item.Seed, res.Item.SHA256, res.Batch, res.Size, res.SHA256)
	}
	if bad > 0 {
		return &problemsError{fmt.Sprintf("replay: %d of %d served item(s) did not verify", bad, len(ids))}
	}
	return nil
}
