package machine

import (
	"fmt"
	"math"
)

// Machine physics: the tonal lines a rotating machine makes, computed from
// its geometry and its shaft speed. All rates are in Hz unless a name says
// "orders" (multiples of the shaft rate).
//
// Shaft rate:        fr = rpm / 60
// Blade / vane pass: BPF = N_blades · fr
// Gear mesh:         GMF = Z_driving · f_driving = Z_driven · f_driven
//
// Rolling-element bearing, outer ring fixed, inner ring turning with the
// shaft at fr, n rolling elements of diameter d on pitch diameter D with
// contact angle α, k = (d/D)·cos α (Randall & Antoni 2011):
//
//	FTF  = fr/2 · (1 − k)          cage (fundamental train)
//	BPFO = n·fr/2 · (1 − k)        ball pass, outer race (= n·FTF)
//	BPFI = n·fr/2 · (1 + k)        ball pass, inner race
//	BSF  = D/(2d) · fr · (1 − k²)  ball spin
//
// A spall on a rolling element strikes both races once per spin, so a ball
// defect repeats at 2·BSF (BallPass). These are kinematic values: real
// bearings slip, and measured lines sit roughly 1–2 % lower.

// ShaftHz is the shaft rotation rate in Hz for a speed in rpm.
func ShaftHz(rpm float64) float64 { return rpm / 60 }

// SpeedBand returns the speed ratios a condition allows, relative to its
// RPM: 1 − BandPercent/100 … 1 + BandPercent/100. It is the one place the
// band is computed; Band gives it in rpm, the recipe draw clamps speed steps
// to it, the guard rejects a variant outside it and the split and the audit
// test hold-out bands with it.
func (c *Condition) SpeedBand() (lo, hi float64) {
	return 1 - c.BandPercent/100, 1 + c.BandPercent/100
}

// BladePassHz is the blade-pass (fan) or vane-pass (pump, compressor)
// frequency: the number of blades times the shaft rate.
func BladePassHz(blades int, shaftHz float64) float64 {
	return float64(blades) * shaftHz
}

// DefectRates are a bearing's four kinematic defect rates, in Hz (from
// Rates) or in orders of the shaft rate (from Orders).
type DefectRates struct {
	FTF  float64 // cage, fundamental train
	BPFO float64 // ball pass, outer race
	BPFI float64 // ball pass, inner race
	BSF  float64 // ball spin
}

// BallPass is the repetition rate of a rolling-element defect, 2·BSF.
func (d DefectRates) BallPass() float64 { return 2 * d.BSF }

// Map gives the rates keyed by their lower-case trade names (ftf, bpfo,
// bpfi, bsf), the form the ledger's fault records use.
func (d DefectRates) Map() map[string]float64 {
	return map[string]float64{"ftf": d.FTF, "bpfo": d.BPFO, "bpfi": d.BPFI, "bsf": d.BSF}
}

// Check reports whether the bearing geometry gives meaningful defect rates:
// at least one rolling element, positive diameters with d < D, and a
// contact angle in [0°, 90°).
func (b Bearing) Check() error {
	switch {
	case b.Balls < 1:
		return fmt.Errorf("machine: bearing %q: balls = %d, need at least 1", b.Name, b.Balls)
	case !(b.BallDiameterMM > 0) || math.IsInf(b.BallDiameterMM, 0):
		return fmt.Errorf("machine: bearing %q: ball_diameter_mm = %g, need > 0", b.Name, b.BallDiameterMM)
	case !(b.PitchDiameterMM > b.BallDiameterMM) || math.IsInf(b.PitchDiameterMM, 0):
		return fmt.Errorf("machine: bearing %q: pitch_diameter_mm = %g, need > ball_diameter_mm (%g)",
			b.Name, b.PitchDiameterMM, b.BallDiameterMM)
	case !(b.ContactAngleDeg >= 0 && b.ContactAngleDeg < 90):
		return fmt.Errorf("machine: bearing %q: contact_angle_deg = %g, need 0 <= angle < 90", b.Name, b.ContactAngleDeg)
	}
	return nil
}

// Rates gives the bearing's defect rates in Hz with its inner ring turning
// at shaftHz and its outer ring fixed. It panics if the geometry fails
// Check (Load rejects such a plant).
func (b Bearing) Rates(shaftHz float64) DefectRates {
	if err := b.Check(); err != nil {
		panic(err.Error())
	}
	k := b.BallDiameterMM / b.PitchDiameterMM * math.Cos(b.ContactAngleDeg*math.Pi/180)
	n := float64(b.Balls)
	return DefectRates{
		FTF:  shaftHz / 2 * (1 - k),
		BPFO: n * shaftHz / 2 * (1 - k),
		BPFI: n * shaftHz / 2 * (1 + k),
		BSF:  b.PitchDiameterMM / (2 * b.BallDiameterMM) * shaftHz * (1 - k*k),
	}
}

// Orders gives the defect rates as multiples of the shaft rate.
func (b Bearing) Orders() DefectRates { return b.Rates(1) }

// Check reports whether both gears of the stage have at least one tooth.
func (g GearStage) Check() error {
	if g.DrivingTeeth < 1 || g.DrivenTeeth < 1 {
		return fmt.Errorf("machine: gear stage %d:%d: tooth counts must be at least 1", g.DrivingTeeth, g.DrivenTeeth)
	}
	return nil
}

// Ratio is the stage's speed ratio, driven shaft rate over driving shaft
// rate: Z_driving / Z_driven. It panics if the stage fails Check.
func (g GearStage) Ratio() float64 {
	if err := g.Check(); err != nil {
		panic(err.Error())
	}
	return float64(g.DrivingTeeth) / float64(g.DrivenTeeth)
}

// AssemblyPhases is the number of assembly phases, gcd(Z_driving, Z_driven):
// the mesh pattern repeats every N_A teeth, so a tooth-pair defect from
// assembly shows at GMF/N_A. It panics if the stage fails Check.
func (g GearStage) AssemblyPhases() int {
	if err := g.Check(); err != nil {
		panic(err.Error())
	}
	a, b := g.DrivingTeeth, g.DrivenTeeth
	for b != 0 {
		a, b = b, a%b
	}
	return a
}

// HuntingToothHz is the rate at which the same pair of teeth meet again,
// GMF·N_A / (Z_driving·Z_driven), for the driving gear turning at
// drivingHz. It panics if the stage fails Check.
func (g GearStage) HuntingToothHz(drivingHz float64) float64 {
	na := float64(g.AssemblyPhases())
	zp, zg := float64(g.DrivingTeeth), float64(g.DrivenTeeth)
	return zp * drivingHz * na / (zp * zg)
}

// ShaftRates gives the rate of every shaft in Hz, index 0 the input shaft
// turning at inputHz, index i+1 the shaft driven by gear stage i. A machine
// with no gears has one shaft. It panics if a stage fails Check.
func (m Machine) ShaftRates(inputHz float64) []float64 {
	out := make([]float64, len(m.Gears)+1)
	out[0] = inputHz
	for i, g := range m.Gears {
		out[i+1] = out[i] * g.Ratio()
	}
	return out
}

// MeshHz gives the gear-mesh frequency of every stage in Hz: the driving
// gear's tooth count times its shaft's rate. It panics if a stage fails
// Check.
func (m Machine) MeshHz(inputHz float64) []float64 {
	shafts := m.ShaftRates(inputHz)
	out := make([]float64, len(m.Gears))
	for i, g := range m.Gears {
		out[i] = float64(g.DrivingTeeth) * shafts[i]
	}
	return out
}

// BearingRates gives the defect rates in Hz of every bearing of the
// machine, each at the rate of the shaft it sits on, with the input shaft
// at inputHz. It panics if a bearing or gear stage fails Check or a
// bearing's shaft index is out of range.
func (m Machine) BearingRates(inputHz float64) []DefectRates {
	shafts := m.ShaftRates(inputHz)
	out := make([]DefectRates, len(m.Bearings))
	for i, b := range m.Bearings {
		if b.Shaft < 0 || b.Shaft >= len(shafts) {
			panic(fmt.Sprintf("machine: bearing %q: shaft %d out of range [0, %d]", b.Name, b.Shaft, len(shafts)-1))
		}
		out[i] = b.Rates(shafts[b.Shaft])
	}
	return out
}

// BladePass is the machine's blade- or vane-pass frequency in Hz with its
// input shaft at inputHz (0 when it declares no blades). Blades are taken
// to sit on the input shaft.
func (m Machine) BladePass(inputHz float64) float64 {
	return BladePassHz(m.Blades, inputHz)
}
