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

// A variant's speed steps are guarded in total: two steps of +1.5…2 % in a
// ±2.5 % band multiply to 1.030…1.040 as drawn, but the applied total stays
// in the band; with a hold-out condition at 1.035 × rpm (± 1 %) the total
// also stays out of that band (the split stage refuses a training file
// whose rpm lies in [lo, hi] of a hold-out condition's band), so the split
// never refuses the variant. Every step and the total pass the credibility guard, totals are
// multiples of 0.001, and the steps' ratios multiply to the total.
func TestTotalSpeedGuarded(t *testing.T) {
	r := &machine.Recipe{ID: "twice", Variants: 1, MinSteps: 3, MaxSteps: 3, Steps: []machine.Step{
		{Kind: "speed", Range: []float64{1.5, 2}},
		{Kind: "gain", Range: []float64{-1, 1}},
		{Kind: "speed", Range: []float64{1.5, 2}},
	}}
	c := &machine.Condition{Name: "duty", RPM: 1500, BandPercent: 2.5}
	hold := machine.Condition{Name: "fast", RPM: 1.035 * 1500, BandPercent: 1, HoldOut: true}
	hlo, hhi := hold.Band()
	for _, tc := range []struct {
		name    string
		holdOut [][2]float64
		max     float64 // the largest total allowed
	}{
		{"band only", nil, 1.025},
		{"hold-out at 1.035 × rpm", [][2]float64{{hlo, hhi}}, hlo / c.RPM},
	} {
		m := &machine.Machine{ID: "m", Conditions: []machine.Condition{*c}}
		if tc.holdOut != nil {
			m.Conditions = append(m.Conditions, hold)
		}
		se := stepEnv{env: &env{m: m}, cond: c}
		for seed := uint64(0); seed < 300; seed++ {
			drawn, err := Draw(r, NewRand(seed), DrawContext{Condition: c, HoldOutBands: tc.holdOut})
			if err != nil {
				t.Fatal(err)
			}
			want, any := SpeedDrawnOf(drawn)
			if !any || want < 1.015*1.015-1e-12 || want > 1.02*1.02+1e-12 {
				t.Fatalf("%s, seed %d: drawn total %v, want 1.030…1.0404", tc.name, seed, want)
			}
			total := SpeedOf(drawn)
			if total > tc.max || total < 1 {
				t.Errorf("%s, seed %d: total %v (drawn %v) outside [1, %v]", tc.name, seed, total, want, tc.max)
			}
			if k := total * 1000; math.Abs(k-math.Round(k)) > 1e-6 {
				t.Errorf("%s, seed %d: total %v is not a multiple of 0.001", tc.name, seed, total)
			}
			if rpm := c.RPM * total; tc.holdOut != nil && rpm >= hlo && rpm <= hhi {
				t.Errorf("%s, seed %d: total %v puts the clip at %v rpm in hold-out %s's band", tc.name, seed, total, rpm, hold.Name)
			}
			prod := 1.0
			for _, d := range drawn {
				if s, ok := d.Params.(*speedStep); ok {
					prod *= s.Ratio
					if reason := s.guard(se); reason != "" {
						t.Errorf("%s, seed %d: step %+v refused: %s", tc.name, seed, *s, reason)
					}
				}
			}
			if math.Abs(prod-total) > 1e-12 {
				t.Errorf("%s, seed %d: step ratios multiply to %v, total %v", tc.name, seed, prod, total)
			}
		}
	}
}
