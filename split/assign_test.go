package split

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"thrum/machine"
)

// randomPlant makes a policy and items: 1–3 machines, 1–3 conditions each
// (non-overlapping bands, some held out), 3–10 normal and 0–2 anomalous
// groups per condition, 1–3 clips per group, 0–3 augmented variants and 0–1
// synthetic fault per recorded clip, with backgrounds from a pool of six.
func randomPlant(rng *rand.Rand, extra int) (Policy, []Item) {
	p := Policy{Seed: rng.Uint64(), Backgrounds: []string{"bg0", "bg1", "bg2", "bg3", "bg4", "bg5"}}
	if rng.IntN(2) == 0 {
		p.Default = Fractions{Train: 0.6, Eval: 0.2, Test: 0.2, AnomalousEval: 0.3}
	}
	bg := AssignBackgrounds(p.Backgrounds, p)
	var items []Item
	for mi := range 1 + rng.IntN(3) {
		mid := fmt.Sprintf("m%d", mi)
		for ci := range 1 + rng.IntN(3) {
			c := ConditionPolicy{Machine: mid, Name: fmt.Sprintf("c%d", ci), RPM: 1000 * float64(ci+1), BandPercent: 2 + 3*rng.Float64(), HoldOut: ci > 0 && rng.IntN(3) == 0}
			p.Conditions = append(p.Conditions, c)
			nNorm, nAnom := 3+rng.IntN(8)+extra, rng.IntN(3)
			for g := range nNorm + nAnom {
				label := machine.LabelNormal
				if g >= nNorm {
					label = machine.LabelAnomalous
				}
				grp := fmt.Sprintf("%s/%s/rec%03d", mid, c.Name, g)
				for k := range 1 + rng.IntN(3) {
					src := fmt.Sprintf("%s/clip%d.wav", grp, k)
					items = append(items, Item{Path: src, SHA256: fmt.Sprintf("h-%s", src), Machine: mid, Condition: c.Name,
						Origin: machine.OriginRecorded, Label: label, Group: grp, Source: grp + ".wav", SourceSHA256: "s-" + grp, Speed: 1})
					if label == machine.LabelAnomalous {
						continue
					}
					for v := range rng.IntN(4) {
						it := Item{Path: fmt.Sprintf("%s/clip%d-v%d.wav", grp, k, v), Machine: mid, Condition: c.Name,
							Origin: machine.OriginAugmented, Label: label, Group: grp, Source: grp + ".wav", SourceSHA256: "s-" + grp,
							Speed: 1 + (rng.Float64()*2-1)*c.BandPercent/100*0.9}
						it.SHA256 = "h-" + it.Path
						if rng.IntN(2) == 0 {
							it.Backgrounds = []string{p.Backgrounds[rng.IntN(len(p.Backgrounds))]}
						}
						items = append(items, it)
					}
					if rng.IntN(2) == 0 {
						it := Item{Path: fmt.Sprintf("%s/clip%d-f.wav", grp, k), Machine: mid, Condition: c.Name,
							Origin: machine.OriginSyntheticFault, Label: machine.LabelAnomalous, Group: grp, Source: grp + ".wav",
							SourceSHA256: "s-" + grp, Speed: 1}
						it.SHA256 = "h-" + it.Path
						items = append(items, it)
					}
				}
			}
		}
	}
	_ = bg
	return p, items
}

// checkRules returns the first broken rule in rows, or nil.
func checkRules(p Policy, items []Item, rows []Row) error {
	if len(rows) != len(items) {
		return fmt.Errorf("%d rows for %d items", len(rows), len(items))
	}
	bg := AssignBackgrounds(p.Backgrounds, p)
	groupSplit := map[string]machine.Split{}
	for _, r := range rows {
		c, _ := p.condition(r.Machine, r.Condition)
		if r.Split == Excluded {
			if r.Origin == machine.OriginRecorded {
				return fmt.Errorf("%s: recorded clip excluded", r.Path)
			}
			continue
		}
		k := r.Machine + "/" + r.Group
		if s, ok := groupSplit[k]; ok && s != r.Split {
			return fmt.Errorf("group %s in %s and %s", k, s, r.Split)
		}
		groupSplit[k] = r.Split
		if r.Split != machine.SplitTrain && r.Origin != machine.OriginRecorded {
			return fmt.Errorf("%s: %s in %s", r.Path, r.Origin, r.Split)
		}
		if r.Split == machine.SplitTrain && r.Origin == machine.OriginRecorded && r.Label == machine.LabelAnomalous {
			return fmt.Errorf("%s: real anomaly in train", r.Path)
		}
		if c.HoldOut && r.Split != machine.SplitTest {
			return fmt.Errorf("%s: hold-out condition in %s", r.Path, r.Split)
		}
		if r.Split == machine.SplitTrain {
			if _, in := p.HoldOutBand(r.Machine, r.Condition, c.RPM*r.Speed); in {
				return fmt.Errorf("%s: training speed in a hold-out band", r.Path)
			}
			for _, b := range r.Backgrounds {
				if bg[b] != machine.SplitTrain {
					return fmt.Errorf("%s: training file with %s background", r.Path, bg[b])
				}
			}
		}
	}
	// Derived files of eval/test groups are excluded, never train.
	for _, r := range rows {
		if r.Origin != machine.OriginRecorded {
			if s := groupSplit[r.Machine+"/"+r.Group]; s != machine.SplitTrain && r.Split != Excluded {
				return fmt.Errorf("%s: derived file of a %s group in %s", r.Path, s, r.Split)
			}
		}
	}
	return nil
}

func TestAssignProperties(t *testing.T) {
	rng := rand.New(rand.NewPCG(2026, 12))
	for it := range 300 {
		p, items := randomPlant(rng, 0)
		rows, err := Assign(context.Background(), items, p)
		if err != nil {
			var tf *TooFewGroupsError
			if errors.As(err, &tf) {
				continue // legitimate: small random conditions
			}
			t.Fatalf("iteration %d: %v", it, err)
		}
		if err := checkRules(p, items, rows); err != nil {
			t.Fatalf("iteration %d: %v", it, err)
		}
	}
}

// TestAssignStable adds groups to a plant and checks no existing row moves.
func TestAssignStable(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	for it := range 100 {
		p, items := randomPlant(rng, 3)
		before, err := Assign(context.Background(), items, p)
		if err != nil {
			t.Fatalf("iteration %d: %v", it, err)
		}
		// New recordings in existing conditions.
		more := append([]Item(nil), items...)
		for g := range 1 + rng.IntN(20) {
			c := p.Conditions[rng.IntN(len(p.Conditions))]
			grp := fmt.Sprintf("%s/%s/new%03d", c.Machine, c.Name, g)
			more = append(more, Item{Path: grp + "/clip0.wav", SHA256: "n" + grp, Machine: c.Machine, Condition: c.Name,
				Origin: machine.OriginRecorded, Label: machine.LabelNormal, Group: grp, Source: grp, SourceSHA256: "n" + grp, Speed: 1})
		}
		rng.Shuffle(len(more), func(i, j int) { more[i], more[j] = more[j], more[i] })
		after, err := Assign(context.Background(), more, p)
		if err != nil {
			t.Fatalf("iteration %d: %v", it, err)
		}
		got := map[string]machine.Split{}
		for _, r := range after {
			got[r.Path] = r.Split
		}
		for _, r := range before {
			if got[r.Path] != r.Split {
				t.Fatalf("iteration %d: %s moved from %s to %s", it, r.Path, r.Split, got[r.Path])
			}
		}
	}
}

func TestAssignErrors(t *testing.T) {
	base := func(groups int) (Policy, []Item) {
		p := Policy{Seed: 1, Conditions: []ConditionPolicy{
			{Machine: "pump-a1", Name: "nominal", RPM: 1480, BandPercent: 2},
			{Machine: "pump-a1", Name: "fast", RPM: 1800, BandPercent: 2, HoldOut: true},
		}}
		var items []Item
		for g := range groups {
			grp := fmt.Sprintf("rec%d", g)
			items = append(items, Item{Path: grp + ".wav", Machine: "pump-a1", Condition: "nominal",
				Origin: machine.OriginRecorded, Label: machine.LabelNormal, Group: grp, Speed: 1})
		}
		return p, items
	}
	t.Run("too few groups", func(t *testing.T) {
		p, items := base(2)
		_, err := Assign(context.Background(), items, p)
		var tf *TooFewGroupsError
		if !errors.As(err, &tf) || tf.Machine != "pump-a1" || tf.Condition != "nominal" || tf.Groups != 2 {
			t.Fatalf("got %v, want too-few-groups error for pump-a1/nominal", err)
		}
		// With the test fraction at zero two groups can fill train and eval.
		p.Default = Fractions{Train: 0.8, Eval: 0.2}
		if _, err := Assign(context.Background(), items, p); err != nil {
			t.Fatalf("two splits, two groups: %v", err)
		}
	})
	t.Run("speed into hold-out band", func(t *testing.T) {
		p, items := base(20)
		rows, err := Assign(context.Background(), items, p)
		if err != nil {
			t.Fatal(err)
		}
		var trainGroup string
		for _, r := range rows {
			if r.Split == machine.SplitTrain {
				trainGroup = r.Group
				break
			}
		}
		// 1480 × 1.2 = 1776 rpm lies in 1800 ± 2 % (1764 ... 1836).
		items = append(items, Item{Path: "v.wav", Machine: "pump-a1", Condition: "nominal",
			Origin: machine.OriginAugmented, Label: machine.LabelNormal, Group: trainGroup, Speed: 1.2})
		if _, err := Assign(context.Background(), items, p); err == nil {
			t.Fatal("no error for a training variant inside the hold-out band")
		}
	})
	t.Run("malformed", func(t *testing.T) {
		for _, tc := range []struct {
			name string
			mod  func(*Item)
		}{
			{"origin", func(it *Item) { it.Origin = "copied" }},
			{"label", func(it *Item) { it.Label = "weird" }},
			{"group", func(it *Item) { it.Group = "" }},
			{"condition", func(it *Item) { it.Condition = "slow" }},
		} {
			p, items := base(5)
			tc.mod(&items[0])
			if _, err := Assign(context.Background(), items, p); err == nil {
				t.Errorf("%s: no error", tc.name)
			}
		}
		p, items := base(5)
		items = append(items, items[0])
		if _, err := Assign(context.Background(), items, p); err == nil {
			t.Error("duplicate path: no error")
		}
	})
}

// TestUnitFractions checks that the hash spreads groups like a uniform
// variable: 20 000 keys against 0.7/0.15/0.15 land within 1.5 % (about
// 5 standard errors of a binomial proportion, common practice).
func TestUnitFractions(t *testing.T) {
	n := map[machine.Split]int{}
	const N = 20000
	for i := range N {
		n[pick(Unit(3, "group", "m", fmt.Sprint(i)), DefaultFractions)]++
	}
	for s, want := range map[machine.Split]float64{machine.SplitTrain: 0.7, machine.SplitEval: 0.15, machine.SplitTest: 0.15} {
		if got := float64(n[s]) / N; got < want-0.015 || got > want+0.015 {
			t.Errorf("%s share %.4f, want %.2f", s, got, want)
		}
	}
	if Unit(1, "group", "m", "g") == Unit(2, "group", "m", "g") {
		t.Error("seed does not change the hash")
	}
}

func TestListsRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	p, items := randomPlant(rng, 3)
	rows, err := Assign(context.Background(), items, p)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := WriteSplits(dir, rows, p); err != nil {
		t.Fatal(err)
	}
	got, plan, err := ReadSplits(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != len(rows) {
		t.Fatalf("%d rows back, want %d", len(got), len(rows))
	}
	for i := range rows {
		a, b := rows[i], got[i]
		if a.Path != b.Path || a.Split != b.Split || a.Speed != b.Speed || a.Reason != b.Reason || fmt.Sprint(a.Backgrounds) != fmt.Sprint(b.Backgrounds) || a.SourceSHA256 != b.SourceSHA256 {
			t.Fatalf("row %d: %+v back as %+v", i, a, b)
		}
	}
	if plan.Policy.Seed != p.Seed || len(plan.Policy.Conditions) != len(p.Conditions) {
		t.Fatalf("plan policy %+v, want %+v", plan.Policy, p)
	}
	// Same inputs, byte-identical files (items shuffled first).
	dir2 := t.TempDir()
	shuffled := append([]Item(nil), items...)
	rng.Shuffle(len(shuffled), func(i, j int) { shuffled[i], shuffled[j] = shuffled[j], shuffled[i] })
	rows2, err := Assign(context.Background(), shuffled, p)
	if err != nil {
		t.Fatal(err)
	}
	if err := WriteSplits(dir2, rows2, p); err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{ListsFile, SummaryFile, BackgroundsFile, PlanFile} {
		a, _ := os.ReadFile(filepath.Join(dir, SplitsDir, f))
		b, _ := os.ReadFile(filepath.Join(dir2, SplitsDir, f))
		if len(a) == 0 || !bytes.Equal(a, b) {
			t.Errorf("%s differs between two runs on the same input", f)
		}
	}
	sum, err := os.Open(filepath.Join(dir, SplitsDir, SummaryFile))
	if err != nil {
		t.Fatal(err)
	}
	defer sum.Close()
	ss, err := ReadSummaryCSV(sum)
	if err != nil || fmt.Sprint(ss) != fmt.Sprint(Summarize(rows)) {
		t.Errorf("summary round trip: %v", err)
	}
	again, err := Assign(context.Background(), items, plan.Policy)
	if err != nil || fmt.Sprint(again) != fmt.Sprint(rows) {
		t.Fatalf("assignment from plan.json differs (%v)", err)
	}
}

// FuzzListsCSV round-trips lists.csv: read, write, read again gives the
// same rows.
func FuzzListsCSV(f *testing.F) {
	f.Add("path,split,speed,backgrounds\na.wav,train,1.01,x;y\n")
	f.Add("path,split\n\"a,b.wav\",eval\n")
	f.Fuzz(func(t *testing.T, s string) {
		rows, err := ReadListsCSV(bytes.NewReader([]byte(s)))
		if err != nil {
			return
		}
		var buf bytes.Buffer
		if err := WriteListsCSV(&buf, rows); err != nil {
			t.Fatal(err)
		}
		again, err := ReadListsCSV(&buf)
		if err != nil {
			t.Fatalf("re-read: %v", err)
		}
		if fmt.Sprint(rows) != fmt.Sprint(again) {
			t.Fatalf("round trip:\n%v\n%v", rows, again)
		}
	})
}

func TestEmptySplitsWarns(t *testing.T) {
	p := Policy{Seed: 1, Default: Fractions{Train: 0.6, Eval: 0.2, Test: 0.2, AnomalousEval: 0.5},
		Conditions: []ConditionPolicy{{Machine: "m", Name: "c", RPM: 1000}, {Machine: "m", Name: "h", RPM: 500, HoldOut: true}}}
	rows := []Row{{Item: Item{Machine: "m", Condition: "c", Origin: "recorded", Label: "normal"}, Split: machine.SplitTrain, Reason: ReasonHash}}
	w := EmptySplits(rows, p)
	if len(w) != 3 || !strings.Contains(w[0], "no normal eval group") || !strings.Contains(w[1], "no normal test group") ||
		!strings.Contains(w[2], "no real anomalous recording") {
		t.Errorf("warnings %q", w)
	}
}
