package augment

import (
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"math"
	"math/rand/v2"

	"thrum/machine"
)

// VariantSeed derives a variant's seed from the plant seed, the machine id,
// the source recording's content hash, the clip index and the variant index,
// so that an output never depends on worker count, order or shard.
//
// The seed is the first 8 bytes, read little-endian, of the SHA-256 of the
// byte string
//
//	plantSeed as 8 bytes little-endian
//	0x00 machineID 0x00 sourceSHA 0x00 clip 0x00 variant 0x00 purpose
//
// where clip and variant are written in decimal ASCII (a leading '-' when
// negative) and the strings are their UTF-8 bytes, with no terminator after
// purpose. The byte string is a stability promise: changing it changes
// every variant of every plant.
func VariantSeed(plantSeed uint64, machineID, sourceSHA string, clip, variant int, purpose string) uint64 {
	h := sha256.New()
	var b [8]byte
	binary.LittleEndian.PutUint64(b[:], plantSeed)
	h.Write(b[:])
	fmt.Fprintf(h, "\x00%s\x00%s\x00%d\x00%d\x00%s", machineID, sourceSHA, clip, variant, purpose)
	return binary.LittleEndian.Uint64(h.Sum(nil))
}

// NewRand returns the PCG generator for a seed.
func NewRand(seed uint64) *rand.Rand {
	return rand.New(rand.NewPCG(seed, seed^0x9e3779b97f4a7c15))
}

// DrawContext is what drawing needs besides the recipe.
type DrawContext struct {
	Machine   *machine.Machine
	Condition *machine.Condition
	// HoldOutBands are the speed bands [lo, hi] rpm of the machine's hold-out
	// conditions: a speed step may never move a clip into one.
	HoldOutBands [][2]float64
	// Backgrounds are the background ids a training variant may use (the
	// training share of the background partition). Empty: synthesised plant
	// noise.
	Backgrounds []string
	// BackgroundFrames gives each background's length in frames, for the
	// random offset.
	BackgroundFrames map[string]int64
	// MicPositions is the pool of microphone positions drawn in the zone.
	MicPositions int
	// ClipFrames is the clip's length in frames.
	ClipFrames int64
	// SampleRate is the working sample rate in Hz (the tempo steps' reach
	// past their span depends on it); 0 when unknown.
	SampleRate float64
}

// uniform draws from [lo, hi], quantised to lo + k·inc when inc > 0.
func uniform(rng *rand.Rand, r []float64, inc float64) float64 {
	lo, hi := r[0], r[1]
	if inc > 0 {
		n := int(math.Floor((hi-lo)/inc + 1e-9))
		return lo + float64(rng.IntN(n+1))*inc
	}
	return lo + rng.Float64()*(hi-lo)
}
