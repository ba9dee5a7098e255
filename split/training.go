package split

import "thrum/machine"

// Training is the evaluation-safety policy the expand and faults stages
// follow before any split is made: which groups of normal recordings will
// be training groups (only those get variants and fault cues; those of
// eval and test groups would be excluded anyway) and which backgrounds a
// training variant may mix in (the training share of the background
// partition, so no background heard in eval or test is learnt). It gives
// the answers Assign later gives, from the same policy.
type Training struct {
	pol         Policy
	backgrounds []string
}

// TrainingPolicy builds the training policy of a loaded plant.
func TrainingPolicy(p *machine.Plant) *Training {
	pol := PolicyFromPlant(p)
	part := AssignBackgrounds(pol.Backgrounds, pol)
	t := &Training{pol: pol, backgrounds: []string{}}
	for _, id := range pol.Backgrounds {
		if part[id] == machine.SplitTrain {
			t.backgrounds = append(t.backgrounds, id)
		}
	}
	return t
}

// Trains reports whether a group of normal recordings of a machine's
// condition that is not held out will be a training group.
func (t *Training) Trains(machineID, group string) bool {
	return t.pol.NormalGroupSplit(machineID, group) == machine.SplitTrain
}

// Backgrounds returns the ids of the plant's backgrounds a training
// variant may mix in, in the plant's order (empty when none may be).
func (t *Training) Backgrounds() []string {
	return append([]string{}, t.backgrounds...)
}
