package augment

import (
	"encoding/json"
	"math"
	"slices"
	"sort"
	"testing"

	"thrum/machine"
	"thrum/machine/ledger"
)

// Every step kind the plant config accepts has an entry in the step table,
// and every table entry is a kind the config accepts.
func TestStepTableMatchesConfig(t *testing.T) {
	config := machine.StepKinds()
	sort.Strings(config)
	table := StepKinds()
	for _, k := range config {
		if _, ok := slices.BinarySearch(table, k); !ok {
			t.Errorf("config step kind %q has no entry in the step table", k)
		}
	}
	for _, k := range table {
		if _, ok := slices.BinarySearch(config, k); !ok {
			t.Errorf("step table kind %q is not accepted by the config", k)
		}
	}
}

// exampleSteps is one valid recipe step per kind.
var exampleSteps = map[string]machine.Step{
	"speed":      {Kind: "speed", Range: []float64{-2, 2}, Increment: 0.5},
	"gain":       {Kind: "gain", Range: []float64{-6, 6}},
	"invert":     {Kind: "invert"},
	"shift":      {Kind: "shift", Range: []float64{0, 50}, Mode: "zero"},
	"filter":     {Kind: "filter", Mode: "bandpass", Range: []float64{200, 4000}},
	"noise":      {Kind: "noise", Range: []float64{10, 20}, Mode: "any", Weighting: "A"},
	"background": {Kind: "background", Range: []float64{10, 20}},
	"room":       {Kind: "room"},
	"ir":         {Kind: "ir", Files: []string{"ir/hall.wav"}},
	"tempo":      {Kind: "tempo", Range: []float64{-5, 5}, Nonphysical: true},
	"pitch":      {Kind: "pitch", Range: []float64{-50, 50}, Nonphysical: true},
}

// Each kind's record names its kind, marks exactly the non-physical kinds,
// keeps integer parameters exact and survives the ledger's JSON.
func TestStepRecords(t *testing.T) {
	c := &machine.Condition{Name: "duty", RPM: 1500, BandPercent: 2}
	for _, kind := range StepKinds() {
		s, ok := exampleSteps[kind]
		if !ok {
			t.Errorf("no example step for kind %q", kind)
			continue
		}
		r := &machine.Recipe{ID: "one", Variants: 1, MinSteps: 1, MaxSteps: 1, Steps: []machine.Step{s}}
		drawn, err := Draw(r, NewRand(9), DrawContext{Condition: c})
		if err != nil || len(drawn) != 1 {
			t.Fatalf("%s: Draw = %d steps, %v", kind, len(drawn), err)
		}
		rec := drawn[0].Record()
		if rec.Kind != kind {
			t.Errorf("%s: record kind %q", kind, rec.Kind)
		}
		if want := kind == "tempo" || kind == "pitch"; rec.Nonphysical != want {
			t.Errorf("%s: nonphysical = %v", kind, rec.Nonphysical)
		}
		for _, k := range []string{"noise_seed", "offset", "mic", "order"} {
			if v, ok := rec.Params[k]; ok && (v != math.Trunc(v) || v < 0 || v >= 1<<53) {
				t.Errorf("%s: %s = %g is not an exact whole number", kind, k, v)
			}
		}
		b, err := json.Marshal(rec)
		if err != nil {
			t.Fatalf("%s: %v", kind, err)
		}
		var back ledger.StepRecord
		if err := json.Unmarshal(b, &back); err != nil {
			t.Fatalf("%s: %v", kind, err)
		}
		b2, _ := json.Marshal(back)
		if string(b) != string(b2) {
			t.Errorf("%s: record changes through the ledger: %s → %s", kind, b, b2)
		}
	}
}

// The ledger's bytes of each kind's record are the documented layout:
// these lines are what the ledger has always held for these draws.
func TestStepRecordLayout(t *testing.T) {
	cases := []struct {
		p    StepParams
		want string
	}{
		{&speedStep{Percent: 1.5, Ratio: 1.015}, `{"kind":"speed","params":{"percent":1.5,"ratio":1.015}}`},
		// level_db: the fan law 50·log10 1.02 = 0.43001 dB
		{&speedStep{Percent: 2, Ratio: 1.02, Orders: &orderSpeedParams{Orders: 16, BandwidthHz: 1, Exponent: 5}}, `{"kind":"speed","params":{"bandwidth_hz":1,"level_db":0.4300085880958784,"orders":16,"percent":2,"power_exponent":5,"ratio":1.02},"text":{"mode":"orders"}}`},
		{&speedStep{Percent: 2, Ratio: 1.02, Orders: &orderSpeedParams{Orders: 16, BandwidthHz: 1, applied: true, report: OrderReport{ShaftHz: 29.9, Moved: []int{1, 3, 5}, KeptMains: []int{2, 4}, KeptNyquist: []int{16}}}},
			`{"kind":"speed","params":{"bandwidth_hz":1,"level_db":0,"moved":3,"orders":16,"percent":2,"power_exponent":0,"ratio":1.02,"shaft_hz":29.9},"text":{"kept_mains":"2,4","kept_nyquist":"16","mode":"orders"}}`},
		{&gainStep{DB: -3}, `{"kind":"gain","params":{"db":-3}}`},
		{&invertStep{}, `{"kind":"invert"}`},
		{&shiftStep{MS: 12, Mode: "zero"}, `{"kind":"shift","params":{"ms":12},"text":{"mode":"zero"}}`},
		{&filterStep{Type: "lowpass", Order: 4, Q: 0.5, HighHz: 2000}, `{"kind":"filter","params":{"high_hz":2000,"order":4,"q":0.5},"text":{"type":"lowpass"}}`},
		{&filterStep{Type: "telephone", Q: 0.5, LowHz: 300, HighHz: 3400}, `{"kind":"filter","params":{"high_hz":3400,"low_hz":300,"order":0,"q":0.5},"text":{"type":"telephone"}}`},
		{&noiseStep{SNR: 20, Colour: "pink", Weighting: "A", Seed: 4294967295}, `{"kind":"noise","params":{"noise_seed":4294967295,"snr_db":20},"text":{"colour":"pink","weighting":"A"}}`},
		{&noiseStep{SNR: 20, Colour: "pink", Weighting: "A", Seed: 7, applied: true, MeasuredSNR: 20.01}, `{"kind":"noise","params":{"measured_snr_db":20.01,"noise_seed":7,"snr_db":20},"text":{"colour":"pink","weighting":"A"}}`},
		{&backgroundStep{SNR: 10, Weighting: "none", ID: "hall", Offset: 123456789, hasOffset: true}, `{"kind":"background","params":{"offset":123456789,"snr_db":10},"text":{"background":"hall","weighting":"none"}}`},
		{&backgroundStep{SNR: 10, Weighting: "none", ID: synthesisedBackground, Seed: 5}, `{"kind":"background","params":{"noise_seed":5,"snr_db":10},"text":{"background":"synthesised","weighting":"none"}}`},
		{&roomStep{Mic: 3}, `{"kind":"room","params":{"mic":3}}`},
		{&roomStep{Mic: 3, applied: true, MicAt: [3]float64{1, 2, 1.5}, RT60: 0.5, DistanceM: 2}, `{"kind":"room","params":{"distance_m":2,"mic":3,"mic_x":1,"mic_y":2,"mic_z":1.5,"rt60_s":0.5}}`},
		{&irStep{File: "ir/a.wav"}, `{"kind":"ir","text":{"file":"ir/a.wav"}}`},
		{&irStep{File: "ir/a.wav", applied: true, RT60: 0.8}, `{"kind":"ir","params":{"rt60_s":0.8},"text":{"file":"ir/a.wav"}}`},
		{&noiseStep{SNR: 20, Colour: "white", Weighting: "none", Seed: 7, undefined: "noise step: SNR undefined: the clip is silent"}, `{"kind":"noise","params":{"noise_seed":7,"snr_db":20},"text":{"colour":"white","weighting":"none"},"undefined":{"measured_snr_db":"noise step: SNR undefined: the clip is silent"}}`},
		{&roomStep{Mic: 1, applied: true, MicAt: [3]float64{1, 2, 1.5}, DistanceM: 2, undefined: "room hall, microphone 1: no decay"}, `{"kind":"room","params":{"distance_m":2,"mic":1,"mic_x":1,"mic_y":2,"mic_z":1.5},"undefined":{"rt60_s":"room hall, microphone 1: no decay"}}`},
		{&irStep{File: "ir/a.wav", undefined: "impulse response ir/a.wav: no decay"}, `{"kind":"ir","text":{"file":"ir/a.wav"},"undefined":{"rt60_s":"impulse response ir/a.wav: no decay"}}`},
		{&tempoStep{Percent: 2}, `{"kind":"tempo","params":{"percent":2},"nonphysical":true}`},
		{&pitchStep{Cents: -20}, `{"kind":"pitch","params":{"cents":-20},"nonphysical":true}`},
	}
	for _, k := range cases {
		b, err := json.Marshal(k.p.Record())
		if err != nil {
			t.Fatal(err)
		}
		if string(b) != k.want {
			t.Errorf("got  %s\nwant %s", b, k.want)
		}
	}
}

func TestDrawRefusesUnknownKind(t *testing.T) {
	r := &machine.Recipe{ID: "r", Variants: 1, MinSteps: 1, MaxSteps: 1, Steps: []machine.Step{{Kind: "chorus"}}}
	if _, err := Draw(r, NewRand(1), DrawContext{}); err == nil {
		t.Error("Draw accepted an unknown step kind")
	}
}

func TestSpeedOfMultipliesSpeedSteps(t *testing.T) {
	drawn := []Drawn{{Params: &speedStep{Ratio: 1.01}}, {Params: &gainStep{DB: 3}}, {Params: &speedStep{Ratio: 0.99}}}
	if got, want := SpeedOf(drawn), 1.01*0.99; got != want {
		t.Errorf("SpeedOf = %g, want %g", got, want)
	}
	// Drawn steps carry their clamped running total: SpeedOf is the last.
	drawn = []Drawn{{Params: &speedStep{Percent: 2, Ratio: 1.02, Total: 1.02}}, {Params: &speedStep{Percent: 2, Ratio: 1.025 / 1.02, Total: 1.025}}}
	if got := SpeedOf(drawn); got != 1.025 {
		t.Errorf("SpeedOf = %v, want the last total 1.025", got)
	}
	if got, ok := SpeedDrawnOf(drawn); !ok || math.Abs(got-1.02*1.02) > 1e-15 {
		t.Errorf("SpeedDrawnOf = %v, %v, want 1.0404", got, ok)
	}
	if _, ok := SpeedDrawnOf([]Drawn{{Params: &gainStep{}}}); ok {
		t.Error("SpeedDrawnOf without speed steps reports one")
	}
	if got := SpeedOf([]Drawn{{Params: &gainStep{}}}); got != 1 {
		t.Errorf("SpeedOf without speed steps = %g, want 1", got)
	}
}
