package fault

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// GearTooth is a local gear-tooth fault cue: the mesh harmonics, modulated
// once per revolution of the faulty gear while its damaged tooth meshes.
type GearTooth struct {
	// MeshHz is the gear-mesh frequency (teeth × shaft rate of either gear).
	MeshHz float64
	// FaultShaftHz is the shaft rate of the gear carrying the fault.
	FaultShaftHz float64
	// Gains are the amplitudes of mesh harmonics 1, 2, 3, ...; nil means
	// {1, 0.5, 0.25}. Harmonics at or above Nyquist are left out.
	Gains []float64
	// ModDepth is the modulation depth m while the tooth meshes (0 means
	// 1: the mesh amplitude doubles).
	ModDepth float64
	// PulseTeeth is the modulation pulse width in mesh periods (0 means 2,
	// about the contact ratio of spur gears, common practice).
	PulseTeeth float64
	// SeverityDB is the cue level relative to the clip RMS.
	SeverityDB float64
}

func (g GearTooth) withDefaults() GearTooth {
	if g.Gains == nil {
		g.Gains = []float64{1, 0.5, 0.25}
	}
	if g.ModDepth == 0 {
		g.ModDepth = 1
	}
	if g.PulseTeeth == 0 {
		g.PulseTeeth = 2
	}
	return g
}

// Validate reports whether the cue can be synthesised at fs Hz.
func (g GearTooth) Validate(fs float64) error {
	if err := checkFS(fs); err != nil {
		return err
	}
	g = g.withDefaults()
	if err := checkRate(KindGearTooth, "mesh frequency", g.MeshHz, fs); err != nil {
		return err
	}
	if err := checkRate(KindGearTooth, "fault shaft rate", g.FaultShaftHz, fs); err != nil {
		return err
	}
	if g.FaultShaftHz > g.MeshHz {
		return fmt.Errorf("fault: gear-tooth: fault shaft rate %g Hz above mesh frequency %g Hz", g.FaultShaftHz, g.MeshHz)
	}
	for h, a := range g.Gains {
		if math.IsNaN(a) || math.IsInf(a, 0) {
			return fmt.Errorf("fault: gear-tooth: gain of harmonic %d is %g", h+1, a)
		}
	}
	if !(g.ModDepth > 0) || math.IsInf(g.ModDepth, 0) {
		return fmt.Errorf("fault: gear-tooth: modulation depth %g must be positive", g.ModDepth)
	}
	if !(g.PulseTeeth > 0) || g.PulseTeeth*g.FaultShaftHz > g.MeshHz {
		return fmt.Errorf("fault: gear-tooth: pulse of %g mesh periods must be positive and shorter than a revolution", g.PulseTeeth)
	}
	return checkSeverity(KindGearTooth, g.SeverityDB)
}

// Label describes the cue; Frequencies hold gmf and fault_shaft.
func (g GearTooth) Label() Label {
	return Label{
		Kind:        KindGearTooth,
		Frequencies: map[string]float64{"gmf": g.MeshHz, "fault_shaft": g.FaultShaftHz},
		ShaftHz:     g.FaultShaftHz,
		SeverityDB:  g.SeverityDB,
	}
}

// Synthesize writes the cue; see Cue. Draw order: the pulse phase, then one
// phase per harmonic.
func (g GearTooth) Synthesize(dst []float64, n int, fs, clipRMS float64, rng *rand.Rand) ([]float64, error) {
	dst, err := prepare(g, dst, n, fs, clipRMS, rng)
	if err != nil {
		return dst, err
	}
	g = g.withDefaults()
	centre := rng.Float64() / g.FaultShaftHz // time of the first pulse centre, s
	for h, a := range g.Gains {
		phase := 2 * math.Pi * rng.Float64()
		f := float64(h+1) * g.MeshHz
		if a == 0 || f >= fs/2 {
			continue
		}
		addTone(dst, a, f/fs, phase)
	}
	// Modulation 1 + m·p(t), p a Hann pulse of width W every revolution.
	width := g.PulseTeeth / g.MeshHz
	end := float64(n) / fs
	for r := -1; ; r++ {
		tc := centre + float64(r)/g.FaultShaftHz
		if tc-width/2 >= end {
			break
		}
		lo := max(0, int(math.Ceil((tc-width/2)*fs)))
		hi := min(n, int(math.Ceil((tc+width/2)*fs)))
		// cos(2πd/W) by a rotating phasor, d the time from the centre.
		arg := 2 * math.Pi * (float64(lo)/fs - tc) / width
		z := complex(math.Cos(arg), math.Sin(arg))
		w := complex(math.Cos(2*math.Pi/(width*fs)), math.Sin(2*math.Pi/(width*fs)))
		for i := lo; i < hi; i++ {
			dst[i] *= 1 + g.ModDepth*0.5*(1+real(z))
			z *= w
		}
	}
	return dst, setLevel(dst, clipRMS, g.SeverityDB, KindGearTooth)
}
