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
}

func newSurveyCmd(g *globals) *cobra.Command {
	var o surveyOptions
	cmd := &cobra.Command{
		Use:   "survey PLANT.toml",
		Short: "Inventory recordings per machine id and condition: levels, clipping, DC, rate checks",
		Long: `survey reads every recording of the plant and reports, per machine id and condition:
recordings, clips, duration, sample rates, channels, RMS and peak dBFS, clipped fraction,
DC offset, and problems (unreadable files with the reason, rate mismatch, conditions with no
recordings, recordings shorter than one clip). One bad file never stops the survey.`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			return runSurvey(cmd.Context(), g, o, args[0])
		},
	}
	cmd.Flags().BoolVar(&o.JSON, "json", false, "print the survey as JSON on stdout")
	cmd.Flags().BoolVar(&o.Strict, "strict", false, "exit with code 3 when any problem is found")
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
	if o.Strict && faults > 0 {
		return &problemsError{fmt.Sprintf("survey found %d problem(s)", faults)}
	}
	return nil
}
