package main

import (
	"fmt"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

	"thrum/machine/demoplant"
)

func newInitCmd(g *globals) *cobra.Command {
	var force bool
	cmd := &cobra.Command{
		Use:   "init DIR",
		Short: "Write a commented example plant.toml for an invented plant",
		Args:  exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			g.caution()
			if err := os.MkdirAll(args[0], 0o755); err != nil {
				return err
			}
			path := filepath.Join(args[0], "plant.toml")
			if _, err := os.Stat(path); err == nil && !force {
				return fmt.Errorf("init: %s exists; use --force to overwrite", path)
			}
			tmp := path + ".tmp"
			if err := os.WriteFile(tmp, []byte(demoplant.ExampleTOML()), 0o644); err != nil {
				return err
			}
			if err := os.Rename(tmp, path); err != nil {
				return err
			}
			fmt.Fprintf(g.stdout, "wrote %s: edit it, put recordings under its recordings root and the background recordings where its [[background]] paths say, then run: thrum survey %s\n", path, path)
			return nil
		},
	}
	cmd.Flags().BoolVar(&force, "force", false, "overwrite an existing plant.toml")
	return cmd
}
