package augment

import (
	"errors"

	"thrum/machine"
	"thrum/machine/pool"
	"thrum/machine/wavio"
)

// The stage options: what the expand and faults stages are given and what
// they report.

// Policy is the evaluation-safety policy the expand and faults stages
// follow: split.TrainingPolicy(inventory) builds it from the plant and
// its inventory, so the
// stages make variants and fault cues only where the split will train.
type Policy interface {
	// Trains reports whether clip c of a normal recording r will be a
	// training clip: its group (Plant.ClipGroup) goes to train and it is no
	// guard gap between blocks. Variants and fault cues are made only for
	// those (the split would exclude the others).
	Trains(r *machine.Recording, c machine.Clip) bool
	// Backgrounds returns the ids of the background files a training
	// variant may mix in: the training share of the background partition.
	// Empty: plant noise is synthesised instead.
	Backgrounds() []string
}

// Options configure the expand and faults stages. Out and Policy are
// required: the stages refuse to run without them.
type Options struct {
	// Out is the output root; it must not be inside the recordings root.
	Out string
	// Policy decides which groups get variants and fault cues and which
	// backgrounds they may mix in (split.TrainingPolicy).
	Policy Policy
	// Workers is the number of recordings processed at once
	// (pool.Size(Workers) goroutines).
	Workers int
	// Encoding of the written clips (0 = 16-bit PCM).
	Encoding wavio.Encoding
	// Shard limits the work to one shard (zero value: everything).
	Shard Shard
	// Progress, when set, is called after each clip (counted in clips)
	// from one goroutine at a time.
	Progress func(pool.Event)
}

// check refuses options the stages cannot run safely with.
func (o Options) check() error {
	if o.Out == "" {
		return errors.New("augment: no output folder")
	}
	if o.Policy == nil {
		return errors.New("augment: Options.Policy is required: build it with split.TrainingPolicy(inventory), so only training groups get variants and only training backgrounds are mixed in")
	}
	return nil
}

// Summary counts what a stage did per machine id.
type Summary struct {
	Machine  string
	Clips    int
	Written  int // outputs written or verified this run
	Reused   int // outputs already present with matching ledger entry and hash
	Rejected map[string]int
	// Undefined counts the rejections for a value that could not be
	// measured, by "<reason>: <why>" (the why names the step and the
	// background, room or file).
	Undefined map[string]int
	Faults    map[string]int
	Recorded  int
	Augmented int
	// Stale lists the outputs no ledger line names any more, moved to
	// OUT/.stale by an unsharded run (paths relative to Out, as they were).
	Stale []string
	// Excluded lists the recordings the expand stage did not use because
	// of their samples or the quality gate, as "<path>: <kind>: <message>"
	// in ledger order.
	Excluded []string
}
