package fault_test

import (
	"fmt"
	"math"
	"math/rand/v2"

	"thrum/augment/fault"
)

// An outer-race cue on the CWRU 6205 drive-end bearing at 1797 rpm, 6 dB
// below a noise clip. The rates are the clip's actual ones (here, the
// nominal speed, speed ratio 1).
func ExampleAdd() {
	const fs = 12000.0
	rng := rand.New(rand.NewPCG(1, 2))
	clip := make([]float64, 2*12000)
	for i := range clip {
		clip[i] = 0.05 * rng.NormFloat64()
	}
	cue := fault.Bearing{
		Kind:       fault.KindOuterRace,
		ShaftHz:    29.95,
		DefectHz:   107.36, // BPFO = 3.5848 × shaft (CWRU Bearing Data Center)
		JitterFrac: fault.DefaultJitterFrac,
		SeverityDB: -6,
	}
	out, label, err := fault.Add(nil, clip, fs, cue, rng)
	if err != nil {
		fmt.Println(err)
		return
	}
	added := make([]float64, len(out))
	for i := range out {
		added[i] = out[i] - clip[i]
	}
	fmt.Printf("%s: bpfo %.2f Hz, resonance %.0f Hz, %.1f dB re clip\n",
		label.Kind, label.Frequencies["bpfo"], label.ResonanceHz,
		20*math.Log10(fault.RMS(added)/fault.RMS(clip)))
	// Output:
	// outer-race: bpfo 107.36 Hz, resonance 3000 Hz, -6.0 dB re clip
}
