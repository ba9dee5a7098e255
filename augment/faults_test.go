package augment

import (
	"math"
	"testing"

	"thrum/augment/fault"
	"thrum/machine"
)

// A bearing-defect record names the machine's bearing it was built for
// (index in the bearing list and name, when there is one), and its defect
// rates are that bearing's rates at the file's shaft rate (Randall &
// Antoni 2011, the formulas of machine.Bearing.Rates). Other kinds name no
// bearing.
func TestFaultRecordNamesBearing(t *testing.T) {
	jitter := 1.5
	m := &machine.Machine{ID: "pump", Bearings: []machine.Bearing{
		{Name: "drive end", Balls: 9, BallDiameterMM: 7.94, PitchDiameterMM: 39.04},
		{Balls: 8, BallDiameterMM: 6.75, PitchDiameterMM: 28.5},
	}, Faults: &machine.FaultPlan{
		Kinds: []string{fault.KindOuterRace, fault.KindInnerRace, fault.KindImbalance}, PerClip: 12,
		SeverityDB: []float64{-10, -5}, ResonanceHz: []float64{2000, 3000}, JitterPercent: &jitter,
	}}
	c := &machine.Condition{Name: "duty", RPM: 1797, BandPercent: 2}
	e := &env{p: &machine.Plant{Seed: 3, SampleRate: 16000}, m: m, fs: 16000}
	j := job{rec: &machine.Recording{Rel: "pump/duty/a.wav", SHA256: "ab", Machine: "pump", Condition: "duty",
		Label: machine.LabelNormal, Group: "a"}, m: m, c: c}
	used := map[int]bool{}
	for ki, kind := range m.Faults.Kinds {
		for k := range m.Faults.PerClip {
			ent, _, err := e.faultDraw(j, machine.Clip{Frames: 16000}, ki, k, kind, "a")
			if err != nil {
				t.Fatal(err)
			}
			b := ent.Fault.Bearing
			if kind == fault.KindImbalance {
				if b != nil {
					t.Errorf("%s record names bearing %+v", kind, *b)
				}
				continue
			}
			if b == nil || b.Index < 0 || b.Index >= len(m.Bearings) || b.Name != m.Bearings[b.Index].Name {
				t.Fatalf("%s file %d: bearing %+v", kind, k, b)
			}
			used[b.Index] = true
			r := m.Bearings[b.Index].Rates(ent.Fault.ShaftHz)
			want := map[string]float64{fault.KindOuterRace: r.BPFO, fault.KindInnerRace: r.BPFI}[kind]
			key := map[string]string{fault.KindOuterRace: "bpfo", fault.KindInnerRace: "bpfi"}[kind]
			if got := ent.Fault.Frequencies[key]; math.Abs(got-want) > 1e-9*want {
				t.Errorf("%s file %d: %s %v Hz, bearing %d's rate %v Hz", kind, k, key, got, b.Index, want)
			}
		}
	}
	if len(used) != 2 {
		t.Errorf("24 bearing files drew bearings %v, want both", used)
	}
}

// A room's measured rt60 per octave band reaches the simulated room.
func TestToRoomKeepsRT60(t *testing.T) {
	temp := 20.0
	pr := &machine.Room{ID: "hall", Size: []float64{24, 14, 7}, Absorption: machine.Walls{0.1, 0.1, 0.1, 0.1, 0.1, 0.1},
		RT60: map[string]float64{"500": 2.1, "1000": 1.8}, TemperatureC: &temp}
	r, err := toRoom(pr)
	if err != nil {
		t.Fatal(err)
	}
	if len(r.RT60) != 2 || r.RT60[500] != 2.1 || r.RT60[1000] != 1.8 {
		t.Errorf("rt60 %v", r.RT60)
	}
	if got := r.RT60At(1000); got != 1.8 {
		t.Errorf("RT60At(1000) = %v, want the measured 1.8 s", got)
	}
}
