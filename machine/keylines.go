package machine

import (
	"strconv"
	"strings"
)

// keyLines maps the keys and table headers of a TOML document to the lines
// that set them, so an error can name the line of the key itself. Paths are
// dotted and carry the index of each array-of-tables element
// (machine.1.condition.0.rpm); the TOML decoder only knows the last line of
// a key that repeats across elements (machine.condition.rpm), which would
// point at another machine.
//
// It is a line scanner, not a parser: it runs on documents the decoder has
// accepted, skips the inside of multi-line strings and arrays, and knows
// nothing of keys set through inline tables (their lines fall back to the
// enclosing key or table).
type keyLines struct {
	at    map[string]int // indexed path → 1-based line
	order []keyLine      // every key and header, in document order
}

type keyLine struct {
	path    string // indexed: machine.1.condition.0.rpm
	bare    string // as the decoder names it: machine.condition.rpm
	display string // as errors name it: machine[1].condition[0].rpm
	line    int
	value   string // the text after '=' on the key's line; "" for headers
}

func scanKeyLines(src string) *keyLines {
	k := &keyLines{at: map[string]int{}}
	count := map[string]int{} // indexed path of an array of tables → elements so far
	var cur, curBare, curDisp string
	depth := 0     // open [ or { of a value continued on later lines
	inString := "" // the closing delimiter of an open multi-line string
	for i, raw := range strings.Split(src, "\n") {
		line := i + 1
		if inString != "" {
			j := strings.Index(raw, inString)
			if j < 0 {
				continue
			}
			inString = ""
			depth, inString = scanValue(raw[j+3:], depth)
			continue
		}
		if depth > 0 {
			depth, inString = scanValue(raw, depth)
			continue
		}
		t := strings.TrimSpace(raw)
		if t == "" || t[0] == '#' {
			continue
		}
		if t[0] == '[' {
			array := strings.HasPrefix(t, "[[")
			name := strings.TrimLeft(t, "[")
			end := strings.Index(name, "]")
			if end < 0 {
				continue
			}
			parts := splitKey(name[:end])
			if len(parts) == 0 {
				continue
			}
			p, b, d := "", "", ""
			for j, part := range parts {
				p, b, d = joinKey(p, part), joinKey(b, part), joinKey(d, part)
				if j == len(parts)-1 && array {
					break
				}
				if n := count[p]; n > 0 {
					p += "." + strconv.Itoa(n-1)
					d += "[" + strconv.Itoa(n-1) + "]"
				}
			}
			if array {
				n := count[p]
				count[p] = n + 1
				p += "." + strconv.Itoa(n)
				d += "[" + strconv.Itoa(n) + "]"
			}
			cur, curBare, curDisp = p, b, d
			k.add(keyLine{path: p, bare: b, display: d, line: line})
			continue
		}
		eq := indexOutsideQuotes(t, '=')
		if eq < 0 {
			continue
		}
		parts := splitKey(t[:eq])
		if len(parts) == 0 {
			continue
		}
		name := strings.Join(parts, ".")
		value := strings.TrimSpace(t[eq+1:])
		k.add(keyLine{path: joinKey(cur, name), bare: joinKey(curBare, name), display: joinKey(curDisp, name), line: line, value: value})
		depth, inString = scanValue(value, 0)
	}
	return k
}

func (k *keyLines) add(l keyLine) {
	if _, ok := k.at[l.path]; !ok {
		k.at[l.path] = l.line
	}
	k.order = append(k.order, l)
}

// line returns the line of path, else of the nearest enclosing key or table
// that has one (a missing key is reported at its table's header), else 0.
func (k *keyLines) line(path string) int {
	for path != "" {
		if n := k.at[path]; n > 0 {
			return n
		}
		j := strings.LastIndexByte(path, '.')
		if j < 0 {
			break
		}
		path = path[:j]
	}
	return 0
}

// bare returns the keys whose decoder name is bare, in document order.
func (k *keyLines) bare(bare string) []keyLine {
	var out []keyLine
	for _, l := range k.order {
		if l.bare == bare {
			out = append(out, l)
		}
	}
	return out
}

func joinKey(a, b string) string {
	if a == "" {
		return b
	}
	return a + "." + b
}

// splitKey splits a dotted TOML key into its parts, unquoting quoted parts.
func splitKey(s string) []string {
	var parts []string
	for {
		s = strings.TrimSpace(s)
		if s == "" {
			return parts
		}
		var part string
		if s[0] == '"' || s[0] == '\'' {
			end := strings.IndexByte(s[1:], s[0])
			if end < 0 {
				return nil
			}
			part, s = s[1:1+end], s[2+end:]
		} else {
			end := strings.IndexByte(s, '.')
			if end < 0 {
				end = len(s)
			}
			part, s = strings.TrimSpace(s[:end]), s[end:]
		}
		parts = append(parts, part)
		s = strings.TrimSpace(s)
		if s != "" {
			if s[0] != '.' {
				return nil
			}
			s = s[1:]
		}
	}
}

// indexOutsideQuotes returns the index of the first c in s outside quoted
// strings, or -1.
func indexOutsideQuotes(s string, c byte) int {
	var q byte
	for i := 0; i < len(s); i++ {
		switch {
		case q != 0:
			if s[i] == '\\' && q == '"' {
				i++
			} else if s[i] == q {
				q = 0
			}
		case s[i] == '"' || s[i] == '\'':
			q = s[i]
		case s[i] == c:
			return i
		case s[i] == '#':
			return -1
		}
	}
	return -1
}

// scanValue follows a value's text from bracket depth depth and returns the
// depth at the end of the line and, when a multi-line string stays open, its
// closing delimiter.
func scanValue(s string, depth int) (int, string) {
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case c == '#':
			return depth, ""
		case c == '[' || c == '{':
			depth++
		case c == ']' || c == '}':
			if depth > 0 {
				depth--
			}
		case c == '"' || c == '\'':
			if strings.HasPrefix(s[i:], string([]byte{c, c, c})) {
				delim := s[i : i+3]
				end := strings.Index(s[i+3:], delim)
				if end < 0 {
					return depth, delim
				}
				i += 3 + end + 2
				continue
			}
			for i++; i < len(s) && s[i] != c; i++ {
				if c == '"' && s[i] == '\\' {
					i++
				}
			}
		}
	}
	return depth, ""
}
