package main

import (
	"context"
	"fmt"
	"maps"
	"os"
	"slices"
	"strconv"
	"strings"

	"github.com/spf13/cobra"

	"thrum/augment"
	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/split"
)

// stageOptions are shared by the commands that write into an output root.
type stageOptions struct {
	Out      string
	Workers  int
	Shard    string
	JSON     bool
	Quiet    bool
	Encoding string
	// WaitLock waits for the output root's lock instead of refusing.
	WaitLock bool
	// Command is the command line, recorded in the output root's lock.
	Command string
	// NoEvaluate skips the evaluate stage at the end of run.
	NoEvaluate bool
}

func (o *stageOptions) addFlags(cmd *cobra.Command) {
	cmd.Flags().StringVarP(&o.Out, "out", "o", "", "output root (required; never inside the recordings root)")
	cmd.Flags().IntVarP(&o.Workers, "jobs", "j", 0, "clips processed at once (0 = one per available CPU)")
	cmd.Flags().StringVar(&o.Shard, "shard", "", "process shard I of N only, as I/N (default: from JOB_COMPLETION_INDEX or SLURM_ARRAY_TASK_ID, else all)")
	cmd.Flags().BoolVar(&o.JSON, "json", false, "progress and summary as JSON lines on stdout")
	cmd.Flags().BoolVarP(&o.Quiet, "quiet", "q", false, "no progress output")
	cmd.Flags().StringVar(&o.Encoding, "encoding", "pcm16", "encoding of written clips: pcm16, pcm24 or float32")
}

func (o *stageOptions) validate() error {
	if o.Out == "" {
		return &usageError{fmt.Errorf("--out is required")}
	}
	if _, err := o.encoding(); err != nil {
		return &usageError{err}
	}
	if _, err := o.shard(); err != nil {
		return &usageError{err}
	}
	return nil
}

func (o *stageOptions) encoding() (wavioEncoding, error) { return parseEncoding(o.Encoding) }

// shard resolves --shard, else the batch scheduler's environment: a
// Kubernetes Indexed Job sets JOB_COMPLETION_INDEX (the count comes from
// THRUM_SHARDS or --shard /N), a Slurm job array SLURM_ARRAY_TASK_ID and
// SLURM_ARRAY_TASK_COUNT.
func (o *stageOptions) shard() (augment.Shard, error) {
	return resolveShard(o.Shard, os.Getenv)
}

func resolveShard(flag string, getenv func(string) string) (augment.Shard, error) {
	parse := func(i, n string) (augment.Shard, error) {
		ii, err1 := strconv.Atoi(strings.TrimSpace(i))
		nn, err2 := strconv.Atoi(strings.TrimSpace(n))
		if err1 != nil || err2 != nil || nn < 1 || ii < 0 || ii >= nn {
			return augment.Shard{}, fmt.Errorf("shard %q/%q: need 0 ≤ I < N", i, n)
		}
		return augment.Shard{I: ii, N: nn}, nil
	}
	if flag != "" {
		i, n, ok := strings.Cut(flag, "/")
		if !ok {
			return augment.Shard{}, fmt.Errorf("--shard %q: use I/N, e.g. 0/4", flag)
		}
		if i == "" {
			i = firstNonEmpty(getenv("JOB_COMPLETION_INDEX"), getenv("SLURM_ARRAY_TASK_ID"))
		}
		return parse(i, n)
	}
	if i := getenv("JOB_COMPLETION_INDEX"); i != "" {
		n := getenv("THRUM_SHARDS")
		if n == "" {
			return augment.Shard{}, fmt.Errorf("JOB_COMPLETION_INDEX is set but the shard count is not: set THRUM_SHARDS or --shard /N")
		}
		return parse(i, n)
	}
	if i := getenv("SLURM_ARRAY_TASK_ID"); i != "" {
		n := firstNonEmpty(getenv("THRUM_SHARDS"), getenv("SLURM_ARRAY_TASK_COUNT"))
		if n == "" {
			return augment.Shard{}, fmt.Errorf("SLURM_ARRAY_TASK_ID is set but SLURM_ARRAY_TASK_COUNT is not")
		}
		return parse(i, n)
	}
	return augment.Shard{}, nil
}

func firstNonEmpty(s ...string) string {
	for _, x := range s {
		if x != "" {
			return x
		}
	}
	return ""
}

func (o *stageOptions) renderer(g *globals) *renderer {
	mode := progressAuto
	switch {
	case o.Quiet:
		mode = progressQuiet
	case o.JSON:
		return newRenderer(g.stdout, progressJSON)
	}
	return newRenderer(g.stderr, mode)
}

// loadPlant loads a plant, refuses an output root that overlaps its
// recordings root, and scans its recordings (hashes, no levels).
func loadPlant(ctx context.Context, plantPath, out string) (*machine.Inventory, error) {
	p, err := machine.Load(plantPath)
	if err != nil {
		return nil, err
	}
	if err := augment.CheckOutput(p, out); err != nil {
		return nil, err
	}
	return machine.Scan(ctx, p, machine.ScanOptions{})
}

// startAugment prints the scan's problems and returns the stage options of
// expand and faults with the progress renderer they report to.
func startAugment(g *globals, inv *machine.Inventory, o stageOptions) (augment.Options, *renderer, error) {
	for _, pr := range inv.Problems {
		fmt.Fprintf(g.stderr, "survey: %s\n", pr)
	}
	r := o.renderer(g)
	opt, err := augmentOptions(inv, o, r)
	return opt, r, err
}

// augmentOptions translates the flags into the stage options; the
// training policy comes from the split package.
func augmentOptions(inv *machine.Inventory, o stageOptions, r *renderer) (augment.Options, error) {
	enc, err := o.encoding()
	if err != nil {
		return augment.Options{}, err
	}
	sh, err := o.shard()
	if err != nil {
		return augment.Options{}, err
	}
	return augment.Options{Out: o.Out, Policy: split.TrainingPolicy(inv), Workers: o.Workers,
		Encoding: enc, Shard: sh, Progress: r.event}, nil
}

func newExpandCmd(g *globals) *cobra.Command {
	var o stageOptions
	cmd := &cobra.Command{
		Use:   "expand PLANT.toml --out DIR",
		Short: "Write recorded clips and their physics-aware variants, with a ledger per machine",
		Long: `expand cuts every recording into clips, writes them (origin recorded) and, for normal
clips of conditions that are not held out, the variants of the condition's recipe (origin
augmented). Each variant is checked by the credibility guard (speed band, SNR, clipping,
RT60); rejected variants are recorded in the ledger with their reason. A rerun verifies and
skips what is already done, so an interrupted expand resumes to the same bytes.
Steps tempo and pitch are NON-PHYSICAL (they break the link between speed and every
harmonic); they are off unless a recipe sets nonphysical = true, and marked in the ledger.`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if err := o.validate(); err != nil {
				return err
			}
			o.Command = commandLine(cmd, args)
			return runAugmentStage(cmd.Context(), g, o, args[0], "expand")
		},
	}
	o.addFlags(cmd)
	o.addLockFlag(cmd)
	return cmd
}

func newFaultsCmd(g *globals) *cobra.Command {
	var o stageOptions
	cmd := &cobra.Command{
		Use:   "faults PLANT.toml --out DIR",
		Short: "Write labelled synthetic fault cues (training only) from machine geometry and speed",
		Long: `faults adds synthetic fault cues to normal clips of machines with a [machine.faults] plan:
bearing defects (outer race, inner race, ball, cage) at the rates given by the bearing
geometry and the clip's actual shaft speed, impacts, imbalance, misalignment and gear-tooth
faults. Every file is labelled anomalous with origin synthetic-fault, its kind, defect
frequencies, shaft rate, severity and seed, and can never be placed in eval or test.`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if err := o.validate(); err != nil {
				return err
			}
			o.Command = commandLine(cmd, args)
			return runAugmentStage(cmd.Context(), g, o, args[0], "faults")
		},
	}
	o.addFlags(cmd)
	o.addLockFlag(cmd)
	return cmd
}

func runAugmentStage(ctx context.Context, g *globals, o stageOptions, plantPath, stage string) error {
	p, err := machine.Load(plantPath)
	if err != nil {
		return err
	}
	sh, err := o.shard()
	if err != nil {
		return err
	}
	lock, err := holdOut(ctx, g, p, o, ledger.Shard(sh))
	if err != nil {
		return err
	}
	defer lock.Release()
	inv, err := machine.Scan(ctx, p, machine.ScanOptions{})
	if err != nil {
		return err
	}
	opt, r, err := startAugment(g, inv, o)
	if err != nil {
		return err
	}
	var sums []augment.Summary
	if stage == "faults" {
		sums, err = augment.Faults(ctx, inv, opt)
	} else {
		sums, err = augment.Expand(ctx, inv, opt)
	}
	r.finish()
	if err != nil {
		return err
	}
	printUndefined(g, stage, sums)
	printSummaries(g, o.JSON, stage, sums)
	for _, s := range sums {
		printStale(g, stage, o.Out, s.Stale)
	}
	return nil
}

// printUndefined names on stderr each cause of rejections for a value that
// could not be measured (the ledger lines hold the same text).
func printUndefined(g *globals, stage string, sums []augment.Summary) {
	for _, s := range sums {
		for _, why := range slices.Sorted(maps.Keys(s.Undefined)) {
			fmt.Fprintf(g.stderr, "%s: %s: %d variant(s) rejected, %s\n", stage, s.Machine, s.Undefined[why], why)
		}
	}
}

func printSummaries(g *globals, asJSON bool, stage string, sums []augment.Summary) {
	if asJSON {
		for _, s := range sums {
			writeJSONLine(g.stdout, map[string]any{"event": "summary", "stage": stage, "machine": s.Machine, "clips": s.Clips,
				"written": s.Written, "reused": s.Reused, "recorded": s.Recorded, "augmented": s.Augmented,
				"faults": s.Faults, "rejected": s.Rejected})
		}
		return
	}
	for _, s := range sums {
		rej := 0
		var parts []string
		for reason, n := range s.Rejected {
			rej += n
			parts = append(parts, fmt.Sprintf("%s %d", reason, n))
		}
		line := fmt.Sprintf("%s %-14s clips %4d  outputs %5d (%d reused)", stage, s.Machine, s.Clips, s.Written, s.Reused)
		if stage == "expand" {
			line += fmt.Sprintf("  recorded %d  augmented %d  rejected %d", s.Recorded, s.Augmented, rej)
			if len(parts) > 0 {
				line += " (" + strings.Join(sortedStrings(parts), ", ") + ")"
			}
		} else {
			var fk []string
			for k, n := range s.Faults {
				fk = append(fk, fmt.Sprintf("%s %d", k, n))
			}
			line += "  " + strings.Join(sortedStrings(fk), ", ")
		}
		fmt.Fprintln(g.stdout, line)
	}
}
