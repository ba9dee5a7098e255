package room

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
)

// Wall indices into Room.Absorption and the values of Room.Octave.
const (
	WallX0      = 0 // the wall at x = 0
	WallXL      = 1 // the wall at x = Lx
	WallY0      = 2 // the wall at y = 0
	WallYL      = 3 // the wall at y = Ly
	WallFloor   = 4 // z = 0
	WallCeiling = 5 // z = Lz
)

// OctaveBands returns the octave-band centres (Hz) accepted as keys of
// Room.Octave.
func OctaveBands() [6]int { return [6]int{125, 250, 500, 1000, 2000, 4000} }

// Limits of a measured RT60 accepted by Validate, s.
const (
	MinRT60 = 0.05
	MaxRT60 = 30.0
)

// Temperature limits accepted by Validate, °C.
const (
	MinTemperatureC = -40.0
	MaxTemperatureC = 60.0
)

// Room is a rectangular (shoebox) room with one corner at the origin.
type Room struct {
	// Size is Lx, Ly, Lz in metres (z is height).
	Size [3]float64
	// Absorption is the energy absorption coefficient α of each wall in the
	// order x=0, x=Lx, y=0, y=Ly, floor, ceiling, 0 ≤ α < 1. It is the
	// broadband value used by Sabine, Eyring and Fitzroy, and by
	// ImpulseResponse when Octave is empty.
	Absorption [6]float64
	// Octave optionally gives α per wall per octave band, keyed by band
	// centre in Hz (any non-empty subset of OctaveBands). When present,
	// ImpulseResponse uses it instead of Absorption.
	Octave map[int][6]float64
	// RT60 optionally gives a measured reverberation time per octave band
	// in seconds, keyed by band centre (any non-empty subset of
	// OctaveBands). When present, the diffuse tail decays at these times
	// (interpolated between bands) instead of Eyring's for the walls.
	RT60 map[int]float64
	// TemperatureC is the air temperature in °C. The zero value is 0 °C
	// (c = 331.3 m/s), not the usual 20 °C: set it explicitly.
	TemperatureC float64
}

// SpeedOfSound returns c = 331.3·sqrt(1 + T/273.15) m/s for dry air at
// tempC °C (343.2 m/s at 20 °C).
func SpeedOfSound(tempC float64) float64 {
	return 331.3 * math.Sqrt(1+tempC/273.15)
}

// Validate reports whether the room is usable: finite sizes > 0, every α
// (broadband and per band) finite with 0 ≤ α < 1, band keys from OctaveBands,
// every RT60 within MinRT60 … MaxRT60, and
// MinTemperatureC ≤ TemperatureC ≤ MaxTemperatureC.
func (r Room) Validate() error {
	for i, s := range r.Size {
		if !(s > 0) || math.IsInf(s, 0) {
			return fmt.Errorf("room: size[%d] = %g m, want a finite value > 0", i, s)
		}
	}
	if err := checkAlpha("absorption", r.Absorption); err != nil {
		return err
	}
	for hz, a := range r.Octave {
		if !isBand(hz) {
			return fmt.Errorf("room: octave band %d Hz, want one of %v", hz, OctaveBands())
		}
		if err := checkAlpha(fmt.Sprintf("octave[%d]", hz), a); err != nil {
			return err
		}
	}
	for hz, t := range r.RT60 {
		if !isBand(hz) {
			return fmt.Errorf("room: rt60 band %d Hz, want one of %v", hz, OctaveBands())
		}
		if !(t >= MinRT60 && t <= MaxRT60) {
			return fmt.Errorf("room: rt60[%d] = %g s, want %g … %g s", hz, t, MinRT60, MaxRT60)
		}
	}
	t := r.TemperatureC
	if !(t >= MinTemperatureC && t <= MaxTemperatureC) {
		return fmt.Errorf("room: temperature %g °C outside [%g, %g]", t, MinTemperatureC, MaxTemperatureC)
	}
	return nil
}

func checkAlpha(name string, a [6]float64) error {
	for i, v := range a {
		if !(v >= 0 && v < 1) {
			return fmt.Errorf("room: %s[%d] = %g, want 0 ≤ α < 1", name, i, v)
		}
	}
	return nil
}

func isBand(hz int) bool {
	for _, b := range OctaveBands() {
		if b == hz {
			return true
		}
	}
	return false
}

// Band returns the room with Absorption replaced by the α of octave band hz
// (and Octave cleared), so that Sabine, Eyring and Fitzroy give that band's
// reverberation time. ok is false when the band is not given.
func (r Room) Band(hz int) (band Room, ok bool) {
	a, ok := r.Octave[hz]
	if !ok {
		return r, false
	}
	band = r
	band.Absorption = a
	band.Octave = nil
	return band, true
}

// bands returns the sorted band centres of r.Octave (nil when empty).
func (r Room) bands() []int {
	if len(r.Octave) == 0 {
		return nil
	}
	out := make([]int, 0, len(r.Octave))
	for hz := range r.Octave {
		out = append(out, hz)
	}
	sort.Ints(out)
	return out
}

// Volume returns Lx·Ly·Lz in m³.
func (r Room) Volume() float64 { return r.Size[0] * r.Size[1] * r.Size[2] }

// wallAreas returns the area of each wall in the Absorption order.
func (r Room) wallAreas() [6]float64 {
	x, y, z := r.Size[0], r.Size[1], r.Size[2]
	return [6]float64{y * z, y * z, x * z, x * z, x * y, x * y}
}

// SurfaceArea returns the total wall area S in m².
func (r Room) SurfaceArea() float64 {
	s := 0.0
	for _, a := range r.wallAreas() {
		s += a
	}
	return s
}

// sabineK is 24·ln(10)/c in s/m (0.1610 at 20 °C).
func (r Room) sabineK() float64 { return 24 * math.Ln10 / SpeedOfSound(r.TemperatureC) }

// meanAbsorption returns ᾱ = Σ Sᵢαᵢ / S.
func (r Room) meanAbsorption() float64 {
	area := r.wallAreas()
	a, s := 0.0, 0.0
	for i := range area {
		a += area[i] * r.Absorption[i]
		s += area[i]
	}
	return a / s
}

// Sabine returns the Sabine reverberation time T = 24·ln10·V / (c·Σ Sᵢαᵢ) in
// seconds from the broadband Absorption (+Inf when all α are 0).
func (r Room) Sabine() float64 {
	return r.sabineK() * r.Volume() / (r.SurfaceArea() * r.meanAbsorption())
}

// Eyring returns the Eyring reverberation time
// T = 24·ln10·V / (−c·S·ln(1 − ᾱ)) in seconds, ᾱ the area-weighted mean of
// the broadband Absorption (+Inf when ᾱ = 0).
func (r Room) Eyring() float64 {
	return r.sabineK() * r.Volume() / (-r.SurfaceArea() * math.Log1p(-r.meanAbsorption()))
}

// Fitzroy returns the Fitzroy reverberation time for absorption that differs
// between the three pairs of parallel walls:
//
//	T = 24·ln10·V/(c·S²) · Σₐ −Sₐ / ln(1 − ᾱₐ)
//
// with Sₐ the area of the pair normal to axis a and ᾱₐ its mean α. It equals
// Eyring for uniform absorption and is never shorter (Jensen's inequality);
// ImpulseResponse uses it to choose the IR length. +Inf when a pair has α = 0.
func (r Room) Fitzroy() float64 {
	area := r.wallAreas()
	s := r.SurfaceArea()
	sum := 0.0
	for ax := 0; ax < 3; ax++ {
		sa := area[2*ax] + area[2*ax+1]
		alpha := (r.Absorption[2*ax] + r.Absorption[2*ax+1]) / 2
		sum += -sa / math.Log1p(-alpha)
	}
	return r.sabineK() * r.Volume() / (s * s) * sum
}

// Inside reports whether p lies strictly inside the room.
func (r Room) Inside(p [3]float64) bool {
	for i := range p {
		if !(p[i] > 0 && p[i] < r.Size[i]) {
			return false
		}
	}
	return true
}

// DrawPoint returns a point drawn uniformly from the box [min, max] (per
// axis). It panics if min[i] > max[i] or a bound is not finite.
func DrawPoint(rng *rand.Rand, min, max [3]float64) [3]float64 {
	var p [3]float64
	for i := range p {
		if !(min[i] <= max[i]) || math.IsInf(min[i], 0) || math.IsInf(max[i], 0) {
			panic(fmt.Sprintf("room: DrawPoint axis %d: bad box [%g, %g]", i, min[i], max[i]))
		}
		p[i] = min[i] + (max[i]-min[i])*rng.Float64()
	}
	return p
}
