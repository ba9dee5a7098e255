// A machine's feature settings, resolved once per stage from the plant.

package features

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"math"

	"thrum/machine"
)

// machineSetup is the resolved feature configuration of one machine.
type machineSetup struct {
	cfg      Config
	envLo    float64
	envHi    float64
	envMax   float64
	masks    MaskSpec
	copies   int
	stack    bool
	pictures bool
	lines    map[string]float64
	// settings is the hash of everything above that shapes a clip's
	// feature files, with the sample rate, the plant seed (mask draws) and
	// FormatVersion: a rerun skips a clip whose audio hash and settings
	// hash are both unchanged.
	settings string
}

// FormatVersion is raised whenever the features stage computes or writes a
// clip's files differently, so that a rerun recomputes features written by
// an earlier thrum instead of reusing them.
const FormatVersion = 3

func setupFor(p *machine.Plant, m *machine.Machine) (machineSetup, error) {
	fc := p.FeaturesFor(m)
	fs := float64(p.SampleRate)
	s := machineSetup{cfg: Config{NFFT: fc.NFFT, Hop: fc.Hop, Bands: fc.Bands, Scale: fc.Scale, Norm: fc.Norm, FMin: fc.FMin, FMax: fc.FMax}}
	if fc.Center != nil {
		s.cfg.Center = *fc.Center
	}
	cfg, err := s.cfg.Resolve(fs)
	if err != nil {
		return s, fmt.Errorf("features: machine %s: %w", m.ID, err)
	}
	s.cfg = cfg
	s.envLo, s.envHi = 2000, math.Min(5000, 0.45*fs)
	if m.Faults != nil && len(m.Faults.ResonanceHz) == 2 {
		s.envLo, s.envHi = 0.8*m.Faults.ResonanceHz[0], math.Min(1.2*m.Faults.ResonanceHz[1], 0.49*fs)
	}
	if len(fc.EnvelopeHz) == 2 {
		s.envLo, s.envHi = fc.EnvelopeHz[0], fc.EnvelopeHz[1]
	}
	if s.envLo >= s.envHi {
		s.envLo = s.envHi / 2
	}
	s.envMax = 1000
	if fc.EnvelopeMaxHz > 0 {
		s.envMax = fc.EnvelopeMaxHz
	}
	// Masks: defaults in the spirit of the mild policies of Park et al.
	// 2019, scaled to 128 bands and 10 s clips at hop 512 (common practice).
	s.masks = MaskSpec{F: 16, MF: 2, T: 30, P: 0.2, MT: 2, Value: MaskMean}
	s.copies = 2
	pi := func(d *int, v *int) {
		if v != nil {
			*d = *v
		}
	}
	pi(&s.copies, fc.MaskCopies)
	pi(&s.masks.F, fc.MaskF)
	pi(&s.masks.MF, fc.MaskMF)
	pi(&s.masks.T, fc.MaskT)
	pi(&s.masks.MT, fc.MaskMT)
	if fc.MaskP != nil {
		s.masks.P = *fc.MaskP
	}
	if fc.MaskValue != "" {
		s.masks.Value = fc.MaskValue
	}
	if err := s.masks.Validate(); err != nil {
		return s, fmt.Errorf("features: machine %s: %w", m.ID, err)
	}
	s.stack = fc.Stack != nil && *fc.Stack
	s.pictures = fc.Pictures == nil || *fc.Pictures
	h := sha256.New()
	fmt.Fprintf(h, "features %d\x00fs %d\x00seed %d\x00%+v\x00envelope %v %v %v\x00masks %+v copies %d",
		FormatVersion, p.SampleRate, p.Seed, s.cfg, s.envLo, s.envHi, s.envMax, s.masks, s.copies)
	s.settings = hex.EncodeToString(h.Sum(nil))
	return s, nil
}

// MachineConfig returns the resolved log-mel configuration of machine m
// (the plant's [features] with the machine's own keys over it), the one
// the features stage computes every log-mel array of the machine with: a
// clip of n samples gives LogMel.Frames(n) × Bands values.
func MachineConfig(p *machine.Plant, m *machine.Machine) (Config, error) {
	s, err := setupFor(p, m)
	return s.cfg, err
}
