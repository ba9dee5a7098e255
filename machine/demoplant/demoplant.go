package demoplant

import (
	"bytes"
	_ "embed"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"thrum/machine"
	"thrum/machine/exposure"
	"thrum/machine/wavio"
)

//go:embed plant.toml.txt
var plantTemplate string

// DefaultSeed is the seed ExampleTOML carries and Write uses when
// Options.Seed is 0.
const DefaultSeed = 97

// Defaults and limits of Options.Seconds.
const (
	DefaultSeconds = 20.0
	MinSeconds     = 1.0
	MaxSeconds     = 600.0
	// BackgroundSeconds is the length of the background recording (shorter
	// when Seconds is shorter).
	BackgroundSeconds = 20.0
	// ClipSeconds is the clip length the plant declares (Seconds when that
	// is shorter, so every recording gives at least one clip).
	ClipSeconds = 10.0
)

// Options control Write. The zero value writes the default plant.
type Options struct {
	// Seed is the plant seed written to plant.toml and the seed of the
	// synthesis; 0 means DefaultSeed. TOML integers are signed, so it must
	// be at most 2^63−1.
	Seed uint64
	// Seconds is the length of each machine recording; 0 means 20 s.
	Seconds float64
	// Overwrite lets Write replace an existing plant.toml that differs from
	// the one it would write. Without it Write refuses, so a real plant is
	// never overwritten by accident; an identical file (a rerun) is fine.
	Overwrite bool
}

// ExampleTOML is the commented plant.toml of the demo plant, with
// DefaultSeed, as `thrum init` writes it.
func ExampleTOML() string { return render(DefaultSeed, ClipSeconds) }

func render(seed uint64, clip float64) string {
	caution := "# " + strings.ReplaceAll(strings.TrimSpace(exposure.Caution), "\n", "\n# ")
	return strings.NewReplacer(
		"{{caution}}", caution,
		"{{seed}}", strconv.FormatUint(seed, 10),
		"{{clip}}", strconv.FormatFloat(clip, 'f', -1, 64),
	).Replace(plantTemplate)
}

// ErrExists is returned (wrapped) when the folder already holds a different
// plant.toml and Options.Overwrite is false.
var ErrExists = errors.New("demoplant: a different plant.toml already exists")

// Write writes the demo plant into dir (created if needed): plant.toml, its
// recordings and its background recording, and returns the path of
// plant.toml. The same options always give byte-identical files. Each file
// is written to a temporary name and renamed into place; files are not
// synced to disk (they can always be made again).
func Write(dir string, opt Options) (plantPath string, err error) {
	if opt.Seed == 0 {
		opt.Seed = DefaultSeed
	}
	if opt.Seed > math.MaxInt64 {
		return "", fmt.Errorf("demoplant: seed %d is above 2^63-1, the largest TOML integer", opt.Seed)
	}
	if opt.Seconds == 0 {
		opt.Seconds = DefaultSeconds
	}
	if !(opt.Seconds >= MinSeconds && opt.Seconds <= MaxSeconds) {
		return "", fmt.Errorf("demoplant: seconds %g outside %g … %g", opt.Seconds, MinSeconds, MaxSeconds)
	}
	clip := math.Min(ClipSeconds, opt.Seconds)
	text := render(opt.Seed, clip)
	plantPath = filepath.Join(dir, "plant.toml")
	p, err := machine.Parse([]byte(text), plantPath)
	if err != nil {
		return "", fmt.Errorf("demoplant: the built-in plant does not validate: %w", err)
	}
	if old, rerr := os.ReadFile(plantPath); rerr == nil && !bytes.Equal(old, []byte(text)) && !opt.Overwrite {
		return "", fmt.Errorf("%w: %s", ErrExists, plantPath)
	}

	takes, err := plan(p)
	if err != nil {
		return "", err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return "", fmt.Errorf("demoplant: %w", err)
	}
	if err := machine.WriteFileAtomic(plantPath, []byte(text)); err != nil {
		return "", err
	}
	s := newSynth(p, opt.Seed)
	for _, t := range takes {
		full := filepath.Join(dir, filepath.FromSlash(t.path))
		if err := os.MkdirAll(filepath.Dir(full), 0o755); err != nil {
			return "", fmt.Errorf("demoplant: %w", err)
		}
		seconds := opt.Seconds
		switch {
		case t.background:
			seconds = math.Min(BackgroundSeconds, opt.Seconds)
		case t.short:
			seconds = clip
		}
		x, err := s.take(t, seconds)
		if err != nil {
			return "", err
		}
		var b bytes.Buffer
		b.Grow(2*len(x) + 64)
		if err := wavio.Encode(&b, x, p.SampleRate, 1, wavio.PCM16); err != nil {
			return "", fmt.Errorf("demoplant: %s: %w", t.path, err)
		}
		if err := machine.WriteFileAtomic(full, b.Bytes()); err != nil {
			return "", err
		}
	}
	return plantPath, nil
}

// Microphone distance classes of a take.
const (
	near = iota // 0.5 … 1 m
	mid         // 1 … 1.5 m
	far         // 1.5 … 2.3 m
)

// take is one file to synthesise.
type take struct {
	path       string // relative to the plant folder, slash-separated
	m          *machine.Machine
	c          *machine.Condition
	dist       int    // near, mid or far
	fault      string // "", faultOuterRace, faultBladeRub or faultInnerRace
	short      bool   // one clip long (an anomalous recording kept short)
	background bool
}

// Faults of the anomalous recordings.
const (
	faultOuterRace = "outer-race" // the pump's drive-end bearing
	faultBladeRub  = "blade-rub"  // the fan: an unbalanced rotor whose blade tips rub the casing
	faultInnerRace = "inner-race" // the conveyor's motor-shaft bearing
)

// anomalies names the fault of each machine/condition with anomalous
// recordings.
var anomalies = map[string]string{
	"pump-p1/duty":     faultOuterRace,
	"fan-f1/high":      faultBladeRub,
	"conveyor-c1/full": faultInnerRace,
}

// plan lists the files of the plant, in a fixed order. Every condition
// that can be split gets six normal split groups, so that the shares
// 0.6/0.2/0.2 deal them 4/1/1 (and "stable-hash" would still fill train,
// eval and test): take-01 … take-06 at near, far and mid distances in
// turn; a hold-out condition, which goes to test whole, gets two takes. The
// conveyor at full speed has a second visit instead of take-06: a session
// folder with two takes (one group). Every machine has two anomalous
// recordings in a condition that is not held out, so eval and test each get
// one: the pump's (full length, duty) an outer-race defect, the fan's (one
// clip long, high speed) a blade rub, the conveyor's (one clip long, full
// speed) an inner-race defect of the motor-shaft bearing.
func plan(p *machine.Plant) ([]take, error) {
	var out []take
	dists := []int{near, far, mid}
	for i := range p.Machines {
		m := &p.Machines[i]
		for j := range m.Conditions {
			c := &m.Conditions[j]
			base := p.Recordings + "/" + m.ID + "/" + c.Name + "/"
			add := func(name string, dist int) {
				out = append(out, take{path: base + name, m: m, c: c, dist: dist})
			}
			n := 6
			if c.HoldOut {
				n = 2
			}
			session := m.ID == "conveyor-c1" && c.Name == "full"
			if session {
				n = 5
			}
			for k := 0; k < n; k++ {
				add(fmt.Sprintf("take-%02d.wav", k+1), dists[k%3])
			}
			if session {
				sess := machine.SessionPrefix + "visit-02/"
				add(sess+"take-06.wav", near)
				add(sess+"take-07.wav", mid)
			}
			if f, ok := anomalies[m.ID+"/"+c.Name]; ok {
				for k, dist := range []int{mid, near} {
					out = append(out, take{path: fmt.Sprintf("%s%s/%s-%02d.wav", base, machine.AnomalousDir, f, k+1),
						m: m, c: c, dist: dist, fault: f, short: f != faultOuterRace})
				}
			}
		}
	}
	if len(p.Backgrounds) != 1 {
		return nil, fmt.Errorf("demoplant: the built-in plant has %d backgrounds, want 1", len(p.Backgrounds))
	}
	out = append(out, take{path: p.Backgrounds[0].Path, background: true})
	return out, nil
}
