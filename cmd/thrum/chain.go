package main

import (
	"fmt"
	"time"

	"github.com/spf13/cobra"

	"thrum/augment"
)

func newChainCmd(g *globals) *cobra.Command {
	var o augment.ChainOptions
	var enc string
	cmd := &cobra.Command{
		Use:   "chain IN_DIR --out DIR [--speed R] [--ir IR.wav] [--background BG.wav --snr DB] [--gain DB]",
		Short: "Apply one fixed chain of steps to every WAV file of a folder (no plant, no ledger)",
		Long: `chain applies, in this order, a speed change (bandlimited resampling: pitch and tempo
together), a convolution with an impulse-response file scaled to unit energy (causal, cut to
the input length), a background file at an SNR (mean square over the clip; file i of the sorted
list takes the background from (i mod --offset-cycle)·--offset-step seconds on), and a gain,
to every .wav file in IN_DIR. It is for one-off batches and throughput comparisons; use
expand for datasets.`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			o.In = args[0]
			if o.Out == "" {
				return &usageError{fmt.Errorf("--out is required")}
			}
			e, err := parseEncoding(enc)
			if err != nil {
				return &usageError{err}
			}
			o.Encoding = e
			t0 := time.Now()
			n, frames, err := augment.ChainFolder(cmd.Context(), o)
			if err != nil && !isFailedFiles(err) {
				return err
			}
			fmt.Fprintf(g.stdout, "files=%d frames_in=%d wall_s=%.3f\n", n, frames, time.Since(t0).Seconds())
			return failedFiles(err)
		},
	}
	f := cmd.Flags()
	f.StringVarP(&o.Out, "out", "o", "", "output folder (required)")
	f.Float64Var(&o.Speed, "speed", 1, "speed ratio (>1 faster and higher)")
	f.StringVar(&o.IR, "ir", "", "impulse-response WAV file")
	f.StringVar(&o.Background, "background", "", "background WAV file")
	f.Float64Var(&o.SNR, "snr", 10, "background SNR in dB")
	f.Float64Var(&o.OffsetStep, "offset-step", 1, "background offset step in seconds")
	f.IntVar(&o.OffsetCycle, "offset-cycle", 20, "background offsets repeat after this many files")
	f.Float64Var(&o.GainDB, "gain", 0, "final gain in dB")
	f.IntVarP(&o.Workers, "jobs", "j", 0, "files processed at once (0 = one per available CPU)")
	f.StringVar(&enc, "encoding", "pcm16", "output encoding: pcm16, pcm24 or float32")
	return cmd
}
