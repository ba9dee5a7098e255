package main

import (
	"context"
	"fmt"

	"github.com/spf13/cobra"

	"thrum/features"
	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/split"
)

func newFeaturesCmd(g *globals) *cobra.Command {
	var o stageOptions
	cmd := &cobra.Command{
		Use:   "features PLANT.toml --out DIR",
		Short: "Compute log-mel and envelope-spectrum features (.npy), train-only statistics and pictures",
		Long: `features reads DIR/splits/lists.csv and writes, under DIR/features/: a float32 .npy log-mel
array (frames × bands) per clip, its envelope spectrum, masked copies of training clips
(SpecAugment-style, logged in the ledger), normalisation statistics per machine fitted on
training clips only, PNG pictures, and index.csv: one row per log-mel file (clips and masked
copies) with its machine, condition, group, source, clip, origin, label, fault kind, speed,
split and use (train-normal: input of a normal-only detector; synthetic-anomaly: training
fault cues; eval, test: evaluation files, normal and anomalous). Excluded files get no features.

Log-mel values are dB re the power of the FFT bin a full-scale (amplitude 1) sine centred on
that bin falls on: 10·log10(mel power × 16/n_fft²). A band adds the Hann window's
neighbouring bins too, so a full-scale sine on a band's peak reads between 0 dB (a band one
bin wide) and +1.76 dB (a band many bins wide); +1.54 dB at 5421.875 Hz in band 110 with
n_fft 1024, 128 bands at 16 kHz. Values are floored at −100 dB.

A rerun skips every clip whose audio hash and feature settings (hashed into the index's
settings_sha256) are unchanged and whose files are intact: no audio is read and no file is
rewritten.`,
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
			sums, err := runFeatures(cmd.Context(), g, o, p)
			if err != nil {
				return err
			}
			for _, s := range sums {
				if s.Files > 0 {
					fmt.Fprintf(g.stdout, "features %-14s files %5d  reused %5d  masked copies %5d  statistics from %d training clips\n", s.Machine, s.Files, s.Reuse, s.Masked, s.StatsInputs)
				}
				printStale(g, "features", o.Out, s.Stale)
			}
			return nil
		},
	}
	cmd.Flags().StringVarP(&o.Out, "out", "o", "", "output root (required)")
	o.addLockFlag(cmd)
	cmd.Flags().IntVarP(&o.Workers, "jobs", "j", 0, "files processed at once (0 = one per available CPU)")
	cmd.Flags().BoolVarP(&o.Quiet, "quiet", "q", false, "no progress output")
	cmd.Flags().BoolVar(&o.JSON, "json", false, "progress as JSON lines on stdout")
	return cmd
}

func runFeatures(ctx context.Context, g *globals, o stageOptions, p *machine.Plant) ([]features.StageSummary, error) {
	rows, _, err := split.ReadSplits(o.Out)
	if err != nil {
		return nil, fmt.Errorf("features: %w (run split first)", err)
	}
	clips := map[string]int{}
	kinds := map[string]string{}
	entries, err := ledger.ReadTree(o.Out)
	if err != nil {
		return nil, err
	}
	for _, e := range entries {
		clips[e.Path] = e.Clip
		if e.Fault != nil {
			kinds[e.Path] = e.Fault.Kind
		}
	}
	var inputs []features.Input
	for _, r := range rows {
		if r.Split == split.Excluded {
			continue
		}
		inputs = append(inputs, features.Input{Path: r.Path, SHA256: r.SHA256, Machine: r.Machine, Condition: r.Condition,
			Split: r.Split, Origin: r.Origin, Label: r.Label, Source: r.Source, SourceSHA256: r.SourceSHA256, Group: r.Group,
			Clip: clips[r.Path], FaultKind: kinds[r.Path], Speed: r.Speed})
	}
	rd := o.renderer(g)
	sums, err := features.RunStage(ctx, p, inputs, features.StageOptions{Out: o.Out, Workers: o.Workers,
		Progress: rd.event})
	rd.finish()
	return sums, err
}
