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

// Load reads and validates a plant file. Every problem is reported, each
// naming the file, the key path and, where it can be found, the line; the
// returned error joins them (errors.As finds *ConfigError).
func Load(path string) (*Plant, error) {
	src, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("machine: %w", err)
	}
	return Parse(src, path)
}

// Parse decodes and validates plant TOML; name is the file name used in
// errors and to resolve relative paths.
func Parse(src []byte, name string) (*Plant, error) {
	var p Plant
	md, err := toml.Decode(string(src), &p)
	if err != nil {
		ce := &ConfigError{File: name, Msg: err.Error()}
		var pe toml.ParseError
		if errors.As(err, &pe) {
			ce.Line = pe.Position.Line
			ce.Msg = pe.Message
		} else if m := lineRE.FindStringSubmatch(err.Error()); m != nil {
			ce.Line, _ = strconv.Atoi(m[1])
		}
		return nil, ce
	}
	v := &validator{file: name, lines: strings.Split(string(src), "\n")}
	undecoded := md.Undecoded()
	for _, k := range undecoded {
		key := k.String()
		v.errs = append(v.errs, &ConfigError{File: name, Key: key, Line: v.findKey("", k[len(k)-1]), Msg: "unknown key"})
	}
	p.Path = name
	v.plant(&p)
	if len(v.errs) > 0 {
		return nil, errors.Join(v.errs...)
	}
	return &p, nil
}
