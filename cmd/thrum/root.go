package main

import (
	"fmt"
	"io"
	"os"
	"runtime/pprof"
	"sync"

	"github.com/spf13/cobra"

	"thrum/machine"
	"thrum/machine/exposure"
)

// globals are the options every command shares.
type globals struct {
	stdout, stderr io.Writer
	// noCaution silences the recording-safety caution.
	noCaution bool
	once      sync.Once
}

// caution prints the safety caution once per process on stderr.
func (g *globals) caution() {
	if g.noCaution {
		return
	}
	g.once.Do(func() { fmt.Fprintf(g.stderr, "%s\n", exposure.Caution) })
}

func newRootCmd(stdout, stderr io.Writer) *cobra.Command {
	g := &globals{stdout: stdout, stderr: stderr}
	root := &cobra.Command{
		Use:   "thrum",
		Short: "Build acoustic anomaly-detection training sets for plant machinery",
		Long: `thrum turns normal-operation recordings of plant machinery into a training set for
acoustic anomaly detectors: per machine id and operating condition, augmented only in ways
the physics allows, with labelled synthetic fault cues kept out of evaluation, leak-proof
splits with an audit, features ready for training, and a ledger of everything done.`,
		SilenceUsage:  true,
		SilenceErrors: true,
		Version:       machine.ToolVersion,
	}
	// ToolVersion already starts with the tool's name.
	root.SetVersionTemplate("{{.Version}}\n")
	root.SetOut(stdout)
	root.SetErr(stderr)
	root.PersistentFlags().BoolVar(&g.noCaution, "no-caution", false, "do not print the recording-safety caution")
	var profile string
	root.PersistentFlags().StringVar(&profile, "cpu-profile", "", "write a CPU profile to this file (for development)")
	root.PersistentFlags().MarkHidden("cpu-profile")
	var memProfile string
	root.PersistentFlags().StringVar(&memProfile, "mem-profile", "", "write a heap profile to this file at the end (for development)")
	root.PersistentFlags().MarkHidden("mem-profile")
	var stopProfile func()
	root.PersistentPreRunE = func(cmd *cobra.Command, args []string) error {
		if profile == "" {
			return nil
		}
		f, err := os.Create(profile)
		if err != nil {
			return err
		}
		if err := pprof.StartCPUProfile(f); err != nil {
			return err
		}
		stopProfile = func() { pprof.StopCPUProfile(); f.Close() }
		return nil
	}
	root.PersistentPostRun = func(cmd *cobra.Command, args []string) {
		if stopProfile != nil {
			stopProfile()
		}
		if memProfile != "" {
			if f, err := os.Create(memProfile); err == nil {
				pprof.Lookup("allocs").WriteTo(f, 0)
				f.Close()
			}
		}
	}
	root.SetFlagErrorFunc(func(_ *cobra.Command, err error) error { return &usageError{err} })
	root.AddCommand(
		newInitCmd(g),
		newDemoCmd(g),
		newSurveyCmd(g),
		newExposureCmd(g),
		newExpandCmd(g),
		newFaultsCmd(g),
		newReplayCmd(g),
		newServeCmd(g),
		newChainCmd(g),
		newSplitCmd(g),
		newFeaturesCmd(g),
		newRunCmd(g),
		newEvaluateCmd(g),
		newLogMelCmd(g),
		newAuditCmd(g),
	)
	return root
}

// exactArgs is cobra.ExactArgs reported as a usage error.
func exactArgs(n int) cobra.PositionalArgs {
	return func(cmd *cobra.Command, args []string) error {
		if err := cobra.ExactArgs(n)(cmd, args); err != nil {
			return &usageError{err}
		}
		return nil
	}
}

func rangeArgs(lo, hi int) cobra.PositionalArgs {
	return func(cmd *cobra.Command, args []string) error {
		if err := cobra.RangeArgs(lo, hi)(cmd, args); err != nil {
			return &usageError{err}
		}
		return nil
	}
}
