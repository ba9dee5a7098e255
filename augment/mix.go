package augment

import (
	"errors"
	"fmt"
	"math"
)

// ErrSilent is returned when a mix is asked for with a signal or noise of
// zero power, for which no SNR exists.
var ErrSilent = errors.New("augment: silent signal or noise, SNR undefined")

// NoiseGain returns g = √(Ps/(Pn·10^(snrDB/10))), the factor that puts noise
// of power pn at snrDB below a signal of power ps.
func NoiseGain(ps, pn, snrDB float64) float64 {
	return math.Sqrt(ps / (pn * math.Pow(10, snrDB/10)))
}

// Mix writes signal + g·noise[:len(signal)] to dst (nil or short
// allocates; dst may alias signal or noise) so that the SNR measured with
// weighting w over the signal's length is snrDB, and returns g and the
// mix. Powers are measured before dst is written. It returns ErrSilent
// when either power is zero and an error for a non-finite target. It
// panics if noise is shorter than signal.
func Mix(dst, signal, noise []float64, fs, snrDB float64, w Weighting) (gain float64, y []float64, err error) {
	if len(noise) < len(signal) {
		panic(fmt.Sprintf("augment: noise has %d samples, signal %d", len(noise), len(signal)))
	}
	if math.IsNaN(snrDB) || math.IsInf(snrDB, 0) {
		return 0, dst, fmt.Errorf("augment: SNR target %v is not finite", snrDB)
	}
	noise = noise[:len(signal)]
	ps, pn := Power(signal, fs, w), Power(noise, fs, w)
	if ps == 0 || pn == 0 || math.IsNaN(ps) || math.IsNaN(pn) {
		return 0, dst, ErrSilent
	}
	g := NoiseGain(ps, pn, snrDB)
	dst = grow(dst, len(signal))
	for i := range dst {
		dst[i] = signal[i] + g*noise[i]
	}
	return g, dst, nil
}
