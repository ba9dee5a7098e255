package room_test

import (
	"fmt"
	"math/rand/v2"

	"thrum/augment/room"
)

func ExampleRoom_Eyring() {
	// 10 × 8 × 3 m with ᾱ = 0.1 on every wall (Sabine 1922; Eyring 1930).
	r := room.Room{
		Size:         [3]float64{10, 8, 3},
		Absorption:   [6]float64{0.1, 0.1, 0.1, 0.1, 0.1, 0.1},
		TemperatureC: 20,
	}
	fmt.Printf("c %.1f m/s, Sabine %.3f s, Eyring %.3f s\n", room.SpeedOfSound(20), r.Sabine(), r.Eyring())
	// Output: c 343.2 m/s, Sabine 1.442 s, Eyring 1.369 s
}

func ExampleImpulseResponse() {
	r := room.Room{
		Size:         [3]float64{6, 5, 4},
		Absorption:   [6]float64{0.3, 0.3, 0.3, 0.3, 0.1, 0.5},
		TemperatureC: 20,
	}
	const fs = 16000
	h, err := room.ImpulseResponse(nil, r, [3]float64{1.5, 2, 1}, [3]float64{4, 3.5, 1.6}, fs, room.Config{}, rand.New(rand.NewPCG(1, 2)))
	if err != nil {
		fmt.Println(err)
		return
	}
	t30, err := room.T30(h, fs)
	fmt.Printf("%.2f s IR, T30 %.2f s (Eyring %.2f s), %v\n", float64(len(h))/fs, t30, r.Eyring(), err)
	v := room.NewReverb(room.UnitEnergy(h), fs)
	y := v.Apply(nil, make([]float64, fs), fs) // a 1 s clip
	fmt.Println(len(y))
	// Output:
	// 0.34 s IR, T30 0.37 s (Eyring 0.37 s), <nil>
	// 16000
}
