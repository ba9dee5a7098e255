package augment

import (
	"math"
	"reflect"
	"testing"

	"thrum/machine"
)

func testRecipe() *machine.Recipe {
	return &machine.Recipe{ID: "r", Variants: 3, MinSteps: 1, MaxSteps: 3, Steps: []machine.Step{
		{Kind: "speed", Range: []float64{-2, 2}, Increment: 0.5},
		{Kind: "gain", Range: []float64{-6, 6}},
		{Kind: "noise", Range: []float64{0, 20}, Mode: "any"},
		{Kind: "shift", Range: []float64{0, 500}, Mode: "zero"},
	}}
}

func TestDrawKeepsOrderRangesAndIsDeterministic(t *testing.T) {
	r := testRecipe()
	c := &machine.Condition{Name: "duty", RPM: 1500, BandPercent: 2}
	order := map[string]int{"speed": 0, "gain": 1, "noise": 2, "shift": 3}
	counts := map[int]int{}
	for seed := uint64(0); seed < 500; seed++ {
		a, err := Draw(r, NewRand(seed), DrawContext{Condition: c})
		if err != nil {
			t.Fatal(err)
		}
		b, _ := Draw(r, NewRand(seed), DrawContext{Condition: c})
		if !reflect.DeepEqual(records(a), records(b)) {
			t.Fatalf("seed %d: draws differ", seed)
		}
		if len(a) < r.MinSteps || len(a) > r.MaxSteps {
			t.Fatalf("seed %d: %d steps", seed, len(a))
		}
		counts[len(a)]++
		for i := 1; i < len(a); i++ {
			if order[a[i-1].Record().Kind] >= order[a[i].Record().Kind] {
				t.Fatalf("seed %d: recipe order broken: %v", seed, records(a))
			}
		}
		for _, d := range a {
			p := d.Record().Params
			switch d.Record().Kind {
			case "speed":
				pct := p["percent"]
				if k := pct / 0.5; math.Abs(k-math.Round(k)) > 1e-9 || pct < -2 || pct > 2 {
					t.Fatalf("speed %g%% not on the 0.5 %% grid inside ±2 %%", pct)
				}
				if math.Abs(p["ratio"]-(1+pct/100)) > 1e-9 {
					t.Fatalf("ratio %g for %g%%", p["ratio"], pct)
				}
			case "gain":
				if p["db"] < -6 || p["db"] > 6 {
					t.Fatalf("gain %g", p["db"])
				}
			case "noise":
				if p["snr_db"] < 0 || p["snr_db"] > 20 {
					t.Fatalf("snr %g", p["snr_db"])
				}
				if col := d.Record().Text["colour"]; col != "white" && col != "pink" && col != "brown" {
					t.Fatalf("colour %q", col)
				}
			}
		}
	}
	for k := 1; k <= 3; k++ {
		if counts[k] < 100 {
			t.Errorf("step count %d drawn %d times of 500: not uniform over min…max", k, counts[k])
		}
	}
}

func TestClampSpeed(t *testing.T) {
	c := &machine.Condition{RPM: 1500, BandPercent: 2}
	// the hold-out condition of the same machine at 1530 rpm ± 0.5 %
	hold := [][2]float64{{1530 * 0.995, 1530 * 1.005}}
	cases := []struct{ in, want float64 }{
		{1.00, 1.00},
		{1.05, 1.014}, // band edge 1.02 lies in the hold-out band: pulled back below 1522.35 rpm (1.0149), rounded towards 1
		{0.95, 0.98},  // clamped to the band
		{1.0123456, 1.012},
		{0.9876543, 0.988},
	}
	for _, k := range cases {
		got := clampSpeed(k.in, c, hold)
		if math.Abs(got-k.want) > 1e-12 {
			t.Errorf("clampSpeed(%g) = %.9g, want %g", k.in, got, k.want)
		}
		rpm := c.RPM * got
		if rpm >= hold[0][0] && rpm <= hold[0][1] {
			t.Errorf("clampSpeed(%g) = %g lands in the hold-out band", k.in, got)
		}
	}
}

func TestVariantSeedDependsOnEveryInput(t *testing.T) {
	base := VariantSeed(1, "pump", "abc", 2, 3, "variant")
	if base != VariantSeed(1, "pump", "abc", 2, 3, "variant") {
		t.Fatal("not deterministic")
	}
	for i, s := range []uint64{
		VariantSeed(2, "pump", "abc", 2, 3, "variant"),
		VariantSeed(1, "fan", "abc", 2, 3, "variant"),
		VariantSeed(1, "pump", "abd", 2, 3, "variant"),
		VariantSeed(1, "pump", "abc", 3, 3, "variant"),
		VariantSeed(1, "pump", "abc", 2, 4, "variant"),
		VariantSeed(1, "pump", "abc", 2, 3, "fault:impact"),
	} {
		if s == base {
			t.Errorf("input %d does not change the seed", i)
		}
	}
}

func TestShardPartitionsWork(t *testing.T) {
	keys := []string{"a/1", "a/2", "b/1", "c/9", "pump/duty/take-01.wav", "fan/x.wav"}
	for n := 1; n <= 4; n++ {
		for _, k := range keys {
			owners := 0
			for i := 0; i < n; i++ {
				if (Shard{I: i, N: n}).Has(k) {
					owners++
				}
			}
			if owners != 1 {
				t.Errorf("n=%d: %s owned by %d shards", n, k, owners)
			}
		}
	}
}

func TestNonphysicalStepsAreMarked(t *testing.T) {
	r := &machine.Recipe{ID: "np", Variants: 1, MinSteps: 2, MaxSteps: 2, Steps: []machine.Step{
		{Kind: "tempo", Range: []float64{-5, 5}, Nonphysical: true},
		{Kind: "pitch", Range: []float64{-50, 50}, Nonphysical: true},
	}}
	c := &machine.Condition{RPM: 1000, BandPercent: 1}
	drawn, err := Draw(r, NewRand(3), DrawContext{Condition: c})
	if err != nil {
		t.Fatal(err)
	}
	for _, d := range drawn {
		if !d.Record().Nonphysical {
			t.Errorf("%s not marked non-physical in its record", d.Record().Kind)
		}
	}
	if !Nonphysical(Tempo{Factor: 1.02}) || !Nonphysical(Pitch{Cents: 10}) || Nonphysical(Speed{Ratio: 1.01}) {
		t.Error("Nonphysical misclassifies a transform")
	}
}
