package augment

import (
	"crypto/sha256"
	"encoding/binary"
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	"thrum/machine"
	"thrum/machine/ledger"
)

// VariantSeed derives a variant's seed from the plant seed, the machine id,
// the source recording's content hash, the clip index and the variant index,
// so that an output never depends on worker count, order or shard.
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

// Drawn is one step of a variant with its exact drawn parameters.
type Drawn struct {
	Step   *machine.Step
	Record ledger.StepRecord
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
	// IRFiles lists, per step index, the measured IR files available.
	ClipFrames int64
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

// Draw draws one variant of a recipe: how many steps (MinSteps … MaxSteps),
// which (keeping their recipe order), and every parameter inside its range.
// All randomness a variant needs is drawn here, so the records fully describe
// the variant before any sample is touched.
func Draw(r *machine.Recipe, rng *rand.Rand, dc DrawContext) []Drawn {
	k := r.MinSteps + rng.IntN(r.MaxSteps-r.MinSteps+1)
	idx := rng.Perm(len(r.Steps))[:k]
	sort.Ints(idx)
	out := make([]Drawn, 0, k)
	for _, i := range idx {
		s := &r.Steps[i]
		rec := ledger.StepRecord{Kind: s.Kind, Params: map[string]float64{}, Text: map[string]string{}}
		switch s.Kind {
		case "speed":
			pct := uniform(rng, s.Range, s.Increment)
			ratio := clampSpeed(1+pct/100, dc.Condition, dc.HoldOutBands)
			rec.Params["percent"] = pct
			rec.Params["ratio"] = ratio
		case "gain":
			rec.Params["db"] = uniform(rng, s.Range, s.Increment)
		case "invert":
		case "shift":
			rec.Params["ms"] = uniform(rng, s.Range, s.Increment)
			rec.Text["mode"] = s.Mode
		case "filter":
			rec.Text["type"] = s.Mode
			rec.Params["order"] = float64(s.Order)
			q := s.Q
			if q == 0 {
				q = 1 / math.Sqrt2
			}
			rec.Params["q"] = q
			switch s.Mode {
			case "telephone":
				rec.Params["low_hz"], rec.Params["high_hz"] = 300, 3400
			case "lowpass":
				rec.Params["high_hz"] = uniform(rng, s.Range, s.Increment)
			case "highpass":
				rec.Params["low_hz"] = uniform(rng, s.Range, s.Increment)
			case "bandpass":
				a, b := uniform(rng, s.Range, s.Increment), uniform(rng, s.Range, s.Increment)
				if a > b {
					a, b = b, a
				}
				if b < a*1.2 {
					b = math.Min(a*1.2, s.Range[1])
					a = b / 1.2
				}
				rec.Params["low_hz"], rec.Params["high_hz"] = a, b
			}
		case "noise":
			rec.Params["snr_db"] = uniform(rng, s.Range, s.Increment)
			colour := s.Mode
			if colour == "any" || colour == "" {
				colour = []string{"white", "pink", "brown"}[rng.IntN(3)]
			}
			rec.Text["colour"] = colour
			rec.Text["weighting"] = weightingName(s.Weighting)
			rec.Params["noise_seed"] = float64(rng.Uint32())
		case "background":
			rec.Params["snr_db"] = uniform(rng, s.Range, s.Increment)
			rec.Text["weighting"] = weightingName(s.Weighting)
			if len(dc.Backgrounds) > 0 {
				id := dc.Backgrounds[rng.IntN(len(dc.Backgrounds))]
				rec.Text["background"] = id
				if n := dc.BackgroundFrames[id]; n > 0 {
					rec.Params["offset"] = float64(rng.Int64N(n))
				}
			} else {
				rec.Text["background"] = "synthesised"
				rec.Params["noise_seed"] = float64(rng.Uint32())
			}
		case "room":
			n := dc.MicPositions
			if n <= 0 {
				n = DefaultMicPositions
			}
			rec.Params["mic"] = float64(rng.IntN(n))
		case "ir":
			rec.Text["file"] = s.Files[rng.IntN(len(s.Files))]
		case "tempo":
			rec.Params["percent"] = uniform(rng, s.Range, s.Increment)
			rec.Nonphysical = true
		case "pitch":
			rec.Params["cents"] = uniform(rng, s.Range, s.Increment)
			rec.Nonphysical = true
		}
		if len(rec.Params) == 0 {
			rec.Params = nil
		}
		if len(rec.Text) == 0 {
			rec.Text = nil
		}
		out = append(out, Drawn{Step: s, Record: rec})
	}
	return out
}

// DefaultMicPositions is the size of a machine's microphone-position pool:
// positions are drawn once per machine inside its zone and each variant picks
// one, so their impulse responses are computed once and shared.
const DefaultMicPositions = 16

func weightingName(w string) string {
	if w == "A" {
		return "A"
	}
	return "none"
}

// clampSpeed keeps a speed ratio inside the condition's band and out of
// every hold-out band: a ratio that would land in a hold-out band is pulled
// back towards 1 until it is just outside.
//
// The result is then rounded towards 1 to a multiple of 0.001: a ratio
// with a small denominator takes the resampler's exact polyphase path, and
// rounding towards 1 never leaves the band nor enters a hold-out band.
func clampSpeed(r float64, c *machine.Condition, holdOut [][2]float64) float64 {
	lo, hi := c.SpeedBand()
	r = math.Min(math.Max(r, lo), hi)
	for _, b := range holdOut {
		rpm := c.RPM * r
		if rpm >= b[0] && rpm <= b[1] {
			if r > 1 {
				r = math.Nextafter(b[0]/c.RPM, 0)
			} else {
				r = math.Nextafter(b[1]/c.RPM, 2)
			}
		}
	}
	return 1 + math.Trunc((r-1)*1000+1e-9*sign(r-1))/1000
}

func sign(x float64) float64 {
	if x < 0 {
		return -1
	}
	return 1
}

// HoldOutBands lists the speed bands of a machine's hold-out conditions.
func HoldOutBands(m *machine.Machine) [][2]float64 {
	var out [][2]float64
	for i := range m.Conditions {
		if c := &m.Conditions[i]; c.HoldOut {
			lo, hi := c.Band()
			out = append(out, [2]float64{lo, hi})
		}
	}
	return out
}

// SpeedOf returns the product of the speed ratios among drawn steps.
func SpeedOf(steps []ledger.StepRecord) float64 {
	r := 1.0
	for _, s := range steps {
		if s.Kind == "speed" {
			r *= s.Params["ratio"]
		}
	}
	return r
}
