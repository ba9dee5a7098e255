package main

import (
	"fmt"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

	"thrum/machine"
	"thrum/machine/demoplant"
)

type initOptions struct {
	Force bool
	// From is an existing recordings tree to derive the plant from.
	From string
	// Layout is the pattern of From's paths (default machine.DefaultLayout).
	Layout string
	// Manifest is a CSV listing the recordings instead of a layout.
	Manifest string
}

func newInitCmd(g *globals) *cobra.Command {
	var o initOptions
	cmd := &cobra.Command{
		Use:   "init DIR",
		Short: "Write a plant.toml: a commented example, or one derived from existing recordings (--from)",
		Long: `init writes DIR/plant.toml. Without --from it is a commented example for an invented plant.

With --from SRC it scans the recordings under SRC and writes a plant with the machines,
conditions and sessions it finds, the most common sample rate, and placeholders marked TODO
for the physics keys (kind, rpm, speed band); it loads as written. --layout gives the pattern
the paths follow below SRC: {machine}, {condition}, {session} and {label} match one name,
* any text inside a name, ** any number of folders (default "{machine}/{condition}/**", the
layout thrum reads directly; e.g. "{condition}/{machine}_*.wav"). A tree in another layout,
or with names that are not valid ids, is described by DIR/manifest.csv, which the plant
names with its manifest key. --manifest FILE.csv (columns path, machine, condition, session,
label; paths relative to SRC, or to the manifest's folder without --from) uses your own list.
SRC is only read.`,
		Args: exactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			g.caution()
			return runInit(g, o, args[0])
		},
	}
	cmd.Flags().BoolVar(&o.Force, "force", false, "overwrite an existing plant.toml (and manifest.csv)")
	cmd.Flags().StringVar(&o.From, "from", "", "derive the plant from the recordings under this folder")
	cmd.Flags().StringVar(&o.Layout, "layout", "", "pattern of the recordings' paths below --from (default \""+machine.DefaultLayout+"\")")
	cmd.Flags().StringVar(&o.Manifest, "manifest", "", "CSV listing the recordings (path, machine, condition, session, label)")
	return cmd
}

func runInit(g *globals, o initOptions, dir string) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	path := filepath.Join(dir, "plant.toml")
	if _, err := os.Stat(path); err == nil && !o.Force {
		return fmt.Errorf("init: %s exists; use --force to overwrite", path)
	}
	text := demoplant.ExampleTOML()
	var imp *machine.Import
	if o.From != "" || o.Manifest != "" {
		if o.Layout != "" && o.Manifest != "" {
			return fmt.Errorf("init: --layout and --manifest exclude each other")
		}
		root := o.From
		if root == "" {
			root = filepath.Dir(o.Manifest)
		}
		var err error
		imp, err = machine.ImportTree(root, dir, machine.ImportOptions{Layout: o.Layout, Manifest: o.Manifest})
		if err != nil {
			return err
		}
		text = imp.TOML
		if imp.Manifest != nil {
			mpath := filepath.Join(dir, machine.ManifestName)
			if _, err := os.Stat(mpath); err == nil && !o.Force {
				return fmt.Errorf("init: %s exists; use --force to overwrite", mpath)
			}
			if err := machine.WriteFileAtomic(mpath, imp.Manifest); err != nil {
				return err
			}
			fmt.Fprintf(g.stdout, "wrote %s\n", mpath)
		}
	} else if o.Layout != "" {
		return fmt.Errorf("init: --layout needs --from")
	}
	if err := machine.WriteFileAtomic(path, []byte(text)); err != nil {
		return err
	}
	if imp != nil {
		for _, s := range imp.Skipped {
			fmt.Fprintf(g.stderr, "init: %s does not match the layout; not listed\n", s)
		}
		fmt.Fprintf(g.stdout, "wrote %s from %d recording(s): replace its TODO placeholders (machine kinds, rpm, speed bands), add rooms, backgrounds and recipes, then run: thrum survey %s\n", path, imp.Recordings, path)
		return nil
	}
	fmt.Fprintf(g.stdout, "wrote %s: edit it, put recordings under its recordings root and the background recordings where its [[background]] paths say, then run: thrum survey %s\n", path, path)
	return nil
}
