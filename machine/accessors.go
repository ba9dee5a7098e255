package machine

import (
	"fmt"
	"math"
	"path/filepath"
	"strconv"
	"strings"
)

// Dir is the folder of the plant file; relative paths resolve against it.
func (p *Plant) Dir() string { return filepath.Dir(p.Path) }

// Resolve returns path resolved against the plant file's folder.
func (p *Plant) Resolve(path string) string {
	if filepath.IsAbs(path) {
		return path
	}
	return filepath.Join(p.Dir(), path)
}

// RecordingsRoot is the resolved recordings folder.
func (p *Plant) RecordingsRoot() string { return p.Resolve(p.Recordings) }

// Machine returns the machine with the given id, or nil.
func (p *Plant) Machine(id string) *Machine {
	for i := range p.Machines {
		if p.Machines[i].ID == id {
			return &p.Machines[i]
		}
	}
	return nil
}

// Room returns the room with the given id, or nil.
func (p *Plant) Room(id string) *Room {
	for i := range p.Rooms {
		if p.Rooms[i].ID == id {
			return &p.Rooms[i]
		}
	}
	return nil
}

// Zone returns the zone with the given id, or nil.
func (p *Plant) Zone(id string) *Zone {
	for i := range p.Zones {
		if p.Zones[i].ID == id {
			return &p.Zones[i]
		}
	}
	return nil
}

// Recipe returns the recipe with the given id, or nil.
func (p *Plant) Recipe(id string) *Recipe {
	for i := range p.Recipes {
		if p.Recipes[i].ID == id {
			return &p.Recipes[i]
		}
	}
	return nil
}

// Condition returns the machine's condition with the given name, or nil.
func (m *Machine) Condition(name string) *Condition {
	for i := range m.Conditions {
		if m.Conditions[i].Name == name {
			return &m.Conditions[i]
		}
	}
	return nil
}

// RecipeFor returns the recipe that applies to a condition (its own, else the
// machine's), or nil when none is set.
func (p *Plant) RecipeFor(m *Machine, c *Condition) *Recipe {
	if c != nil && c.Recipe != "" {
		return p.Recipe(c.Recipe)
	}
	if m.Recipe != "" {
		return p.Recipe(m.Recipe)
	}
	return nil
}

// Fractions returns the split fractions for a machine.
func (p *Plant) Fractions(m *Machine) SplitFractions {
	if m.Split != nil {
		return *m.Split
	}
	return p.Split
}

// Band returns the speed band of a condition as [lo, hi] rpm: RPM times
// SpeedBand.
func (c *Condition) Band() (lo, hi float64) {
	lo, hi = c.SpeedBand()
	return c.RPM * lo, c.RPM * hi
}

// SharesSpeed reports whether condition c runs at a speed inside the band
// of condition h (a load condition at the same speed, say). A hold-out
// condition h that shares c's speed tests something other than speed, so
// c's training clips and variants are not kept out of h's band.
func (c *Condition) SharesSpeed(h *Condition) bool {
	lo, hi := h.Band()
	return c.RPM >= lo && c.RPM <= hi
}

// HoldOutBands returns the speed bands [lo, hi] rpm a training clip of
// condition c must stay out of: those of the machine's hold-out conditions
// that do not share c's speed (see SharesSpeed).
func (m *Machine) HoldOutBands(c *Condition) [][2]float64 {
	var out [][2]float64
	for i := range m.Conditions {
		h := &m.Conditions[i]
		if !h.HoldOut || h.Name == c.Name || c.SharesSpeed(h) {
			continue
		}
		lo, hi := h.Band()
		out = append(out, [2]float64{lo, hi})
	}
	return out
}

// BlockClips is the number of clips per block (Plant.BlockSeconds), 0 when
// recordings are not cut into blocks.
func (p *Plant) BlockClips() int {
	if p.BlockSeconds <= 0 || p.ClipSeconds <= 0 {
		return 0
	}
	return int(math.Floor(p.BlockSeconds/p.ClipSeconds + 1e-9))
}

// blockMark separates a recording's group from its block number.
const blockMark = "#block-"

// BlockGroup names block k of a group.
func BlockGroup(group string, k int) string { return fmt.Sprintf("%s%s%03d", group, blockMark, k) }

// ParseBlock splits a block group into the recording's group and the
// block number; ok is false for a group that is not a block.
func ParseBlock(group string) (base string, k int, ok bool) {
	i := strings.LastIndex(group, blockMark)
	if i < 0 {
		return group, 0, false
	}
	n, err := strconv.Atoi(group[i+len(blockMark):])
	if err != nil || n < 0 {
		return group, 0, false
	}
	return group[:i], n, true
}

// ClipGroup returns the split group of clip c of recording r: the
// recording's group, or, when the plant cuts recordings into blocks and r
// (outside a session folder) is longer than one block, its block
// BlockGroup(r.Group, c.Index / BlockClips).
func (p *Plant) ClipGroup(r *Recording, c Clip) string {
	n := p.BlockClips()
	if n <= 0 || r.Session != "" || len(r.Clips) <= n {
		return r.Group
	}
	return BlockGroup(r.Group, c.Index/n)
}

// DefaultFanPowerExponent is the speed exponent of a fan's sound power:
// Lw rises by 50·log10(n2/n1) dB with speed at fixed size and point of
// operation (the fan laws; ASHRAE Handbook—HVAC Systems and Equipment,
// Fans chapter, from memory).
const DefaultFanPowerExponent = 5.0

// SpeedLevelExponent is the exponent n of the machine's sound power over
// speed (power ∝ speedⁿ): its sound_power_exponent, else 5 for a fan or a
// blower (the fan laws), else 0 (no published law for the kind: the
// level is kept).
func (m *Machine) SpeedLevelExponent() float64 {
	switch {
	case m.SoundPowerExponent != nil:
		return *m.SoundPowerExponent
	case m.Kind == "fan" || m.Kind == "blower":
		return DefaultFanPowerExponent
	}
	return 0
}

// SpeedMode is a speed step's mode: SpeedResample unless set.
func (s *Step) SpeedMode() string {
	if s.Mode == "" {
		return SpeedResample
	}
	return s.Mode
}

// Default order-aware speed settings (Step.Orders, Step.BandwidthHz).
const (
	DefaultSpeedOrders      = 16
	DefaultOrderBandwidthHz = 1.0
)

// OrderCount is the highest order an order-aware speed step moves.
func (s *Step) OrderCount() int {
	if s.Orders != nil {
		return *s.Orders
	}
	return DefaultSpeedOrders
}

// OrderBandwidth is the −3 dB bandwidth in Hz of an order-aware speed
// step's order filters.
func (s *Step) OrderBandwidth() float64 {
	if s.BandwidthHz != nil {
		return *s.BandwidthHz
	}
	return DefaultOrderBandwidthHz
}
