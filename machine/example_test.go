package machine_test

import (
	"fmt"

	"thrum/machine"
)

func ExampleBearing_Rates() {
	// A deep-groove bearing with 8 balls, d/D = 0.2, on a shaft at 1800 rpm.
	b := machine.Bearing{Name: "drive-end", Balls: 8, BallDiameterMM: 10, PitchDiameterMM: 50}
	r := b.Rates(machine.ShaftHz(1800))
	fmt.Printf("FTF %.1f Hz, BPFO %.1f Hz, BPFI %.1f Hz, BSF %.1f Hz, ball pass %.1f Hz\n",
		r.FTF, r.BPFO, r.BPFI, r.BSF, r.BallPass())
	// Output:
	// FTF 12.0 Hz, BPFO 96.0 Hz, BPFI 144.0 Hz, BSF 72.0 Hz, ball pass 144.0 Hz
}

func ExampleMachine_MeshHz() {
	// An 8-tooth pinion on a 20 Hz input shaft driving a 42-tooth gear.
	m := machine.Machine{Gears: []machine.GearStage{{DrivingTeeth: 8, DrivenTeeth: 42}}}
	fmt.Printf("shafts %.4f Hz\n", m.ShaftRates(20))
	fmt.Printf("mesh %.1f Hz\n", m.MeshHz(20))
	// Output:
	// shafts [20.0000 3.8095] Hz
	// mesh [160.0] Hz
}

func ExampleBladePassHz() {
	// A 7-blade fan at 1800 rpm.
	fmt.Printf("%.0f Hz\n", machine.BladePassHz(7, machine.ShaftHz(1800)))
	// Output:
	// 210 Hz
}
