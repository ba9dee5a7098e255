package split

import (
	"context"
	"fmt"
	"math"
	"slices"
	"testing"

	"thrum/machine"
)

// testInventory makes a scanned-looking plant: one machine with a normal
// condition (nNormal recordings of clips clips each), a load condition at
// the same speed held out, and nAnom anomalous recordings; with blockSeconds
// set, recordings longer than a block are cut into blocks.
func testInventory(seed uint64, method string, nNormal, nAnom, clips int, blockSeconds float64, pins []machine.Pin) *machine.Inventory {
	p := &machine.Plant{Seed: seed, ClipSeconds: 10, SampleRate: 16000, BlockSeconds: blockSeconds, SplitMethod: method,
		Split: machine.SplitFractions{Train: 0.6, Eval: 0.2, Test: 0.2, AnomalousEval: 0.5}}
	for i := 0; i < 12; i++ {
		p.Backgrounds = append(p.Backgrounds, machine.Background{ID: fmt.Sprintf("bg-%02d", i), Path: "x.wav"})
	}
	p.Machines = []machine.Machine{{ID: "pump-a1", Pins: pins, Conditions: []machine.Condition{
		{Name: "duty", RPM: 1480, BandPercent: 2},
		{Name: "loaded", RPM: 1480, BandPercent: 2, HoldOut: true},
	}}}
	inv := &machine.Inventory{Plant: p}
	add := func(cond, rel string, label machine.Label, n int) {
		r := &machine.Recording{Machine: "pump-a1", Condition: cond, Rel: rel, Group: rel, Label: label}
		r.Clips = machine.CutClips(int64(n)*p.ClipFrames(), p.ClipFrames(), "drop")
		inv.Recordings = append(inv.Recordings, r)
	}
	for g := 0; g < nNormal; g++ {
		add("duty", fmt.Sprintf("pump-a1/duty/take-%03d.wav", g), machine.LabelNormal, clips)
	}
	for g := 0; g < nAnom; g++ {
		add("duty", fmt.Sprintf("pump-a1/duty/anomalous/fault-%02d.wav", g), machine.LabelAnomalous, clips)
	}
	add("loaded", "pump-a1/loaded/take-001.wav", machine.LabelNormal, 2)
	return inv
}

// itemsOf lists the recorded clips of an inventory as expand writes them,
// and one variant of every clip the training policy trains.
func itemsOf(inv *machine.Inventory, tp *Training) []Item {
	var items []Item
	for _, r := range inv.Recordings {
		for _, c := range r.Clips {
			g := inv.Plant.ClipGroup(r, c)
			base := Item{Machine: r.Machine, Condition: r.Condition, Label: r.Label, Group: g, Source: r.Rel, Speed: 1, Clip: c.Index}
			rec := base
			rec.Path, rec.Origin = fmt.Sprintf("%s-c%04d.wav", r.Rel, c.Index), machine.OriginRecorded
			items = append(items, rec)
			if tp.Trains(r, c) && r.Label == machine.LabelNormal && !inv.Plant.Machine(r.Machine).Condition(r.Condition).HoldOut {
				v := base
				v.Path, v.Origin = fmt.Sprintf("%s-c%04d-v00.wav", r.Rel, c.Index), machine.OriginAugmented
				items = append(items, v)
			}
		}
	}
	return items
}

// The training policy the stage drivers follow before the split gives the
// answers Assign gives after it: a clip trains exactly when Assign puts it
// in train (by its group's split and the guard gaps between blocks), and
// the training backgrounds are exactly the train share of the background
// partition. The plant holds a hold-out condition at the training
// condition's own speed (a load condition), which must not make the run
// fail.
func TestTrainingPolicyAgreesWithAssign(t *testing.T) {
	cases := []struct {
		name         string
		method       string
		normal, anom int
		clips        int
		block        float64
		pins         []machine.Pin
	}{
		{"shares", machine.SplitShares, 40, 3, 2, 0, nil},
		{"stable hash", machine.SplitStableHash, 40, 3, 2, 0, nil},
		{"blocks", machine.SplitShares, 3, 2, 12, 30, nil},
		{"pins", machine.SplitShares, 9, 2, 1, 0, []machine.Pin{{Group: "pump-a1/duty/take-000.wav", Split: machine.SplitTest}}},
	}
	for _, tc := range cases {
		for _, seed := range []uint64{1, 42, 1 << 40} {
			inv := testInventory(seed, tc.method, tc.normal, tc.anom, tc.clips, tc.block, tc.pins)
			p := inv.Plant
			tp := TrainingPolicy(inv)
			items := itemsOf(inv, tp)
			rows, err := Assign(context.Background(), items, PolicyFromPlant(p))
			if err != nil {
				t.Fatalf("%s seed %d: %v", tc.name, seed, err)
			}
			trains, guards := 0, 0
			byClip := map[string]*machine.Recording{}
			for _, r := range inv.Recordings {
				byClip[r.Rel] = r
			}
			for _, r := range rows {
				if r.Origin != machine.OriginRecorded {
					if r.Split != machine.SplitTrain {
						t.Errorf("%s seed %d: variant %s made for a clip Assign puts in %s (%s)", tc.name, seed, r.Path, r.Split, r.Reason)
					}
					continue
				}
				rec := byClip[r.Source]
				got := tp.Trains(rec, rec.Clips[r.Clip])
				if want := r.Split == machine.SplitTrain; got != want {
					t.Errorf("%s seed %d: %s: Trains = %v, Assign put it in %s (%s)", tc.name, seed, r.Path, got, r.Split, r.Reason)
				}
				if r.Split == machine.SplitTrain {
					trains++
				}
				if r.Reason == ReasonGuardGap {
					guards++
				}
			}
			if trains == 0 {
				t.Errorf("%s seed %d: no clip trains: the check cannot tell the splits apart", tc.name, seed)
			}
			if tc.block > 0 && guards == 0 {
				t.Errorf("%s seed %d: blocks of different splits but no guard gap", tc.name, seed)
			}
			for _, pn := range tc.pins {
				if d, _ := tp.Split("pump-a1", pn.Group); d.Split != pn.Split || d.Reason != ReasonPinned {
					t.Errorf("%s seed %d: pinned group %s decided %+v, want %s", tc.name, seed, pn.Group, d, pn.Split)
				}
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
}

// Blocks: a recording of 12 clips with 30 s blocks of 10 s clips makes four
// groups of three clips; where neighbouring blocks differ in split, the
// last clip of the earlier block is left out, so no two clips of different
// splits are recorded back to back.
func TestBlocksGuardGaps(t *testing.T) {
	for _, seed := range []uint64{1, 2, 3, 4, 5} {
		inv := testInventory(seed, machine.SplitShares, 3, 0, 12, 30, nil)
		tp := TrainingPolicy(inv)
		rows, err := Assign(context.Background(), itemsOf(inv, tp), PolicyFromPlant(inv.Plant))
		if err != nil {
			t.Fatal(err)
		}
		split := map[string]map[int]machine.Split{}
		for _, r := range rows {
			if r.Origin != machine.OriginRecorded || r.Condition != "duty" {
				continue
			}
			if _, k, ok := machine.ParseBlock(r.Group); !ok || k != r.Clip/3 {
				t.Fatalf("seed %d: clip %d of %s in group %q, want block %d", seed, r.Clip, r.Source, r.Group, r.Clip/3)
			}
			if split[r.Source] == nil {
				split[r.Source] = map[int]machine.Split{}
			}
			split[r.Source][r.Clip] = r.Split
		}
		for src, s := range split {
			for c := 0; c+1 < 12; c++ {
				a, b := s[c], s[c+1]
				if a != Excluded && b != Excluded && a != b {
					t.Errorf("seed %d: %s: clips %d (%s) and %d (%s) are neighbours in different splits", seed, src, c, a, c+1, b)
				}
			}
		}
	}
}

// shareCounts meets the shares as closely as whole groups allow. The
// expected counts are worked by hand from largest remainder (Hamilton's
// method, common practice) with one group first to every non-zero share.
func TestShareCounts(t *testing.T) {
	cases := []struct {
		n    int
		w    []float64
		want []int
	}{
		// 9 × (0.6, 0.2, 0.2) = 5.4, 1.8, 1.8: one each, then 6 over
		// (4.4, 0.8, 0.8) → 4, 0, 0 and the two left to the 0.8s.
		{9, []float64{0.6, 0.2, 0.2}, []int{5, 2, 2}},
		// 3 groups, three non-zero shares: one each.
		{3, []float64{0.6, 0.2, 0.2}, []int{1, 1, 1}},
		// 10 × (0.7, 0.15, 0.15): one each, 7 over (6, 0.5, 0.5) → 6, 0, 0,
		// the one left to eval (tie, earlier share).
		{10, []float64{0.7, 0.15, 0.15}, []int{7, 2, 1}},
		// fewer groups than shares: plain largest remainder.
		{1, []float64{0.5, 0.5}, []int{1, 0}},
		{2, []float64{0.5, 0.5}, []int{1, 1}},
		{2, []float64{0.9, 0.1}, []int{1, 1}},
		// a zero share gets nothing.
		{4, []float64{0.5, 0, 0.5}, []int{2, 0, 2}},
	}
	for _, c := range cases {
		got := shareCounts(c.n, c.w)
		if !slices.Equal(got, c.want) {
			t.Errorf("shareCounts(%d, %v) = %v, want %v", c.n, c.w, got, c.want)
		}
	}
	// Properties over many n: the counts add up to n, every non-zero share
	// has one when n allows, and no count is off its quota by a whole group
	// more than the one-each rule forces.
	w := []float64{0.6, 0.25, 0.15}
	for n := 0; n < 200; n++ {
		got := shareCounts(n, w)
		sum := 0
		for i, g := range got {
			sum += g
			if n >= 3 && g == 0 {
				t.Errorf("n %d: share %d empty: %v", n, i, got)
			}
			if d := math.Abs(float64(g) - float64(n)*w[i]); d >= 2 {
				t.Errorf("n %d: share %d has %d, quota %.2f", n, i, g, float64(n)*w[i])
			}
		}
		if sum != n {
			t.Errorf("n %d: counts %v add up to %d", n, got, sum)
		}
	}
}

// With method "shares", a machine's anomalous groups land in both eval and
// test whenever there are two or more, whatever the seed; each condition's
// normal groups meet the shares to within the largest-remainder rounding.
func TestDecideSpreadsAnomalies(t *testing.T) {
	for seed := uint64(0); seed < 50; seed++ {
		for _, nAnom := range []int{1, 2, 3, 5} {
			inv := testInventory(seed, machine.SplitShares, 9, nAnom, 1, 0, nil)
			pol := PolicyFromPlant(inv.Plant)
			var infos []GroupInfo
			for _, r := range inv.Recordings {
				infos = append(infos, GroupInfo{Machine: r.Machine, Condition: r.Condition, Group: r.Group,
					Anomalous: r.Label == machine.LabelAnomalous, HoldOut: r.Condition == "loaded"})
			}
			dec, err := pol.Decide(infos)
			if err != nil {
				t.Fatal(err)
			}
			count := map[string]int{}
			for _, g := range infos {
				d := dec[groupKey{g.Machine, g.Group}]
				kind := "normal"
				if g.Anomalous {
					kind = "anomalous"
				}
				if g.HoldOut {
					kind = "hold-out"
				}
				count[kind+" "+string(d.Split)]++
			}
			if nAnom >= 2 && (count["anomalous eval"] == 0 || count["anomalous test"] == 0) {
				t.Errorf("seed %d, %d anomalous: %v", seed, nAnom, count)
			}
			if count["anomalous train"] != 0 || count["hold-out test"] != 1 {
				t.Errorf("seed %d: %v", seed, count)
			}
			// 9 normal groups at 0.6/0.2/0.2: 5, 2, 2 (see TestShareCounts).
			if count["normal train"] != 5 || count["normal eval"] != 2 || count["normal test"] != 2 {
				t.Errorf("seed %d: normal groups %v, want 5/2/2", seed, count)
			}
		}
	}
}

// A pin of a real anomalous group to train is refused.
func TestDecidePinErrors(t *testing.T) {
	inv := testInventory(1, machine.SplitShares, 3, 1, 1, 0, []machine.Pin{{Group: "pump-a1/duty/anomalous/fault-00.wav", Split: machine.SplitTrain}})
	pol := PolicyFromPlant(inv.Plant)
	_, err := pol.Decide([]GroupInfo{{Machine: "pump-a1", Condition: "duty", Group: "pump-a1/duty/anomalous/fault-00.wav", Anomalous: true}})
	if err == nil {
		t.Fatal("anomalous group pinned to train: no error")
	}
}
