package machine

import (
	"errors"
	"fmt"
	"math"
	"os"
	"strings"
	"testing"
)

func minimalTOML(t testing.TB) string {
	t.Helper()
	b, err := os.ReadFile("../testdata/plant/minimal.toml")
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

func TestParseMinimal(t *testing.T) {
	p, err := Parse([]byte(minimalTOML(t)), "minimal.toml")
	if err != nil {
		t.Fatal(err)
	}
	if p.ClipSeconds != DefaultClipSeconds || p.Remainder != "drop" {
		t.Errorf("defaults: clip %g remainder %q", p.ClipSeconds, p.Remainder)
	}
	if got := p.Rooms[0].Absorption; len(got) != 6 || got[5] != 0.1 {
		t.Errorf("scalar absorption not spread to six walls: %v", got)
	}
	if p.Split.Train != DefaultTrain {
		t.Errorf("default split %v", p.Split)
	}
	m := p.Machine("pump-a1")
	if m == nil || p.RecipeFor(m, m.Condition("full-load")).ID != "basic" {
		t.Fatal("lookup failed")
	}
	lo, hi := m.Condition("full-load").Band()
	if math.Abs(lo-1450.4) > 1e-9 || math.Abs(hi-1509.6) > 1e-9 {
		t.Errorf("band %g..%g", lo, hi)
	}
}

// configErrors returns the *ConfigErrors inside err (a join of them).
func configErrors(err error) []*ConfigError {
	var out []*ConfigError
	var ce *ConfigError
	if errors.As(err, &ce) && ce == err {
		return []*ConfigError{ce}
	}
	if j, ok := err.(interface{ Unwrap() []error }); ok {
		for _, e := range j.Unwrap() {
			out = append(out, configErrors(e)...)
		}
	}
	return out
}

// Each case replaces one line of the minimal plant and names the line and
// the key path the error must carry, and words its message must contain.
func TestParseErrors(t *testing.T) {
	const secondMachine = `band_percent = 3
[[machine]]
id = "fan-b2"
kind = "fan"
  [[machine.condition]]
  name = "full-load"
  rpm = 0`
	cases := []struct {
		name, old, new string
		line           int
		key, msg       string
	}{
		{"unknown key", "seed = 7", "seed = 7\nsead = 8", 3, "sead", "unknown key"},
		{"unknown key in a table", "band_percent = 3", "band_percent = 3\nrmp = 3", 49, "machine[0].condition[1].rmp", "unknown key"},
		{"rpm zero", "rpm = 1480", "rpm = 0", 43, "machine[pump-a1].condition[full-load].rpm", "(0, 100000]"},
		{"rpm zero, second machine, same condition name", "band_percent = 3", secondMachine, 54, "machine[fan-b2].condition[full-load].rpm", "(0, 100000]"},
		{"pitch below ball", "pitch_diameter_mm = 39.04", "pitch_diameter_mm = 5", 39, "machine[pump-a1].bearing[0].pitch_diameter_mm", "must exceed ball diameter"},
		{"contact angle", "contact_angle_deg = 0", "contact_angle_deg = 60", 40, "machine[pump-a1].bearing[0].contact_angle_deg", "0 … 45"},
		{"unsafe id", `id = "pump-a1"`, `id = "../etc"`, 29, "machine[0].id", "not a valid id"},
		{"mic outside room", "max = [4, 4, 2]", "max = [4, 4, 9]", 15, "zone[near].max", "not inside room"},
		{"machine outside room", "position = [10, 6, 1]", "position = [30, 6, 1]", 34, "machine[pump-a1].position", "not inside room"},
		{"bad step", `kind = "gain"`, `kind = "chorus"`, 25, "recipe[basic].step[1].kind", "not one of"},
		{"speed range", "range = [-2, 2]", "range = [-40, 2]", 22, "recipe[basic].step[0].range", "-20 … 20"},
		{"sample rate", "sample_rate = 16000", "sample_rate = 100", 3, "sample_rate", "8000 … 192000"},
		{"tempo needs ack", `kind = "gain"`, `kind = "tempo"`, 25, "recipe[basic].step[1].nonphysical", "nonphysical = true"},
		{"syntax", "seed = 7", "seed = = 7", 2, "", "expected value"},
		{"split method", "seed = 7", "seed = 7\nsplit_method = \"random\"", 3, "split_method", "not one of shares, stable-hash"},
		{"block shorter than two clips", "seed = 7", "seed = 7\nblock_seconds = 15", 3, "block_seconds", "shorter than two clips"},
		{"pin split", "band_percent = 3", "band_percent = 3\n[[machine.pin]]\ngroup = \"pump-a1/full-load/a.wav\"\nsplit = \"dev\"", 51, "machine[pump-a1].pin[0].split", "not one of train, eval, test"},
		{"pin other machine", "band_percent = 3", "band_percent = 3\n[[machine.pin]]\ngroup = \"fan-b2/full-load/a.wav\"\nsplit = \"test\"", 50, "machine[pump-a1].pin[0].group", "not a group of machine"},
		{"type", "balls = 9", `balls = "nine"`, 37, "machine[0].bearing[0].balls", "incompatible types"},
		// The decoder knows only the last line of a key that repeats across
		// table elements (47 here); the error must name the key's own line.
		{"type in first of two conditions", "rpm = 1480", `rpm = "1485"`, 43, "machine[0].condition[0].rpm", "type string"},
		{"type in second of two conditions", "rpm = 1180", `rpm = "1180"`, 47, "machine[0].condition[1].rpm", "type string"},
		// TOML has nan and inf literals: every float key refuses them.
		{"nan zone corner", "min = [1, 1, 1]", "min = [nan, 1, 1]", 14, "zone[near].min[0]", "not a finite number"},
		{"nan position", "position = [10, 6, 1]", "position = [10, nan, 1]", 34, "machine[pump-a1].position[1]", "not a finite number"},
		{"inf clip", "seed = 7", "seed = 7\nclip_seconds = inf", 3, "clip_seconds", "not a finite number"},
		{"-inf rpm", "rpm = 1480", "rpm = -inf", 43, "machine[pump-a1].condition[full-load].rpm", "not a finite number"},
		{"nan absorption", "absorption = 0.1", "absorption = nan", 9, "room[hall].absorption[0]", "not a finite number"},
		{"rt60 band", "absorption = 0.1", "absorption = 0.1\nrt60 = { \"1000\" = 1.2, \"3000\" = 1.0 }", 10, "room[hall].rt60.3000", "not one of"},
		{"rt60 range", "absorption = 0.1", "absorption = 0.1\nrt60 = { \"500\" = 45 }", 10, "room[hall].rt60.500", "0.05 … 30 s"},
		{"nan range", "range = [-6, 6]", "range = [-6, nan]", 26, "recipe[basic].step[1].range[1]", "not a finite number"},
		{"inf increment", "increment = 0.5", "increment = +inf", 23, "recipe[basic].step[0].increment", "not a finite number"},
		{"nan split", "[[room]]", "[split]\nanomalous_eval = nan\n[[room]]", 7, "split.anomalous_eval", "not a finite number"},
		// The order-aware speed step's keys.
		{"speed mode", "increment = 0.5", "increment = 0.5\nmode = \"tape\"", 24, "recipe[basic].step[0].mode", "not one of resample, orders"},
		{"orders need mains", "increment = 0.5", "increment = 0.5\nmode = \"orders\"", 24, "recipe[basic].step[0].mode", "needs mains_hz"},
		{"orders range", "increment = 0.5", "increment = 0.5\nmode = \"orders\"\norders = 0", 25, "recipe[basic].step[0].orders", "0 is outside 1 … 64"},
		{"order bandwidth range", "increment = 0.5", "increment = 0.5\nmode = \"orders\"\nbandwidth_hz = 50", 25, "recipe[basic].step[0].bandwidth_hz", "0.1 … 20 Hz"},
		{"bandwidth without orders mode", "increment = 0.5", "increment = 0.5\nbandwidth_hz = 2", 24, "recipe[basic].step[0].bandwidth_hz", "only an order-aware speed step"},
		{"speed modes mixed", "kind = \"gain\"\nrange = [-6, 6]", "kind = \"speed\"\nmode = \"orders\"\nrange = [-1, 1]", 26, "recipe[basic].step[1].mode", "share one mode"},
		{"mains", "seed = 7", "seed = 7\nmains_hz = 55", 3, "mains_hz", "not 50 or 60"},
		{"sound power exponent", "blades = 6", "blades = 6\nsound_power_exponent = 12", 32, "machine[pump-a1].sound_power_exponent", "outside 0 … 10"},
		// Zero is a value, not "absent".
		{"variants zero", "variants = 2", "variants = 0", 19, "recipe[basic].variants", "0  is outside 1 … 1000"},
		{"clip zero", "seed = 7", "seed = 7\nclip_seconds = 0", 3, "clip_seconds", "0 s is outside 0.5 … 600 s"},
		{"min_steps zero", "variants = 2", "variants = 2\nmin_steps = 0", 20, "recipe[basic].min_steps", "1 ≤ min_steps (0)"},
		{"per_clip zero", `recipe = "basic"`, "recipe = \"basic\"\n  [machine.faults]\n  kinds = [\"imbalance\"]\n  per_clip = 0", 38, "machine[pump-a1].faults.per_clip", "0  is outside 1 … 100"},
		// TOML integers are signed 64-bit; the seed is not negative.
		{"seed negative", "seed = 7", "seed = -1", 2, "seed", "-1 is outside 0 … 9223372036854775807"},
		// A machine folder may not take the name of what thrum writes beside it.
		{"id features", `id = "pump-a1"`, `id = "features"`, 29, "machine[0].id", "top of the output folder"},
		{"id splits", `id = "pump-a1"`, `id = "splits"`, 29, "machine[0].id", "top of the output folder"},
		{"id report", `id = "pump-a1"`, `id = "report.html"`, 29, "machine[0].id", "top of the output folder"},
	}
	base := minimalTOML(t)
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if !strings.Contains(base, c.old) {
				t.Fatalf("fixture lacks %q", c.old)
			}
			src := strings.Replace(base, c.old, c.new, 1)
			_, err := Parse([]byte(src), "minimal.toml")
			if err == nil {
				t.Fatal("no error")
			}
			var found *ConfigError
			for _, ce := range configErrors(err) {
				if ce.Key == c.key && strings.Contains(ce.Msg, c.msg) {
					found = ce
				}
			}
			if found == nil {
				t.Fatalf("no *ConfigError with key %q and message %q in:\n%v", c.key, c.msg, err)
			}
			if found.File != "minimal.toml" || found.Line != c.line {
				t.Errorf("%v: at %s:%d, want minimal.toml:%d", found, found.File, found.Line, c.line)
			}
			want := fmt.Sprintf("minimal.toml:%d: ", c.line)
			if c.key != "" {
				want += c.key + ": "
			}
			if !strings.HasPrefix(found.Error(), "machine: "+want) {
				t.Errorf("message %q does not start with %q", found.Error(), "machine: "+want)
			}
		})
	}
}

// An explicit anomalous_eval = 0 sends every real anomalous group to test;
// only an absent key takes the default.
func TestParseZeroIsAValue(t *testing.T) {
	src := strings.Replace(minimalTOML(t), "[[room]]", "[split]\nanomalous_eval = 0\n[[room]]", 1)
	p, err := Parse([]byte(src), "minimal.toml")
	if err != nil {
		t.Fatal(err)
	}
	if p.Split.AnomalousEval != 0 {
		t.Errorf("anomalous_eval = %g, want the 0 the file gives", p.Split.AnomalousEval)
	}
	p, err = Parse([]byte(minimalTOML(t)), "minimal.toml")
	if err != nil {
		t.Fatal(err)
	}
	if p.Split.AnomalousEval != DefaultAnomalousEval || p.Recipes[0].MinSteps != 1 || p.Recipes[0].MaxSteps != 2 {
		t.Errorf("defaults: anomalous_eval %g, steps %d … %d", p.Split.AnomalousEval, p.Recipes[0].MinSteps, p.Recipes[0].MaxSteps)
	}
}

func TestValidID(t *testing.T) {
	for s, want := range map[string]bool{
		"pump-a1": true, "fan_2.b": true, "": false, "../x": false, "a/b": false,
		"Pump": false, ".hidden": false, "a..b": false, strings.Repeat("a", 65): false,
	} {
		if got := ValidID(s); got != want {
			t.Errorf("ValidID(%q) = %v", s, got)
		}
	}
}

func FuzzParse(f *testing.F) {
	f.Add([]byte(minimalTOML(f)))
	f.Add([]byte("seed = 1\n[[machine]]\nid = \"x\"\n"))
	f.Fuzz(func(t *testing.T, src []byte) {
		p, err := Parse(src, "fuzz.toml")
		if err == nil && p == nil {
			t.Fatal("nil plant without error")
		}
		if err != nil && p != nil {
			t.Fatal("plant with error")
		}
	})
}

// An order-aware speed step parses with mains_hz; its defaults and the
// machine's speed exponent come from the accessors.
func TestParseOrderAwareSpeed(t *testing.T) {
	src := strings.Replace(minimalTOML(t), "increment = 0.5", "increment = 0.5\nmode = \"orders\"", 1)
	src = strings.Replace(src, "seed = 7", "seed = 7\nmains_hz = 60", 1)
	p, err := Parse([]byte(src), "minimal.toml")
	if err != nil {
		t.Fatal(err)
	}
	s := &p.Recipes[0].Steps[0]
	if s.SpeedMode() != SpeedOrders || s.OrderCount() != DefaultSpeedOrders || s.OrderBandwidth() != DefaultOrderBandwidthHz || p.MainsHz != 60 {
		t.Errorf("mode %q, orders %d, bandwidth %g Hz, mains %g Hz", s.SpeedMode(), s.OrderCount(), s.OrderBandwidth(), p.MainsHz)
	}
	if g := p.Recipes[0].Steps[1].SpeedMode(); g != SpeedResample {
		t.Errorf("default mode %q, want %q", g, SpeedResample)
	}
	three := 3.0
	for _, c := range []struct {
		m    Machine
		want float64
	}{
		// fans and blowers: sound power ∝ speed⁵ (the fan laws; ASHRAE
		// Handbook—HVAC Systems and Equipment, Fans chapter, from memory)
		{Machine{Kind: "fan"}, 5},
		{Machine{Kind: "blower"}, 5},
		{Machine{Kind: "pump"}, 0},
		{Machine{Kind: "pump", SoundPowerExponent: &three}, 3},
	} {
		if got := c.m.SpeedLevelExponent(); got != c.want {
			t.Errorf("%s: exponent %g, want %g", c.m.Kind, got, c.want)
		}
	}
}
