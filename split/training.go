package split

import "thrum/machine"

// Training is the evaluation-safety policy the expand and faults stages
// follow before any split is made: which clips of normal recordings will
// be training clips (only those get variants and fault cues; those of eval
// and test groups, and the guard gaps between blocks, would be excluded
// anyway) and which backgrounds a training variant may mix in (the
// training share of the background partition, so no background heard in
// eval or test is learnt). It gives the answers Assign later gives: it
// decides the same groups, named by Plant.ClipGroup as the ledger names
// them, by the same Decide, from the plant and its inventory alone.
type Training struct {
	pol         Policy
	plant       *machine.Plant
	decision    map[groupKey]Decision
	guard       map[clipKey]bool
	backgrounds []string
}

// TrainingPolicy builds the training policy of a scanned plant. The
// inventory's usable recordings are the groups Assign will see (each
// writes its recorded clips); a plant whose pins or fractions cannot be
// decided gets a policy under which nothing trains (the split stage then
// reports the error).
func TrainingPolicy(inv *machine.Inventory) *Training {
	p := inv.Plant
	pol := PolicyFromPlant(p)
	part := AssignBackgrounds(pol.Backgrounds, pol)
	t := &Training{pol: pol, plant: p, backgrounds: []string{}}
	for _, id := range pol.Backgrounds {
		if part[id] == machine.SplitTrain {
			t.backgrounds = append(t.backgrounds, id)
		}
	}
	var infos []GroupInfo
	var clips []blockClip
	for _, r := range inv.Recordings {
		if !r.Usable() {
			continue
		}
		c := p.Machine(r.Machine).Condition(r.Condition)
		for _, cl := range r.Clips {
			g := p.ClipGroup(r, cl)
			infos = append(infos, GroupInfo{Machine: r.Machine, Condition: r.Condition, Group: g,
				Anomalous: r.Label == machine.LabelAnomalous, HoldOut: c != nil && c.HoldOut})
			clips = append(clips, blockClip{r.Machine, g, cl.Index})
		}
	}
	dec, err := pol.Decide(mergeInfos(infos))
	if err != nil {
		dec = map[groupKey]Decision{}
	}
	t.decision = dec
	t.guard = guardClips(clips, dec)
	return t
}

// mergeInfos joins the entries of one group (a group is anomalous when any
// of its recordings is).
func mergeInfos(in []GroupInfo) []GroupInfo {
	at := map[groupKey]int{}
	var out []GroupInfo
	for _, g := range in {
		k := groupKey{g.Machine, g.Group}
		if i, ok := at[k]; ok {
			out[i].Anomalous = out[i].Anomalous || g.Anomalous
			out[i].HoldOut = out[i].HoldOut || g.HoldOut
			continue
		}
		at[k] = len(out)
		out = append(out, g)
	}
	return out
}

// Trains reports whether clip c of recording r will be a training clip:
// its group goes to train and it is no guard gap.
func (t *Training) Trains(r *machine.Recording, c machine.Clip) bool {
	g := t.plant.ClipGroup(r, c)
	if t.decision[groupKey{r.Machine, g}].Split != machine.SplitTrain {
		return false
	}
	return !t.guard[clipKey{r.Machine, g, c.Index}]
}

// Split returns the decision for one group, and whether the inventory
// has that group.
func (t *Training) Split(machineID, group string) (Decision, bool) {
	d, ok := t.decision[groupKey{machineID, group}]
	return d, ok
}

// Backgrounds returns the ids of the plant's backgrounds a training
// variant may mix in, in the plant's order (empty when none may be).
func (t *Training) Backgrounds() []string {
	return append([]string{}, t.backgrounds...)
}
