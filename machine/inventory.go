package machine

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"hash"
	"io"
	"io/fs"
	"math"
	"os"
	"path"
	"path/filepath"
	"sort"
	"strings"

	"thrum/machine/wavio"
)

// Folder names with a meaning inside a condition folder.
const (
	// AnomalousDir holds real anomalous recordings of the condition.
	AnomalousDir = "anomalous"
	// SessionPrefix starts a session folder: every recording below
	// session-<name>/ shares one split group.
	SessionPrefix = "session-"
)

// Clip is a fixed-length piece of a recording, in frames.
type Clip struct {
	Index  int   `json:"index"`
	Start  int64 `json:"start"`
	Frames int64 `json:"frames"`
	// Pad is the number of zero frames appended (remainder = "pad").
	Pad int64 `json:"pad,omitempty"`
}

// Levels are a recording's level statistics over all channels.
type Levels struct {
	RMSDBFS  float64 `json:"rms_dbfs"`
	PeakDBFS float64 `json:"peak_dbfs"`
	// Clipped is the fraction of samples in flat tops near full scale
	// (QualityStats.Clipped).
	Clipped float64 `json:"clipped"`
	// DC is the mean sample value (full scale 1).
	DC float64 `json:"dc"`
}

// Recording is one source file of the inventory.
type Recording struct {
	Machine   string `json:"machine"`
	Condition string `json:"condition"`
	// Rel is the path relative to the recordings root, slash-separated.
	Rel string `json:"path"`
	// Path is the file on disk.
	Path    string `json:"-"`
	Label   Label  `json:"label"`
	Session string `json:"session,omitempty"`
	// Group is the split unit: the session folder when there is one, else
	// the recording itself.
	Group    string       `json:"group"`
	SHA256   string       `json:"sha256"`
	Format   wavio.Format `json:"format"`
	Frames   int64        `json:"frames"`
	Seconds  float64      `json:"seconds"`
	Clips    []Clip       `json:"clips"`
	Levels   *Levels      `json:"levels,omitempty"`
	Warnings []string     `json:"warnings,omitempty"`
	// Quality is what the quality gate measured (nil when the samples
	// could not be read or checked).
	Quality *QualityStats `json:"quality,omitempty"`
	// Accepted is the plant's reason ([[quality.accept]]) for using the
	// recording although the gate would exclude it; AcceptedOver is the
	// gate's finding it overrides.
	Accepted     string `json:"accepted,omitempty"`
	AcceptedOver string `json:"accepted_over,omitempty"`
	// File is the source file relative to the recordings root when Rel
	// names one channel of it (channel mode "each": Rel is File + "#chN").
	File string `json:"file,omitempty"`
	// Channel is the channel this stream reads, counted from 1 (channel
	// modes "N" and "each"); 0 for the channel mean.
	Channel int `json:"channel,omitempty"`
	// WorkRate is the plant's working rate. When the file's rate differs,
	// its samples are resampled to it (Resample holds the exact ratio
	// "out/in", e.g. "1/3") and Clips count working-rate frames.
	WorkRate int    `json:"work_rate,omitempty"`
	Resample string `json:"resample,omitempty"`
	// BandwidthHz is the machine's harmonised bandwidth (see Scan); 0 when
	// every recording of the machine is at the working rate and none is set.
	// Lowpass says whether this recording's clips are low-passed to it
	// (those whose own band is already that narrow are not).
	BandwidthHz float64 `json:"bandwidth_hz,omitempty"`
	Lowpass     bool    `json:"lowpass,omitempty"`
	// BeyondFullScale marks float samples beyond ±1: sensor data in physical
	// units (an accelerometer in g), read unchanged and never called clipped.
	BeyondFullScale bool `json:"beyond_full_scale,omitempty"`
	// Err is why the recording cannot be used (unreadable, wrong rate, a
	// *SampleError for its samples, a *QualityError from the gate).
	Err error `json:"-"`
}

// Exclusion returns the kind and message of a recording that was read but
// whose samples exclude it (a *SampleError or a *QualityError), or ok
// false. These are the recordings the ledger records as excluded.
func (r *Recording) Exclusion() (kind, msg string, ok bool) {
	var se *SampleError
	var qe *QualityError
	switch {
	case errors.As(r.Err, &se):
		return se.Kind, se.Error(), true
	case errors.As(r.Err, &qe):
		return qe.Kind, qe.Error(), true
	}
	return "", "", false
}

// Usable reports whether the recording can be cut into clips and processed.
func (r *Recording) Usable() bool { return r.Err == nil && len(r.Clips) > 0 }

// Problem is something a survey reports: it never stops the scan.
type Problem struct {
	Machine   string `json:"machine,omitempty"`
	Condition string `json:"condition,omitempty"`
	Path      string `json:"path,omitempty"`
	// Kind is one of unreadable, unknown-format, bad-channel,
	// no-recordings, short, duplicate (the same content as an earlier
	// recording of the machine), unknown-folder, unknown-condition, warning,
	// not-full-scale (a note: float sensor data beyond ±1, read unchanged),
	// the sample problems non-finite, absurd-sample and silent (see
	// SampleError), and the quality gate's clipped, dc-offset and quiet (see
	// QualityError).
	Kind string `json:"kind"`
	Msg  string `json:"message"`
}

// ProblemNotFullScale is the kind of the note on float sensor data beyond
// ±1: information, not a fault of the file.
const ProblemNotFullScale = "not-full-scale"

// Note reports whether the problem is only information (see
// ProblemNotFullScale): survey --strict does not count it.
func (p Problem) Note() bool { return p.Kind == ProblemNotFullScale }

func (p Problem) String() string {
	loc := p.Path
	if loc == "" {
		loc = strings.Trim(p.Machine+"/"+p.Condition, "/")
	}
	return fmt.Sprintf("%s: %s: %s", loc, p.Kind, p.Msg)
}

// Inventory is every recording of a plant, in a stable order (machine,
// condition as declared; paths sorted).
type Inventory struct {
	Plant      *Plant
	Recordings []*Recording
	Problems   []Problem
}

// ScanOptions tune Scan.
type ScanOptions struct {
	// Levels computes level statistics (RMS, peak, clipping, DC), which needs
	// every sample decoded; hashing alone does not.
	Levels bool
	// Machines limits the scan to these machine ids (nil = all).
	Machines []string
}

// Scan walks the recordings root of a plant. Unreadable files and other
// problems are recorded and the scan goes on; only a missing root, or ctx
// being done (its error is returned, checked between and within files), is
// an error. A .wav name that is not a regular file (a named pipe, socket or
// device) is a problem and is never opened.
func Scan(ctx context.Context, p *Plant, opt ScanOptions) (*Inventory, error) {
	root := p.RecordingsRoot()
	if st, err := os.Stat(root); err != nil || !st.IsDir() {
		return nil, fmt.Errorf("machine: %s: recordings root %q is not a folder", p.Path, root)
	}
	inv := &Inventory{Plant: p}
	want := map[string]bool{}
	for _, id := range opt.Machines {
		want[id] = true
	}
	if p.Manifest != "" {
		if err := inv.scanManifest(ctx, p, want, opt.Levels); err != nil {
			return nil, err
		}
		return inv, nil
	}
	known := map[string]bool{}
	for i := range p.Machines {
		known[p.Machines[i].ID] = true
	}
	if ents, err := os.ReadDir(root); err == nil {
		for _, e := range ents {
			if e.IsDir() && !known[e.Name()] {
				inv.Problems = append(inv.Problems, Problem{Path: e.Name(), Kind: "unknown-folder", Msg: "folder matches no machine id in the plant file"})
			}
		}
	}
	for i := range p.Machines {
		m := &p.Machines[i]
		if len(want) > 0 && !want[m.ID] {
			continue
		}
		if ents, err := os.ReadDir(filepath.Join(root, m.ID)); err == nil {
			for _, e := range ents {
				if e.IsDir() && m.Condition(e.Name()) == nil {
					inv.Problems = append(inv.Problems, Problem{Machine: m.ID, Path: m.ID + "/" + e.Name(), Kind: PreflightFolder,
						Msg: "folder matches no condition of machine " + m.ID + " in the plant file; its recordings are not used"})
				}
			}
		}
		// first recording of the machine with each content hash: a second
		// one (a copy, a hard or symbolic link) would be a second split
		// group of the same sound, a leak across the split boundary
		seen := map[string]string{}
		for j := range m.Conditions {
			c := &m.Conditions[j]
			dir := filepath.Join(root, m.ID, c.Name)
			files, others, err := audioFiles(dir)
			if err != nil && !errors.Is(err, fs.ErrNotExist) {
				// an unreadable folder is named with its cause, not taken
				// for an empty one
				inv.Problems = append(inv.Problems, Problem{Machine: m.ID, Condition: c.Name, Kind: "unreadable", Msg: fmt.Sprintf("condition folder %s: %v; its recordings are not used", filepath.ToSlash(filepath.Join(m.ID, c.Name)), err)})
				continue
			}
			for _, f := range others {
				rel, _ := filepath.Rel(root, f)
				inv.Problems = append(inv.Problems, Problem{Machine: m.ID, Condition: c.Name, Path: filepath.ToSlash(rel), Kind: "unknown-format",
					Msg: fmt.Sprintf("unknown format %q; not used (supported: %s; convert the file, or move it out of the recordings tree)", filepath.Ext(f), strings.Join(AudioExtensions(), ", "))})
			}
			if len(files) == 0 {
				inv.Problems = append(inv.Problems, Problem{Machine: m.ID, Condition: c.Name, Kind: "no-recordings", Msg: "condition has no recordings (" + filepath.ToSlash(filepath.Join(m.ID, c.Name)) + "/*.wav or *.flac)"})
				continue
			}
			for _, f := range files {
				if err := ctx.Err(); err != nil {
					return nil, err
				}
				rec, err := inv.scanOne(ctx, p, m, c, root, f, opt.Levels, nil)
				if err != nil {
					return nil, err
				}
				inv.markDuplicate(seen, m, c, rec)
				if rec != nil {
					inv.Recordings = append(inv.Recordings, inv.splitChannels(m, c, rec)...)
				}
			}
		}
		inv.harmonise(m)
	}
	return inv, nil
}

// AudioExtensions are the file name extensions Scan reads as recordings
// (any case); every other file in a condition folder is reported as an
// unknown format.
func AudioExtensions() []string { return []string{".wav", ".flac"} }

// audioFiles lists the recordings below dir, sorted, and the other files.
// Names starting with "." (files and folders: .DS_Store, editor and
// version-control files) are hidden and skipped without a report.
func audioFiles(dir string) (audio, others []string, err error) {
	err = filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		if p != dir && strings.HasPrefix(d.Name(), ".") {
			if d.IsDir() {
				return filepath.SkipDir
			}
			return nil
		}
		if d.IsDir() {
			return nil
		}
		ext := strings.ToLower(filepath.Ext(p))
		for _, e := range AudioExtensions() {
			if ext == e {
				audio = append(audio, p)
				return nil
			}
		}
		others = append(others, p)
		return nil
	})
	sort.Strings(audio)
	sort.Strings(others)
	return audio, others, err
}

// scanOne reads one recording; row, when not nil, is its manifest row,
// which gives its path, label and session instead of the folders. It
// returns nil (and records a problem) for a file that is not a regular
// file, and an error only when ctx is done.
func (inv *Inventory) scanOne(ctx context.Context, p *Plant, m *Machine, c *Condition, root, file string, levels bool, row *ManifestRow) (*Recording, error) {
	rel, _ := filepath.Rel(root, file)
	rel = filepath.ToSlash(rel)
	rec := &Recording{Machine: m.ID, Condition: c.Name, Rel: rel, Path: file, Label: LabelNormal, Group: rel}
	if row != nil {
		rec.Rel, rec.Group, rec.Label, rec.Session = row.Path, row.Path, row.Label, row.Session
		rel = row.Path
		if row.Session != "" {
			rec.Group = m.ID + "/" + c.Name + "/" + SessionPrefix + row.Session
		}
	} else {
		inner := strings.Split(strings.TrimPrefix(rel, m.ID+"/"+c.Name+"/"), "/")
		prefix := m.ID + "/" + c.Name
		for _, part := range inner[:len(inner)-1] {
			prefix = path.Join(prefix, part)
			if part == AnomalousDir {
				rec.Label = LabelAnomalous
			}
			if strings.HasPrefix(part, SessionPrefix) && rec.Session == "" {
				rec.Session = strings.TrimPrefix(part, SessionPrefix)
				rec.Group = prefix
			}
		}
	}
	if rec.Session != "" && rec.Label == LabelAnomalous && !strings.Contains(rec.Group, "/"+AnomalousDir) {
		rec.Group += "/" + AnomalousDir
	}
	problem := func(kind, format string, a ...any) {
		inv.Problems = append(inv.Problems, Problem{Machine: m.ID, Condition: c.Name, Path: rel, Kind: kind, Msg: fmt.Sprintf(format, a...)})
	}
	if err := CheckRegular(file); err != nil {
		problem("unreadable", "%v; skipped", err)
		return nil, nil
	}
	th := p.Quality.Thresholds()
	sum, lv, qs, se, r, err := hashAndRead(ctx, file, th)
	if cerr := ctx.Err(); cerr != nil {
		return nil, cerr
	}
	rec.SHA256 = sum
	if err != nil {
		rec.Err = err
		problem("unreadable", "%v", err)
		return rec, nil
	}
	rec.Format, rec.Frames, rec.Warnings = r.Format(), r.Frames(), r.Warnings()
	if levels && (se == nil || se.Kind == SampleSilent) {
		rec.Levels = lv
	}
	rec.Quality = qs
	for _, w := range rec.Warnings {
		problem("warning", "%s", w)
	}
	if se != nil {
		// Excluded, never clamped: a clamped NaN or 1e30 becomes a
		// full-scale click, and a scaled-down one a clip of zeros.
		rec.Err = se
		problem(se.Kind, "%v; not used", se)
		return rec, nil
	}
	if rec.Format.Float && lv.PeakDBFS > 0 {
		rec.BeyondFullScale = true
		lv.Clipped = 0
		if qs != nil {
			qs.Clipped = 0 // as the note says: clipping is not assessed
		}
		problem(ProblemNotFullScale, "not full-scale audio, peak %.3g; read unchanged (sensor data in its own units), clipping not assessed", math.Pow(10, lv.PeakDBFS/20))
	}
	if qe := th.Gate(qs); qe != nil {
		if why := p.Quality.Accepted(rel); why != "" {
			rec.Accepted, rec.AcceptedOver = why, qe.Error()
		} else {
			rec.Err = qe
			problem(qe.Kind, "%v; not used (accept it in [[quality.accept]] to use it)", qe)
			return rec, nil
		}
	}
	rate := rec.Format.SampleRate
	rec.Seconds = float64(rec.Frames) / float64(rate)
	work := rec.Frames
	if rate != p.SampleRate {
		rs := ratePlan(rate, p.SampleRate)
		rec.WorkRate = p.SampleRate
		rec.Resample = resampleRatio(rate, p.SampleRate)
		work = int64(rs.Len(int(rec.Frames)))
	}
	rec.Clips = CutClips(work, p.ClipFrames(), p.Remainder)
	if len(rec.Clips) == 0 {
		problem("short", "%.2f s is shorter than one clip (%g s)", rec.Seconds, p.ClipSeconds)
	}
	return rec, nil
}

// ClipFrames is the clip length in frames at the working rate.
func (p *Plant) ClipFrames() int64 { return int64(math.Round(p.ClipSeconds * float64(p.SampleRate))) }

// CutClips cuts frames into clips of n frames. The remainder is dropped, or
// with policy "pad" kept as a zero-padded clip when it is at least half a clip.
func CutClips(frames, n int64, policy string) []Clip {
	var out []Clip
	k := 0
	for s := int64(0); s+n <= frames; s += n {
		out = append(out, Clip{Index: k, Start: s, Frames: n})
		k++
	}
	rem := frames - int64(k)*n
	if policy == "pad" && rem > 0 && 2*rem >= n {
		out = append(out, Clip{Index: k, Start: int64(k) * n, Frames: n, Pad: n - rem})
	}
	return out
}

// MaxFloatSample is the sanity limit on the magnitude of a float sample.
// Float recordings may hold sensor data in physical units beyond ±1 (an
// accelerometer record in g, a pressure in Pa), so full scale is no limit;
// 1e6 is far above any such record yet far below garbage such as 1e30 or a
// misread integer, whose squares would swamp every level and mix.
const MaxFloatSample = 1e6

// Sample problem kinds: why a recording's samples make it unusable.
const (
	SampleNonFinite = "non-finite"
	SampleAbsurd    = "absurd-sample"
	SampleSilent    = "silent"
)

// SampleError says why a recording's samples make it unusable: the first
// non-finite sample, the first sample beyond ±MaxFloatSample, or exact
// digital silence (every sample 0, Kind SampleSilent, no location).
type SampleError struct {
	Kind string
	// Frame and Channel locate the first bad sample; Offset is its byte
	// offset in the file, −1 when unknown.
	Frame   int64
	Channel int
	Offset  int64
	Value   float64
}

func (e *SampleError) Error() string {
	if e.Kind == SampleSilent {
		return "all samples are 0"
	}
	at := fmt.Sprintf("sample %d of channel %d", e.Frame, e.Channel)
	if e.Offset >= 0 {
		at += fmt.Sprintf(" (byte offset %d)", e.Offset)
	}
	if e.Kind == SampleAbsurd {
		return fmt.Sprintf("%s is %.7g, beyond the sanity limit ±%g for float samples", at, e.Value, MaxFloatSample)
	}
	return fmt.Sprintf("%s is %v", at, e.Value)
}

// badSample reports whether a sample is non-finite or absurd, and which.
func badSample(x float64) (string, bool) {
	switch {
	case math.IsNaN(x) || math.IsInf(x, 0):
		return SampleNonFinite, true
	case math.Abs(x) > MaxFloatSample:
		return SampleAbsurd, true
	}
	return "", false
}

// CheckSamples checks decoded interleaved samples as Scan checks a
// recording's: the first non-finite or absurd sample, or only zeros (an
// empty x is not silent), is returned as a *SampleError with Offset −1.
func CheckSamples(x []float64, channels int) *SampleError {
	channels = max(channels, 1)
	zero := true
	for i, v := range x {
		if kind, bad := badSample(v); bad {
			return &SampleError{Kind: kind, Frame: int64(i / channels), Channel: i % channels, Offset: -1, Value: v}
		}
		zero = zero && v == 0
	}
	if zero && len(x) > 0 {
		return &SampleError{Kind: SampleSilent, Offset: -1}
	}
	return nil
}

// hashAndRead hashes the file's bytes, parses its header and decodes every
// sample in one pass: the samples are checked (see SampleError) and
// measured, the quality gate's measures included. Every read fails with
// ctx's error once ctx is done.
func hashAndRead(ctx context.Context, file string, th Thresholds) (string, *Levels, *QualityStats, *SampleError, *wavio.Reader, error) {
	of, err := os.Open(file)
	if err != nil {
		return "", nil, nil, nil, nil, err
	}
	defer of.Close()
	st, err := of.Stat()
	if err != nil {
		return "", nil, nil, nil, nil, err
	}
	f := ContextReader(ctx, of)
	h := sha256.New()
	tee := io.TeeReader(f, h)
	r, err := wavio.NewReader(tee, file, st.Size())
	if err != nil {
		drain(h, f)
		return hex.EncodeToString(h.Sum(nil)), nil, nil, nil, nil, err
	}
	lv, qs, se, err := measure(r, th)
	if err != nil {
		drain(h, f)
		return hex.EncodeToString(h.Sum(nil)), nil, nil, nil, nil, err
	}
	if se != nil {
		qs = nil
	}
	if err := drain(h, f); err != nil {
		return "", nil, nil, nil, nil, err
	}
	return hex.EncodeToString(h.Sum(nil)), lv, qs, se, r, nil
}

// drain hashes whatever of f has not been read yet.
func drain(h hash.Hash, f io.Reader) error {
	_, err := io.Copy(h, f)
	return err
}

// measure decodes every sample of r for its level statistics and checks
// them: the first non-finite or absurd sample, or a file of zeros, is
// returned as a *SampleError (the levels are then meaningless, except the
// −Inf levels of silence).
func measure(r *wavio.Reader, th Thresholds) (*Levels, *QualityStats, *SampleError, error) {
	format := r.Format()
	ch := format.Channels
	buf := make([]float64, 8192*ch)
	var n int64
	var sum, sq, peak float64
	var bad *SampleError
	ft := newFlatTops(ch, th.ClipRun)
	for {
		k, err := r.ReadFrames(buf)
		ft.add(buf[:k*ch])
		for i, x := range buf[:k*ch] {
			sum += x
			sq += x * x
			a := math.Abs(x)
			if a > peak {
				peak = a
			}
			if kind, ok := badSample(x); ok && bad == nil {
				idx := n + int64(i)
				bad = &SampleError{Kind: kind, Frame: idx / int64(ch), Channel: int(idx % int64(ch)),
					Offset: -1, Value: x}
				if r.DataOffset() >= 0 {
					bad.Offset = r.DataOffset() + idx*int64(format.BitDepth/8)
				}
			}
		}
		n += int64(k * ch)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, nil, nil, err
		}
	}
	lv := &Levels{RMSDBFS: math.Inf(-1), PeakDBFS: math.Inf(-1)}
	qs := qualityOf(ft, sum, sq, peak, n, th)
	if n > 0 {
		lv.DC = sum / float64(n)
		lv.Clipped = qs.Clipped
		lv.RMSDBFS = DB(sq / float64(n))
		lv.PeakDBFS = 20 * math.Log10(peak)
	}
	if bad == nil && n > 0 && peak == 0 {
		bad = &SampleError{Kind: SampleSilent, Offset: -1}
	}
	return lv, qs, bad, nil
}

// DB is 10·log10(power), −Inf for zero power.
func DB(power float64) float64 { return 10 * math.Log10(power) }

// ReadSpan reads frames [start, start+frames) of a recording, as mono
// working-rate samples like ReadClips (the channel mean unless its channel
// mode picks one; resampled and band-limited as Scan decided), into dst
// (nil or short allocates). Frames count at the working rate (see
// WorkFrames). The span must lie inside the recording: nothing is padded.
func (r *Recording) ReadSpan(dst []float64, start, frames int64) ([]float64, error) {
	if r.Err != nil {
		return nil, r.Err
	}
	if total := r.WorkFrames(); start < 0 || frames < 0 || start+frames > total {
		return nil, fmt.Errorf("machine: %s: span %d+%d outside its %d frames", r.Rel, start, frames, total)
	}
	if r.converted() || r.Format.Codec != "" {
		return r.readSpanConverted(dst, start, frames)
	}
	f, err := wavio.Open(r.Path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if err := f.SeekFrame(start); err != nil {
		return nil, err
	}
	ch := r.Format.Channels
	buf := make([]float64, int(frames)*ch)
	got := 0
	for got < int(frames) {
		k, err := f.ReadFrames(buf[got*ch:])
		got += k
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, err
		}
	}
	if got < int(frames) {
		return nil, fmt.Errorf("machine: %s: %d frames from %d, only %d read", r.Rel, frames, start, got)
	}
	if cap(dst) < int(frames) {
		dst = make([]float64, frames)
	}
	dst = dst[:frames]
	if ch == 1 {
		copy(dst, buf)
		return dst, nil
	}
	inv := 1 / float64(ch)
	for i := range dst {
		var s float64
		for k := 0; k < ch; k++ {
			s += buf[i*ch+k]
		}
		dst[i] = s * inv
	}
	return dst, nil
}

// ReadClips streams the clips of a recording in order as mono working-rate
// samples (the channel mean, or the channel of its channel mode; resampled
// and band-limited as Scan decided), calling fn with each clip's samples.
// The slice is reused between calls.
func (r *Recording) ReadClips(fn func(c Clip, x []float64) error) error {
	return r.ReadClipsOf(r.Clips, fn)
}

// ReadClipsOf is ReadClips for some of the recording's clips, in order
// (clips must be a run of r.Clips, as r.Clips[i:j]): each clip's samples
// are those ReadClips gives it, wherever the run starts, so a recording's
// clips can be read in ranges on several workers.
func (r *Recording) ReadClipsOf(clips []Clip, fn func(c Clip, x []float64) error) error {
	if r.Err != nil {
		return r.Err
	}
	if r.converted() {
		return r.readConverted(clips, fn)
	}
	f, err := wavio.Open(r.Path)
	if err != nil {
		return err
	}
	defer f.Close()
	ch := r.Format.Channels
	var pos int64
	if len(clips) > 0 && clips[0].Start > 0 && r.Format.Codec == "" {
		// a WAV file seeks to the run's first clip instead of reading up to it
		if err := f.SeekFrame(clips[0].Start); err == nil {
			pos = clips[0].Start
		}
	}
	var frame []float64
	var mono []float64
	for _, c := range clips {
		if c.Start > pos {
			if err := f.Skip(c.Start - pos); err != nil {
				return err
			}
			pos = c.Start
		}
		want := c.Frames - c.Pad
		if cap(frame) < int(want)*ch {
			frame = make([]float64, int(want)*ch)
		}
		frame = frame[:int(want)*ch]
		got := 0
		for got < int(want) {
			k, err := f.ReadFrames(frame[got*ch:])
			got += k
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				return err
			}
		}
		pos += int64(got)
		if cap(mono) < int(c.Frames) {
			mono = make([]float64, c.Frames)
		}
		mono = mono[:c.Frames]
		clear(mono)
		if ch == 1 {
			copy(mono, frame[:got])
		} else {
			inv := 1 / float64(ch)
			for i := 0; i < got; i++ {
				var s float64
				for k := 0; k < ch; k++ {
					s += frame[i*ch+k]
				}
				mono[i] = s * inv
			}
		}
		if err := fn(c, mono); err != nil {
			return err
		}
	}
	return nil
}

// HashFile returns the sha256 of a file's bytes, hex-encoded.
func HashFile(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", err
	}
	defer f.Close()
	return hashReader(f)
}

func hashReader(r io.Reader) (string, error) {
	h := sha256.New()
	if _, err := io.Copy(h, r); err != nil {
		return "", err
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}

// markDuplicate refuses a recording whose content an earlier recording of
// the machine already has (a copy, a hard or symbolic link): it would be a
// second split group of one sound. seen maps content hashes to the first
// recording's path; the folder scan and the manifest scan share it.
func (inv *Inventory) markDuplicate(seen map[string]string, m *Machine, c *Condition, rec *Recording) {
	if rec == nil || rec.Err != nil || rec.SHA256 == "" {
		return
	}
	if first, ok := seen[rec.SHA256]; ok {
		rec.Err = fmt.Errorf("same content (sha256 %s) as %s", rec.SHA256, first)
		inv.Problems = append(inv.Problems, Problem{Machine: m.ID, Condition: c.Name, Path: rec.Rel, Kind: "duplicate", Msg: fmt.Sprintf("%v; not used", rec.Err)})
		return
	}
	seen[rec.SHA256] = rec.Rel
}
