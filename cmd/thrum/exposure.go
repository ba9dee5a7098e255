package main

import (
	"fmt"
	"strconv"

	"github.com/spf13/cobra"

	"thrum/machine/exposure"
)

func newExposureCmd(g *globals) *cobra.Command {
	return &cobra.Command{
		Use:   "exposure LEVEL_DBA [HOURS]",
		Short: "Permitted daily exposure time and dose at a sound level (NIOSH, OSHA, EU values)",
		Long: `exposure prints, for an A-weighted sound level at the listening position, the permitted
daily duration under the NIOSH recommended limit (85 dB(A), 3 dB exchange rate) and the OSHA
permissible limit (90 dB(A), 5 dB exchange rate), the dose for the given hours (default 8),
and the EU Directive 2003/10/EC action and limit values the exposure reaches. It is a planning
aid: local regulations and the site's safety rules take precedence.`,
		Args: rangeArgs(1, 2),
		RunE: func(cmd *cobra.Command, args []string) error {
			level, err := strconv.ParseFloat(args[0], 64)
			if err != nil {
				return &usageError{fmt.Errorf("exposure: level %q is not a number", args[0])}
			}
			hours := float64(exposure.ReferenceHours)
			if len(args) == 2 {
				if hours, err = strconv.ParseFloat(args[1], 64); err != nil {
					return &usageError{fmt.Errorf("exposure: hours %q is not a number", args[1])}
				}
			}
			r, err := exposure.NewReport(level, hours)
			if err != nil {
				return &usageError{err}
			}
			return r.Format(g.stdout)
		},
	}
}
