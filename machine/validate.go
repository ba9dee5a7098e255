package machine

import (
	"fmt"
	"math"
	"reflect"
	"regexp"
	"slices"
	"sort"
	"strconv"
	"strings"
)

// Defaults applied by Load where a key is absent.
const (
	DefaultClipSeconds   = 10.0
	DefaultTrain         = 0.7
	DefaultEval          = 0.15
	DefaultTest          = 0.15
	DefaultAnomalousEval = 0.5
	DefaultTemperatureC  = 20.0
	DefaultDamping       = 0.05
	DefaultJitterPercent = 1.5
)

// MachineKinds are the machine kinds a plant may declare.
func MachineKinds() []string {
	return []string{"pump", "fan", "compressor", "gearbox", "motor", "conveyor", "blower", "turbine"}
}

// FaultKinds are the synthetic fault cue kinds a fault plan may name.
func FaultKinds() []string {
	return []string{"outer-race", "inner-race", "ball", "cage", "impact", "imbalance", "misalignment", "gear-tooth"}
}

// OctaveBands are the band centres accepted in octave_absorption and rt60.
func OctaveBands() []string { return []string{"125", "250", "500", "1000", "2000", "4000"} }

var idPattern = regexp.MustCompile(`^[a-z0-9][a-z0-9._-]{0,63}$`)

// ValidID reports whether s may name a machine, condition, room, zone,
// background or recipe: lower-case letters, digits, '.', '_' and '-', not
// starting with a punctuation mark, at most 64 characters, so it can never
// escape a folder.
func ValidID(s string) bool {
	return idPattern.MatchString(s) && !strings.Contains(s, "..")
}

// validator collects the problems of one plant file. Each check names the
// key by its display path (machine[pump-a1].condition[low].rpm) and by its
// location: the indexed path of its table (machine.0.condition.1) and the
// key's name in it, from which the line of the key is found.
// ReservedOutNames are the names thrum writes at the top of an output
// folder beside the machine folders (OUT/<machine-id>/): the feature and split
// folders and run's report. A machine id may not be one of them, or its
// folder and the stage's output would be the same path. Names starting with
// '.' are not listed: no id may start with one.
func ReservedOutNames() []string {
	return []string{"evaluate", "features", "splits", "report.html"}
}

type validator struct {
	file string
	keys *keyLines
	set  *presence
	errs []error
}

func (v *validator) bad(loc, key, field, format string, a ...any) {
	line := 0
	if strings.HasPrefix(field, "[") {
		line = v.keys.line(loc)
	} else {
		line = v.keys.line(joinKey(loc, field))
	}
	v.errs = append(v.errs, &ConfigError{File: v.file, Key: key, Line: line, Msg: fmt.Sprintf(format, a...)})
}

// rangeCheck reports x outside lo … hi. A value that is not finite has been
// reported by finite already.
func (v *validator) rangeCheck(loc, key, field string, x, lo, hi float64, unit string) {
	if isFinite(x) && (x < lo || x > hi) {
		v.bad(loc, key, field, "%g %s is outside %g … %g %s", x, unit, lo, hi, unit)
	}
}

func (v *validator) pair(loc, key, field string, r []float64, lo, hi float64, unit string) {
	if len(r) != 2 {
		v.bad(loc, key, field, "needs [min, max] (%d values given)", len(r))
		return
	}
	if r[0] > r[1] {
		v.bad(loc, key, field, "min %g is above max %g", r[0], r[1])
	}
	for _, x := range r {
		v.rangeCheck(loc, key, field, x, lo, hi, unit)
	}
}

func (v *validator) id(loc, key, field, s string) {
	if !ValidID(s) {
		v.bad(loc, key, field, "%q is not a valid id (lower-case letters, digits, '.', '_', '-'; at most 64; no '..')", s)
	}
}

func isFinite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// finite reports every float key (scalar, array element or map value) of
// the decoded struct rv that is NaN or ±Inf: TOML has nan and inf literals,
// and no key of a plant means anything with them. It walks the struct by
// its toml tags, so a new float key is covered without a new check.
func (v *validator) finite(rv reflect.Value, loc, key string) {
	t := rv.Type()
	for i := 0; i < t.NumField(); i++ {
		name, _, _ := strings.Cut(t.Field(i).Tag.Get("toml"), ",")
		if name == "" || name == "-" {
			continue
		}
		v.finiteValue(rv.Field(i), loc, joinKey(key, name), name)
	}
}

func (v *validator) finiteValue(f reflect.Value, loc, key, field string) {
	bad := func(x float64, k string) {
		v.bad(loc, k, field, "%g is not a finite number", x)
	}
	switch f.Kind() {
	case reflect.Float64:
		if x := f.Float(); !isFinite(x) {
			bad(x, key)
		}
	case reflect.Pointer:
		if !f.IsNil() {
			v.finiteValue(f.Elem(), loc, key, field)
		}
	case reflect.Struct:
		v.finite(f, joinKey(loc, field), key)
	case reflect.Slice:
		if f.Type().Elem().Kind() == reflect.Float64 {
			for j := 0; j < f.Len(); j++ {
				if x := f.Index(j).Float(); !isFinite(x) {
					bad(x, fmt.Sprintf("%s[%d]", key, j))
				}
			}
			return
		}
		if f.Type().Elem().Kind() != reflect.Struct {
			return
		}
		for j := 0; j < f.Len(); j++ {
			e := f.Index(j)
			name := strconv.Itoa(j)
			if id := elementID(e); id != "" {
				name = id
			}
			v.finite(e, joinKey(loc, field)+"."+strconv.Itoa(j), fmt.Sprintf("%s[%s]", key, name))
		}
	case reflect.Map:
		keys := f.MapKeys()
		sort.Slice(keys, func(a, b int) bool { return keys[a].String() < keys[b].String() })
		for _, mk := range keys {
			v.finiteValue(f.MapIndex(mk), loc, key+"."+mk.String(), field+"."+mk.String())
		}
	}
}

// elementID is the id an error names a table element by: its id, or a
// condition's name.
func elementID(e reflect.Value) string {
	for _, n := range []string{"ID", "Name"} {
		if f := e.FieldByName(n); f.IsValid() && f.Kind() == reflect.String && f.String() != "" && (n == "ID" || e.Type() == reflect.TypeFor[Condition]()) {
			return f.String()
		}
	}
	return ""
}

func (v *validator) plant(p *Plant) {
	v.finite(reflect.ValueOf(p).Elem(), "", "")
	if p.Seed > math.MaxInt64 {
		// TOML integers are signed 64-bit; a negative seed arrives wrapped.
		v.bad("", "seed", "seed", "%d is outside 0 … %d", int64(p.Seed), int64(math.MaxInt64))
	}
	if p.SampleRate == 0 {
		v.bad("", "sample_rate", "sample_rate", "is required (Hz)")
	} else {
		v.rangeCheck("", "sample_rate", "sample_rate", float64(p.SampleRate), 8000, 192000, "Hz")
	}
	if p.MainsHz != 0 && p.MainsHz != 50 && p.MainsHz != 60 {
		v.bad("", "mains_hz", "mains_hz", "%g Hz is not 50 or 60", p.MainsHz)
	}
	if p.Recordings == "" {
		v.bad("", "recordings", "recordings", "is required (the recordings root folder)")
	}
	if p.ClipSeconds == 0 && v.set.ClipSeconds == nil {
		p.ClipSeconds = DefaultClipSeconds
	}
	v.rangeCheck("", "clip_seconds", "clip_seconds", p.ClipSeconds, 0.5, 600, "s")
	switch p.Remainder {
	case "":
		p.Remainder = "drop"
	case "drop", "pad":
	default:
		v.bad("", "remainder", "remainder", "%q is not one of drop, pad", p.Remainder)
	}
	v.fractions("split", "split", &p.Split, &v.set.Split)
	switch p.SplitMethod {
	case "":
		p.SplitMethod = SplitShares
	case SplitShares, SplitStableHash:
	default:
		v.bad("", "split_method", "split_method", "%q is not one of %s, %s", p.SplitMethod, SplitShares, SplitStableHash)
	}
	if p.BlockSeconds != 0 && isFinite(p.BlockSeconds) && isFinite(p.ClipSeconds) && p.BlockSeconds < 2*p.ClipSeconds {
		v.bad("", "block_seconds", "block_seconds", "%g s is shorter than two clips (2 × %g s): a block must keep a clip besides its guard gap", p.BlockSeconds, p.ClipSeconds)
	}

	rooms := map[string]*Room{}
	for i := range p.Rooms {
		r := &p.Rooms[i]
		loc, key := fmt.Sprintf("room.%d", i), fmt.Sprintf("room[%d]", i)
		v.id(loc, key+".id", "id", r.ID)
		if rooms[r.ID] != nil {
			v.bad(loc, key+".id", "id", "duplicate room id %q", r.ID)
		}
		rooms[r.ID] = r
		v.room(r, loc, fmt.Sprintf("room[%s]", r.ID))
	}
	zones := map[string]*Zone{}
	for i := range p.Zones {
		z := &p.Zones[i]
		loc, key := fmt.Sprintf("zone.%d", i), fmt.Sprintf("zone[%d]", i)
		v.id(loc, key+".id", "id", z.ID)
		if zones[z.ID] != nil {
			v.bad(loc, key+".id", "id", "duplicate zone id %q", z.ID)
		}
		zones[z.ID] = z
		key = fmt.Sprintf("zone[%s]", z.ID)
		r := rooms[z.Room]
		if r == nil {
			v.bad(loc, key+".room", "room", "unknown room %q", z.Room)
		}
		if len(z.Min) != 3 || len(z.Max) != 3 {
			v.bad(loc, key+".min", "min", "min and max need three coordinates [x, y, z] in metres")
			continue
		}
		for k := 0; k < 3; k++ {
			if z.Min[k] > z.Max[k] {
				v.bad(loc, key+".min", "min", "min %v is above max %v on axis %d", z.Min, z.Max, k)
			}
		}
		if r != nil && len(r.Size) == 3 && (!inside(z.Min, r.Size) || !inside(z.Max, r.Size)) {
			v.bad(loc, key+".max", "max", "microphone zone %v … %v is not inside room %q of size %v m", z.Min, z.Max, r.ID, r.Size)
		}
	}
	bgs := map[string]bool{}
	for i, b := range p.Backgrounds {
		loc, key := fmt.Sprintf("background.%d", i), fmt.Sprintf("background[%d]", i)
		v.id(loc, key+".id", "id", b.ID)
		if bgs[b.ID] {
			v.bad(loc, key+".id", "id", "duplicate background id %q", b.ID)
		}
		bgs[b.ID] = true
		if b.Path == "" {
			v.bad(loc, fmt.Sprintf("background[%s].path", b.ID), "path", "is required")
		}
		if b.Room != "" && rooms[b.Room] == nil {
			v.bad(loc, fmt.Sprintf("background[%s].room", b.ID), "room", "unknown room %q", b.Room)
		}
	}
	recipes := map[string]*Recipe{}
	for i := range p.Recipes {
		r := &p.Recipes[i]
		loc, key := fmt.Sprintf("recipe.%d", i), fmt.Sprintf("recipe[%d]", i)
		v.id(loc, key+".id", "id", r.ID)
		if recipes[r.ID] != nil {
			v.bad(loc, key+".id", "id", "duplicate recipe id %q", r.ID)
		}
		recipes[r.ID] = r
		v.recipe(p, r, i, loc, fmt.Sprintf("recipe[%s]", r.ID))
	}
	v.features("features", "features", p.Features, float64(p.SampleRate))
	v.quality(p.Quality)
	if len(p.Machines) == 0 {
		v.bad("", "machine", "[[machine]]", "at least one [[machine]] is required")
	}
	seen := map[string]bool{}
	for i := range p.Machines {
		m := &p.Machines[i]
		loc, key := fmt.Sprintf("machine.%d", i), fmt.Sprintf("machine[%d]", i)
		v.id(loc, key+".id", "id", m.ID)
		if seen[m.ID] {
			v.bad(loc, key+".id", "id", "duplicate machine id %q", m.ID)
		}
		if slices.Contains(ReservedOutNames(), m.ID) {
			v.bad(loc, key+".id", "id", "%q is a name thrum writes at the top of the output folder (%s); choose another id", m.ID, strings.Join(ReservedOutNames(), ", "))
		}
		seen[m.ID] = true
		v.machine(p, m, i, loc, fmt.Sprintf("machine[%s]", m.ID), rooms, zones, recipes)
	}
}

func inside(pt, size []float64) bool {
	for k := 0; k < 3; k++ {
		if pt[k] < 0 || pt[k] > size[k] {
			return false
		}
	}
	return true
}

func (v *validator) fractions(loc, key string, f *SplitFractions, set *splitPresence) {
	if f.Train == 0 && f.Eval == 0 && f.Test == 0 {
		f.Train, f.Eval, f.Test = DefaultTrain, DefaultEval, DefaultTest
	}
	if f.AnomalousEval == 0 && (set == nil || set.AnomalousEval == nil) {
		f.AnomalousEval = DefaultAnomalousEval
	}
	for _, c := range []struct {
		n string
		x float64
	}{{"train", f.Train}, {"eval", f.Eval}, {"test", f.Test}, {"anomalous_eval", f.AnomalousEval}} {
		v.rangeCheck(loc, key+"."+c.n, c.n, c.x, 0, 1, "")
	}
	if s := f.Train + f.Eval + f.Test; isFinite(s) && math.Abs(s-1) > 1e-6 {
		v.bad(loc, key+".train", "train", "train + eval + test = %g, must be 1", s)
	}
}

func (v *validator) room(r *Room, loc, key string) {
	if len(r.Size) != 3 {
		v.bad(loc, key+".size", "size", "needs three dimensions [length, width, height] in metres")
	} else {
		for _, s := range r.Size {
			v.rangeCheck(loc, key+".size", "size", s, 1, 1000, "m")
		}
	}
	switch len(r.Absorption) {
	case 1:
		a := r.Absorption[0]
		r.Absorption = Walls{a, a, a, a, a, a}
	case 6:
	default:
		v.bad(loc, key+".absorption", "absorption", "needs 1 or 6 values (x=0, x=L, y=0, y=W, floor, ceiling), %d given", len(r.Absorption))
	}
	for _, a := range r.Absorption {
		v.rangeCheck(loc, key+".absorption", "absorption", a, 0.01, 0.99, "")
	}
	bands := map[string]bool{}
	for _, b := range OctaveBands() {
		bands[b] = true
	}
	names := make([]string, 0, len(r.OctaveAbsorption))
	for b := range r.OctaveAbsorption {
		names = append(names, b)
	}
	sort.Strings(names)
	for _, b := range names {
		vals := r.OctaveAbsorption[b]
		k := key + ".octave_absorption." + b
		if !bands[b] {
			v.bad(loc, k, "octave_absorption", "band %q is not one of %s", b, strings.Join(OctaveBands(), ", "))
		}
		if len(vals) != 6 {
			v.bad(loc, k, "octave_absorption", "needs 6 values, %d given", len(vals))
		}
		for _, a := range vals {
			v.rangeCheck(loc, k, "octave_absorption", a, 0.01, 0.99, "")
		}
	}
	names = names[:0]
	for b := range r.RT60 {
		names = append(names, b)
	}
	sort.Strings(names)
	for _, b := range names {
		k := key + ".rt60." + b
		if !bands[b] {
			v.bad(loc, k, "rt60", "band %q is not one of %s", b, strings.Join(OctaveBands(), ", "))
		}
		v.rangeCheck(loc, k, "rt60", r.RT60[b], 0.05, 30, "s")
	}
	if r.TemperatureC == nil {
		t := DefaultTemperatureC
		r.TemperatureC = &t
	}
	v.rangeCheck(loc, key+".temperature_c", "temperature_c", *r.TemperatureC, -30, 60, "°C")
	if r.RT60Range == nil {
		r.RT60Range = []float64{0.1, 5}
	}
	v.pair(loc, key+".rt60_range", "rt60_range", r.RT60Range, 0.01, 30, "s")
}

func (v *validator) recipe(p *Plant, r *Recipe, i int, loc, key string) {
	var set recipePresence
	if i < len(v.set.Recipes) {
		set = v.set.Recipes[i]
	}
	if r.Variants == 0 && set.Variants == nil {
		r.Variants = 1
	}
	v.rangeCheck(loc, key+".variants", "variants", float64(r.Variants), 1, 1000, "")
	if len(r.Steps) == 0 {
		v.bad(loc, key+".step", "[[recipe.step]]", "a recipe needs at least one [[recipe.step]]")
		return
	}
	if r.MaxSteps == 0 && set.MaxSteps == nil {
		r.MaxSteps = len(r.Steps)
	}
	if r.MinSteps == 0 && set.MinSteps == nil {
		r.MinSteps = 1
	}
	if r.MinSteps < 1 || r.MinSteps > r.MaxSteps || r.MaxSteps > len(r.Steps) {
		v.bad(loc, key+".min_steps", "min_steps", "need 1 ≤ min_steps (%d) ≤ max_steps (%d) ≤ number of steps (%d)", r.MinSteps, r.MaxSteps, len(r.Steps))
	}
	nyq := float64(p.SampleRate) / 2
	speedMode := ""
	for i := range r.Steps {
		s := &r.Steps[i]
		if s.Kind != "speed" || (s.Mode != "" && s.Mode != SpeedResample && s.Mode != SpeedOrders) {
			continue
		}
		k, sloc := fmt.Sprintf("%s.step[%d]", key, i), fmt.Sprintf("%s.step.%d", loc, i)
		switch {
		case speedMode == "":
			speedMode = s.SpeedMode()
		case speedMode != s.SpeedMode():
			v.bad(sloc, k+".mode", "mode", "the speed steps of a recipe share one mode (%q here, %q before)", s.SpeedMode(), speedMode)
		}
		if s.SpeedMode() == SpeedOrders && p.MainsHz == 0 {
			v.bad(sloc, k+".mode", "mode", "an order-aware speed step needs mains_hz (50 or 60) at the top of plant.toml")
		}
	}
	for i := range r.Steps {
		s := &r.Steps[i]
		k, sloc := fmt.Sprintf("%s.step[%d]", key, i), fmt.Sprintf("%s.step.%d", loc, i)
		check := stepRuleFor(s.Kind)
		if check == nil {
			v.bad(sloc, k+".kind", "kind", "%q is not one of %s", s.Kind, strings.Join(StepKinds(), ", "))
			continue
		}
		if s.Increment < 0 {
			v.bad(sloc, k+".increment", "increment", "must be ≥ 0")
		}
		check(v, sloc, k, s, nyq)
	}
}

func (v *validator) machine(p *Plant, m *Machine, mi int, loc, key string, rooms map[string]*Room, zones map[string]*Zone, recipes map[string]*Recipe) {
	kinds := map[string]bool{}
	for _, k := range MachineKinds() {
		kinds[k] = true
	}
	if !kinds[m.Kind] {
		v.bad(loc, key+".kind", "kind", "%q is not one of %s", m.Kind, strings.Join(MachineKinds(), ", "))
	}
	if m.Blades < 0 || m.Blades > 200 {
		v.bad(loc, key+".blades", "blades", "%d is outside 0 … 200", m.Blades)
	}
	var room *Room
	if m.Room != "" {
		room = rooms[m.Room]
		if room == nil {
			v.bad(loc, key+".room", "room", "unknown room %q", m.Room)
		}
	}
	if m.Zone != "" {
		z := zones[m.Zone]
		switch {
		case z == nil:
			v.bad(loc, key+".zone", "zone", "unknown zone %q", m.Zone)
		case m.Room == "":
			v.bad(loc, key+".zone", "zone", "a zone needs the machine's room")
		case z.Room != m.Room:
			v.bad(loc, key+".zone", "zone", "zone %q is in room %q, not in the machine's room %q", m.Zone, z.Room, m.Room)
		}
	}
	if m.Room != "" {
		if len(m.Position) != 3 {
			v.bad(loc, key+".position", "position", "needs [x, y, z] in metres when a room is given")
		} else if room != nil && len(room.Size) == 3 && !inside(m.Position, room.Size) {
			v.bad(loc, key+".position", "position", "%v is not inside room %q of size %v m", m.Position, room.ID, room.Size)
		}
	}
	if m.Recipe != "" && recipes[m.Recipe] == nil {
		v.bad(loc, key+".recipe", "recipe", "unknown recipe %q", m.Recipe)
	}
	if m.Split != nil {
		v.fractions(loc+".split", key+".split", m.Split, v.set.machine(mi).Split)
	}
	pinned := map[string]bool{}
	for i, pn := range m.Pins {
		k, ploc := fmt.Sprintf("%s.pin[%d]", key, i), fmt.Sprintf("%s.pin.%d", loc, i)
		if pn.Group == "" {
			v.bad(ploc, k+".group", "group", "is required (a split group, e.g. %s/<condition>/<file>.wav)", m.ID)
		} else if !strings.HasPrefix(pn.Group, m.ID+"/") {
			v.bad(ploc, k+".group", "group", "%q is not a group of machine %q (groups start with %q)", pn.Group, m.ID, m.ID+"/")
		}
		if pinned[pn.Group] {
			v.bad(ploc, k+".group", "group", "%q is pinned twice", pn.Group)
		}
		pinned[pn.Group] = true
		switch pn.Split {
		case SplitTrain, SplitEval, SplitTest:
		default:
			v.bad(ploc, k+".split", "split", "%q is not one of train, eval, test", pn.Split)
		}
	}
	for i, g := range m.Gears {
		k, gloc := fmt.Sprintf("%s.gear[%d]", key, i), fmt.Sprintf("%s.gear.%d", loc, i)
		v.rangeCheck(gloc, k+".driving_teeth", "driving_teeth", float64(g.DrivingTeeth), 3, 1000, "teeth")
		v.rangeCheck(gloc, k+".driven_teeth", "driven_teeth", float64(g.DrivenTeeth), 3, 1000, "teeth")
	}
	for i, b := range m.Bearings {
		k, bloc := fmt.Sprintf("%s.bearing[%d]", key, i), fmt.Sprintf("%s.bearing.%d", loc, i)
		v.rangeCheck(bloc, k+".balls", "balls", float64(b.Balls), 3, 100, "")
		v.rangeCheck(bloc, k+".ball_diameter_mm", "ball_diameter_mm", b.BallDiameterMM, 0.1, 1000, "mm")
		v.rangeCheck(bloc, k+".pitch_diameter_mm", "pitch_diameter_mm", b.PitchDiameterMM, 0.1, 5000, "mm")
		if b.PitchDiameterMM <= b.BallDiameterMM {
			v.bad(bloc, k+".pitch_diameter_mm", "pitch_diameter_mm", "pitch diameter %g mm must exceed ball diameter %g mm", b.PitchDiameterMM, b.BallDiameterMM)
		}
		v.rangeCheck(bloc, k+".contact_angle_deg", "contact_angle_deg", b.ContactAngleDeg, 0, 45, "°")
		if b.Shaft < 0 || b.Shaft > len(m.Gears) {
			v.bad(bloc, k+".shaft", "shaft", "shaft %d does not exist (0 … %d)", b.Shaft, len(m.Gears))
		}
	}
	v.channels(loc, key+".channels", m.Channels)
	if m.SoundPowerExponent != nil {
		v.rangeCheck(loc, key+".sound_power_exponent", "sound_power_exponent", *m.SoundPowerExponent, 0, 10, "")
	}
	if m.BandwidthHz != 0 {
		v.rangeCheck(loc, key+".bandwidth_hz", "bandwidth_hz", m.BandwidthHz, 20, MaxBandwidth*float64(p.SampleRate), "Hz")
	}
	for i := range m.Conditions {
		v.channels(fmt.Sprintf("%s.condition.%d", loc, i), fmt.Sprintf("%s.condition[%d].channels", key, i), m.Conditions[i].Channels)
	}
	if len(m.Conditions) == 0 {
		v.bad(loc, key+".condition", "[[machine.condition]]", "a machine needs at least one [[machine.condition]]")
	}
	seen := map[string]bool{}
	for i := range m.Conditions {
		c := &m.Conditions[i]
		k, cloc := fmt.Sprintf("%s.condition[%d]", key, i), fmt.Sprintf("%s.condition.%d", loc, i)
		v.id(cloc, k+".name", "name", c.Name)
		if seen[c.Name] {
			v.bad(cloc, k+".name", "name", "duplicate condition %q", c.Name)
		}
		seen[c.Name] = true
		k = fmt.Sprintf("%s.condition[%s]", key, c.Name)
		if isFinite(c.RPM) && (c.RPM <= 0 || c.RPM > 100000) {
			v.bad(cloc, k+".rpm", "rpm", "%g rpm is outside (0, 100000]", c.RPM)
		}
		v.rangeCheck(cloc, k+".band_percent", "band_percent", c.BandPercent, 0, 50, "%")
		if c.Recipe != "" && recipes[c.Recipe] == nil {
			v.bad(cloc, k+".recipe", "recipe", "unknown recipe %q", c.Recipe)
		}
		rid, rloc := c.Recipe, cloc
		if rid == "" {
			rid, rloc = m.Recipe, loc
		}
		if r := recipes[rid]; r != nil {
			for _, s := range r.Steps {
				if s.Kind == "room" && (m.Room == "" || m.Zone == "") {
					v.bad(rloc, key+".zone", "recipe", "recipe %q has a room step but the machine has no room and zone", rid)
					break
				}
				if s.Kind == "background" && len(p.Backgrounds) == 0 {
					// synthesised plant noise is used: fine
					continue
				}
			}
		}
	}
	if f := m.Faults; f != nil {
		v.faults(p, m, f, v.set.machine(mi).Faults, loc+".faults", key+".faults")
	}
	v.features(loc+".features", key+".features", m.Features, float64(p.SampleRate))
}

func (v *validator) faults(p *Plant, m *Machine, f *FaultPlan, set *faultsPresence, loc, key string) {
	kinds := map[string]bool{}
	for _, k := range FaultKinds() {
		kinds[k] = true
	}
	for _, k := range f.Kinds {
		if !kinds[k] {
			v.bad(loc, key+".kinds", "kinds", "%q is not one of %s", k, strings.Join(FaultKinds(), ", "))
			continue
		}
		switch k {
		case "outer-race", "inner-race", "ball", "cage":
			if len(m.Bearings) == 0 {
				v.bad(loc, key+".kinds", "kinds", "fault kind %q needs a [[machine.bearing]]", k)
			}
		case "gear-tooth":
			if len(m.Gears) == 0 {
				v.bad(loc, key+".kinds", "kinds", "fault kind %q needs a [[machine.gear]]", k)
			}
		}
	}
	if f.PerClip == 0 && (set == nil || set.PerClip == nil) {
		f.PerClip = 1
	}
	v.rangeCheck(loc, key+".per_clip", "per_clip", float64(f.PerClip), 1, 100, "")
	if f.SeverityDB == nil {
		f.SeverityDB = []float64{-18, -6}
	}
	v.pair(loc, key+".severity_db", "severity_db", f.SeverityDB, -60, 20, "dB")
	if f.ResonanceHz == nil {
		hi := math.Min(5000, 0.4*float64(p.SampleRate))
		f.ResonanceHz = []float64{math.Min(2000, hi*0.6), hi}
	}
	v.pair(loc, key+".resonance_hz", "resonance_hz", f.ResonanceHz, 100, 0.45*float64(p.SampleRate), "Hz")
	if f.Damping == 0 && (set == nil || set.Damping == nil) {
		f.Damping = DefaultDamping
	}
	v.rangeCheck(loc, key+".damping", "damping", f.Damping, 0.001, 0.5, "")
	if f.JitterPercent == nil {
		j := DefaultJitterPercent
		f.JitterPercent = &j
	}
	v.rangeCheck(loc, key+".jitter_percent", "jitter_percent", *f.JitterPercent, 0, 10, "%")
}

// channels checks a channel mode: "", "mean", "each" or a channel number
// from 1.
func (v *validator) channels(loc, key, mode string) {
	if _, _, err := ParseChannels(mode); err != nil {
		v.bad(loc, key, "channels", "%v", err)
	}
}
