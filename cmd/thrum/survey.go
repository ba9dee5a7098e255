package main

import (
	"context"
	"fmt"

	"github.com/spf13/cobra"

	"thrum/machine"
)

type surveyOptions struct {
	JSON   bool
	Strict bool
	// Out is the planned output folder, for the disk-space check.
	Out string
}

func newSurveyCmd(g *globals) *cobra.Command {
	var o surveyOptions
	cmd := &cobra.Command{
		Use:   "survey PLANT.toml",
		Short: "Inventory recordings per machine id and condition: levels, clipping, DC, rate checks",
		Long: `survey reads every recording of the plant and reports, per machine id and condition:
recordings, clips, duration, sample rates, channels, RMS and peak dBFS, clipped fraction,
DC offset, and problems (unreadable files with the reason, rate mismatch, conditions with no
recordings, recordings shorter than one clip, undeclared condition folders) and the quality gate's
exclusions (clipped, DC offset, quiet; thresholds in [quality]), with each condition's worst file.
One bad file never stops the survey.

It then runs the preflight checks that run does before writing anything: split feasibility,
hold-out conflicts, background files, recipes that cannot apply, and the planned outputs' size
(compared with the free space of --out when given).`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runSurvey(cmd.Context(), g, o, args[0])
		},
	}
	cmd.Flags().BoolVar(&o.JSON, "json", false, "print the survey as JSON on stdout")
	cmd.Flags().BoolVar(&o.Strict, "strict", false, "exit with code 3 when any problem or preflight error is found")
	cmd.Flags().StringVar(&o.Out, "out", "", "planned output folder: compare the outputs' size estimate with its free space")
	return cmd
}

func runSurvey(ctx context.Context, g *globals, o surveyOptions, plantPath string) error {
	g.caution()
	p, err := machine.Load(plantPath)
	if err != nil {
		return err
	}
	inv, err := machine.Scan(ctx, p, machine.ScanOptions{Levels: true})
	if err != nil {
		return err
	}
	s := machine.Summarise(inv)
	s.Preflight = machine.Preflight(inv, machine.PreflightOptions{Out: o.Out})
	if o.JSON {
		err = s.WriteJSON(g.stdout)
	} else {
		err = s.WriteText(g.stdout)
	}
	if err != nil {
		return err
	}
	faults := 0
	for _, p := range s.Problems {
		if !p.Note() {
			faults++
		}
	}
	if o.Strict && (faults > 0 || !s.Preflight.OK()) {
		return &problemsError{fmt.Sprintf("survey found %d problem(s) and %d preflight error(s)", faults, len(s.Preflight.Errors))}
	}
	return nil
}
