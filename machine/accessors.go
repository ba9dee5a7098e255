package machine

import "path/filepath"

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
