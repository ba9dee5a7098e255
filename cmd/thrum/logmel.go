package main

import (
	"fmt"
	"time"

	"github.com/spf13/cobra"

	"thrum/features"
)

func newLogMelCmd(g *globals) *cobra.Command {
	var cfg features.Config
	var workers int
	var out string
	var numpyLog bool
	cmd := &cobra.Command{
		Use:   "logmel IN_DIR --out DIR",
		Short: "Compute log-mel features of every WAV file of a folder (.npy per file; no plant)",
		Long: `logmel writes one float32 .npy array (frames × bands) per .wav file of IN_DIR, with the
feature settings given by flags (defaults: n_fft 1024, hop 512, 128 HTK bands, unit-peak
triangles, no centre padding, 10·log10 of mel power with a -100 dB floor). --numpy-log writes
log10(mel power + 1e-10) instead, the form of a common numpy recipe.`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if out == "" {
				return &usageError{fmt.Errorf("--out is required")}
			}
			if numpyLog {
				cfg.Log = features.LogNumpy
			}
			t0 := time.Now()
			n, frames, err := features.FolderLogMel(cmd.Context(), args[0], out, cfg, workers)
			if err != nil && !isFailedFiles(err) {
				return err
			}
			fmt.Fprintf(g.stdout, "clips=%d frames=%d wall_s=%.3f\n", n, frames, time.Since(t0).Seconds())
			return failedFiles(err)
		},
	}
	f := cmd.Flags()
	f.StringVarP(&out, "out", "o", "", "output folder (required)")
	f.IntVar(&cfg.NFFT, "n-fft", 0, "FFT length, a power of two (0 = 1024)")
	f.IntVar(&cfg.Hop, "hop", 0, "hop in samples (0 = n_fft/2)")
	f.IntVar(&cfg.Bands, "bands", 0, "mel bands (0 = 128)")
	f.StringVar(&cfg.Scale, "scale", "", "mel scale: htk or slaney (default htk)")
	f.StringVar(&cfg.Norm, "norm", "", "triangle normalisation: peak or area (default peak)")
	f.BoolVar(&cfg.Center, "center", false, "pad by n_fft/2 at both ends (reflect)")
	f.BoolVar(&numpyLog, "numpy-log", false, "write log10(power + 1e-10) instead of dB")
	f.IntVarP(&workers, "jobs", "j", 0, "files processed at once (0 = one per available CPU)")
	return cmd
}
