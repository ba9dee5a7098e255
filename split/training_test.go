package split

import (
	"context"
	"fmt"
	"slices"
	"testing"

	"thrum/machine"
)

// The training policy the stage drivers follow before the split gives the
// answers Assign gives after it: a normal group trains exactly when Assign
// puts it in train, and the training backgrounds are exactly the train
// share of the background partition.
func TestTrainingPolicyAgreesWithAssign(t *testing.T) {
	for _, seed := range []uint64{1, 42, 1 << 40} {
		p := &machine.Plant{Seed: seed, Split: machine.SplitFractions{Train: 0.6, Eval: 0.2, Test: 0.2, AnomalousEval: 0.5}}
		for i := 0; i < 12; i++ {
			p.Backgrounds = append(p.Backgrounds, machine.Background{ID: fmt.Sprintf("bg-%02d", i), Path: "x.wav"})
		}
		p.Machines = []machine.Machine{{ID: "pump-a1", Conditions: []machine.Condition{{Name: "duty", RPM: 1480, BandPercent: 2}}}}
		tp := TrainingPolicy(p)
		var items []Item
		for g := 0; g < 200; g++ {
			grp := fmt.Sprintf("take-%03d", g)
			items = append(items, Item{Path: "pump-a1/duty/recorded/" + grp + ".wav", Machine: "pump-a1", Condition: "duty",
				Origin: machine.OriginRecorded, Label: machine.LabelNormal, Group: grp, Source: grp, Speed: 1})
		}
		rows, err := Assign(context.Background(), items, PolicyFromPlant(p))
		if err != nil {
			t.Fatal(err)
		}
		trains := 0
		for _, r := range rows {
			if got, want := tp.Trains(r.Machine, r.Group), r.Split == machine.SplitTrain; got != want {
				t.Errorf("seed %d: group %s: Trains = %v, Assign put it in %s", seed, r.Group, got, r.Split)
			}
			if r.Split == machine.SplitTrain {
				trains++
			}
		}
		if trains == 0 || trains == len(rows) {
			t.Errorf("seed %d: %d of %d groups train: the check cannot tell the splits apart", seed, trains, len(rows))
		}
		part := AssignBackgrounds(PolicyFromPlant(p).Backgrounds, PolicyFromPlant(p))
		var want []string
		for _, b := range p.Backgrounds {
			if part[b.ID] == machine.SplitTrain {
				want = append(want, b.ID)
			}
		}
		if got := tp.Backgrounds(); !slices.Equal(got, want) || len(got) == len(p.Backgrounds) {
			t.Errorf("seed %d: training backgrounds %v, want the train share %v of %d", seed, got, want, len(p.Backgrounds))
		}
	}
}
