package split_test

import (
	"context"
	"fmt"

	"thrum/machine"
	"thrum/split"
)

// A hold-out condition goes to test whatever its hash says, and the
// variants derived from it are dropped rather than moved to training.
func ExampleAssign() {
	p := split.Policy{Seed: 7, Conditions: []split.ConditionPolicy{
		{Machine: "fan-b2", Name: "low", RPM: 900, BandPercent: 3},
		{Machine: "fan-b2", Name: "high", RPM: 1500, BandPercent: 3, HoldOut: true},
	}}
	var items []split.Item
	for g := range 6 {
		items = append(items, split.Item{Path: fmt.Sprintf("fan-b2/low/r%d.wav", g), Machine: "fan-b2", Condition: "low",
			Origin: machine.OriginRecorded, Label: machine.LabelNormal, Group: fmt.Sprintf("low-%d", g), Speed: 1})
	}
	items = append(items,
		split.Item{Path: "fan-b2/high/r0.wav", Machine: "fan-b2", Condition: "high",
			Origin: machine.OriginRecorded, Label: machine.LabelNormal, Group: "high-0", Speed: 1},
		split.Item{Path: "fan-b2/high/r0-v1.wav", Machine: "fan-b2", Condition: "high",
			Origin: machine.OriginAugmented, Label: machine.LabelNormal, Group: "high-0", Speed: 1.02})
	rows, err := split.Assign(context.Background(), items, p)
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, r := range rows {
		if r.Condition == "high" {
			fmt.Println(r.Path, r.Split, r.Reason)
		}
	}
	// Output:
	// fan-b2/high/r0-v1.wav excluded derived-of-eval
	// fan-b2/high/r0.wav test hold-out
}

// Too few recordings for three splits is an error naming the machine and
// condition.
func ExampleTooFewGroupsError() {
	p := split.Policy{Seed: 1, Conditions: []split.ConditionPolicy{{Machine: "pump-a1", Name: "nominal", RPM: 1480, BandPercent: 2}}}
	items := []split.Item{
		{Path: "a.wav", Machine: "pump-a1", Condition: "nominal", Origin: machine.OriginRecorded, Label: machine.LabelNormal, Group: "a", Speed: 1},
		{Path: "b.wav", Machine: "pump-a1", Condition: "nominal", Origin: machine.OriginRecorded, Label: machine.LabelNormal, Group: "b", Speed: 1},
	}
	_, err := split.Assign(context.Background(), items, p)
	fmt.Println(err)
	// Output:
	// split: machine "pump-a1" condition "nominal": 2 normal recording group(s) cannot fill the 3 splits with a non-zero fraction (train, eval, test); record more sessions or set that split's fraction to 0
}
