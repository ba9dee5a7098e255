package split

import (
	"context"
	"fmt"

	"thrum/machine"
	"thrum/machine/ledger"
)

// Result is what the split stage did.
type Result struct {
	// Rows are every output with its split, as written to lists.csv.
	Rows []Row
	// Summary counts files and groups per machine, split, origin and label.
	Summary []Summary
	// Warnings name splits left empty (see EmptySplits).
	Warnings []string
}

// Run runs the split stage on an output root: it joins any shard ledger
// parts, reads every machine's ledger, assigns each output to train, eval
// or test by the plant's policy and writes the lists under out/splits/.
func Run(ctx context.Context, p *machine.Plant, out string) (*Result, error) {
	if _, err := ledger.Merge(p, out); err != nil {
		return nil, err
	}
	tree, err := ledger.ReadTreeContext(ctx, out)
	if err != nil {
		return nil, err
	}
	// only the plant's machines: a ledger left by a machine since removed
	// from plant.toml is not split
	var all []ledger.Entry
	for _, e := range tree {
		if p.Machine(e.Machine) != nil {
			all = append(all, e)
		}
	}
	if len(all) == 0 {
		return nil, fmt.Errorf("split: no ledger lines under %s: run expand first", out)
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	pol := PolicyFromPlant(p)
	rows, err := Assign(ctx, ItemsFromLedger(all), pol)
	if err != nil {
		return nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	if err := WriteSplits(out, rows, pol); err != nil {
		return nil, err
	}
	return &Result{Rows: rows, Summary: Summarize(rows), Warnings: EmptySplits(rows, pol)}, nil
}
