package main

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"

	"github.com/spf13/cobra"

	"thrum/augment"
	"thrum/machine"
	"thrum/machine/ledger"
)

// holdOut checks that the output root of o may be written for plant p (it
// is not inside or around the recordings) and takes its lock for a command
// that writes into it (see ledger.LockOut): a shard lock for a sharded run.
// A stale lock left by a holder that died is taken over with a warning on
// stderr. The caller defers Release.
func holdOut(ctx context.Context, g *globals, p *machine.Plant, o stageOptions, sh ledger.Shard) (*ledger.Lock, error) {
	if err := augment.CheckOutput(p, o.Out); err != nil {
		return nil, err
	}
	l, err := ledger.LockOut(ctx, o.Out, ledger.LockOptions{Shard: sh, Command: o.Command, Wait: o.WaitLock})
	if err != nil {
		return nil, err
	}
	for _, h := range l.TookOver {
		fmt.Fprintf(g.stderr, "thrum: warning: took over the stale lock %s of %s (no longer running)\n", h.File, h)
	}
	return l, nil
}

// commandLine is the command as typed, for the lock file.
func commandLine(cmd *cobra.Command, args []string) string {
	return strings.TrimSpace("thrum " + strings.TrimPrefix(cmd.CommandPath(), cmd.Root().Name()+" ") + " " + strings.Join(args, " "))
}

// printStale lists on stderr the files a stage moved to OUT/.stale.
func printStale(g *globals, stage, out string, stale []string) {
	for _, s := range stale {
		fmt.Fprintf(g.stderr, "%s: moved %s to %s (no ledger line or index names it any more)\n", stage, s, filepath.Join(out, machine.StaleDir)+string(filepath.Separator))
	}
}

// addLockFlag adds --wait-lock to a command that writes into an output root.
func (o *stageOptions) addLockFlag(cmd *cobra.Command) {
	cmd.Flags().BoolVar(&o.WaitLock, "wait-lock", false, "when another run holds the output root's lock, wait for it instead of refusing")
}
