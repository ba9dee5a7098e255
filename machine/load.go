package machine

import (
	"errors"
	"fmt"
	"os"
	"regexp"
	"strconv"
	"strings"

	"github.com/BurntSushi/toml"
)

// ConfigError is one problem in a plant file: the file, the key path
// (machine[pump-a1].condition[low].rpm) and, where it can be found, the line.
type ConfigError struct {
	File string
	Key  string
	Line int // 0 when unknown
	Msg  string
}

func (e *ConfigError) Error() string {
	loc := e.File
	if e.Line > 0 {
		loc = fmt.Sprintf("%s:%d", e.File, e.Line)
	}
	if e.Key == "" {
		return fmt.Sprintf("machine: %s: %s", loc, e.Msg)
	}
	return fmt.Sprintf("machine: %s: %s: %s", loc, e.Key, e.Msg)
}

var lineRE = regexp.MustCompile(`line (\d+)`)

// Load reads and validates a plant file, then checks the background files
// it names (see Parse for what is checked without touching the file
// system). Every problem is reported, each naming the file, the key path and,
// where it can be found, the line of the key; the returned error joins them
// (errors.As finds *ConfigError).
func Load(path string) (*Plant, error) {
	src, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("machine: %w", err)
	}
	p, v, err := parse(src, path)
	if err != nil {
		return nil, err
	}
	v.backgroundFiles(p)
	if len(v.errs) > 0 {
		return nil, errors.Join(v.errs...)
	}
	return p, nil
}

// Parse decodes and validates plant TOML; name is the file name used in
// errors and to resolve relative paths. It reads no file: the background
// files are checked by Load.
func Parse(src []byte, name string) (*Plant, error) {
	p, v, err := parse(src, name)
	if err != nil {
		return nil, err
	}
	if len(v.errs) > 0 {
		return nil, errors.Join(v.errs...)
	}
	return p, nil
}

// parse decodes and validates src. A nil plant comes with the decoding
// error; otherwise the validator holds the problems found so far.
func parse(src []byte, name string) (*Plant, *validator, error) {
	text := string(src)
	var p Plant
	md, err := toml.Decode(text, &p)
	if err != nil {
		return nil, nil, decodeError(err, text, name)
	}
	var set presence
	if _, err := toml.Decode(text, &set); err != nil {
		return nil, nil, decodeError(err, text, name)
	}
	v := &validator{file: name, keys: scanKeyLines(text), set: &set}
	seen := map[string]int{}
	for _, k := range md.Undecoded() {
		bare := k.String()
		ce := &ConfigError{File: name, Key: bare, Msg: "unknown key"}
		if occ := v.keys.bare(bare); len(occ) > 0 {
			l := occ[min(seen[bare], len(occ)-1)]
			ce.Key, ce.Line = l.display, l.line
		}
		seen[bare]++
		v.errs = append(v.errs, ce)
	}
	p.Path = name
	v.plant(&p)
	return &p, v, nil
}

var (
	lastKeyRE   = regexp.MustCompile(`\(last key "([^"]*)"\): (.*)$`)
	valueTypeRE = regexp.MustCompile(`TOML value has type (\S+);`)
)

// decodeError turns a decoding error into a *ConfigError. A syntax error
// carries its line. A value of the wrong type is reported by the decoder at
// the last line that sets a key of that name; the line is looked up here
// instead: the first key of that name whose value has the reported type.
func decodeError(err error, text, name string) error {
	ce := &ConfigError{File: name, Msg: err.Error()}
	var pe toml.ParseError
	if errors.As(err, &pe) {
		ce.Line = pe.Position.Line
		ce.Msg = pe.Message
		return ce
	}
	m := lastKeyRE.FindStringSubmatch(err.Error())
	if m == nil {
		if m := lineRE.FindStringSubmatch(err.Error()); m != nil {
			ce.Line, _ = strconv.Atoi(m[1])
		}
		return ce
	}
	ce.Key, ce.Msg = m[1], m[2]
	occ := scanKeyLines(text).bare(m[1])
	if len(occ) == 0 {
		return ce
	}
	pick := occ[0]
	if t := valueTypeRE.FindStringSubmatch(m[2]); t != nil {
		for _, l := range occ {
			var one map[string]any
			if _, err := toml.Decode("v = "+l.value, &one); err == nil && strings.ReplaceAll(fmt.Sprintf("%T", one["v"]), "interface {}", "any") == t[1] {
				pick = l
				break
			}
		}
	}
	ce.Key, ce.Line = pick.display, pick.line
	return ce
}

// presence records which keys a plant file sets, for keys whose zero value
// would otherwise read as "absent": an explicit 0 is then an error (or, for
// anomalous_eval, a value) instead of being replaced by the default.
type presence struct {
	ClipSeconds *float64          `toml:"clip_seconds"`
	Split       splitPresence     `toml:"split"`
	Recipes     []recipePresence  `toml:"recipe"`
	Machines    []machinePresence `toml:"machine"`
}

type recipePresence struct {
	Variants *int `toml:"variants"`
	MinSteps *int `toml:"min_steps"`
	MaxSteps *int `toml:"max_steps"`
}

type machinePresence struct {
	Split  *splitPresence  `toml:"split"`
	Faults *faultsPresence `toml:"faults"`
}

func (s *presence) machine(i int) machinePresence {
	if i < len(s.Machines) {
		return s.Machines[i]
	}
	return machinePresence{}
}

type faultsPresence struct {
	PerClip *int     `toml:"per_clip"`
	Damping *float64 `toml:"damping"`
}

type splitPresence struct {
	AnomalousEval *float64 `toml:"anomalous_eval"`
}
