package main

import (
	"context"
	"fmt"
	"path/filepath"

	"github.com/spf13/cobra"

	"thrum/machine/demoplant"
)

type demoOptions struct {
	Seed    uint64
	Workers int
	Quiet   bool
}

func newDemoCmd(g *globals) *cobra.Command {
	var o demoOptions
	cmd := &cobra.Command{
		Use:   "demo DIR",
		Short: "Synthesise an invented example plant in DIR and run the whole pipeline on it",
		Long: `demo writes an invented plant (machines, conditions, a room, recordings synthesised from
machine physics, a plant background recording and plant.toml) into DIR, then runs every
stage on it. It is the quickest way to see what thrum does.`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runDemo(cmd.Context(), g, o, args[0])
		},
	}
	cmd.Flags().Uint64Var(&o.Seed, "seed", 0, "seed of the invented plant (0 = the built-in one, chosen so every condition fills train, eval and test)")
	cmd.Flags().IntVarP(&o.Workers, "jobs", "j", 0, "clips processed at once (0 = one per available CPU)")
	cmd.Flags().BoolVarP(&o.Quiet, "quiet", "q", false, "no progress output")
	return cmd
}

func runDemo(ctx context.Context, g *globals, o demoOptions, dir string) error {
	g.caution()
	plantPath, err := demoplant.Write(dir, demoplant.Options{Seed: o.Seed})
	if err != nil {
		return err
	}
	fmt.Fprintf(g.stdout, "demo plant written: %s\n\n", plantPath)
	if err := runSurvey(ctx, g, surveyOptions{}, plantPath); err != nil {
		return err
	}
	out := filepath.Join(dir, "out")
	fmt.Fprintf(g.stdout, "\nrunning the pipeline: thrum run %s --out %s\n", plantPath, out)
	return runPipeline(ctx, g, stageOptions{Out: out, Workers: o.Workers, Quiet: o.Quiet, Command: "thrum demo " + dir}, plantPath)
}
