package features

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/csv"
	"encoding/hex"
	"errors"
	"fmt"
	"math"
	"os"
	"path"
	"path/filepath"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"sync"

	"math/rand/v2"

	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/wavio"
)

// Folder and file names of the features stage under the output root.
const (
	Dir       = "features"
	IndexFile = "index.csv"
	StatsFile = "stats.json"
)

// Input is one audio file of the split lists.
type Input struct {
	// Path is the audio file relative to the output root (as in the ledger).
	Path, SHA256                string
	Machine, Condition          string
	Split                       machine.Split
	Origin                      machine.Origin
	Label                       machine.Label
	Source, SourceSHA256, Group string
	Clip                        int
}

// StageOptions configure the features stage. Out is required.
type StageOptions struct {
	Out     string
	Workers int // 0 = all cores
	// Progress, when set, is called after each file from one goroutine at a
	// time with the files done and the total.
	Progress func(done, total int)
}

// StageSummary counts what the stage did per machine.
type StageSummary struct {
	Machine              string
	Files, Masked, Reuse int
	StatsInputs          int
}

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
}

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
	return s, nil
}

// featurePath maps an audio path to its feature path under Dir.
func featurePath(audio, suffix string) string {
	return path.Join(Dir, strings.TrimSuffix(audio, path.Ext(audio))+suffix+".npy")
}

type fileResult struct {
	idx     int
	row     indexRow
	moments Moments
	feat    []float32
	frames  int
	masked  []ledger.Entry
	reused  bool
	err     error
}

type indexRow struct {
	in               Input
	npy, npySHA, env string
	frames, bands    int
	envBinHz         float64
	sum              Summary
}

// RunStage computes the features of every input: log-mel per clip (.npy,
// frames × bands, float32), its envelope spectrum, summary statistics in
// index.csv, masked copies of training clips (logged in the machine's
// ledger, stage "features"), normalisation statistics per machine fitted on
// the training clips only, optional stacked arrays and pictures. A rerun
// reuses features whose audio and .npy hashes still match.
func RunStage(ctx context.Context, p *machine.Plant, inputs []Input, opt StageOptions) ([]StageSummary, error) {
	if opt.Out == "" {
		return nil, errors.New("features: no output folder")
	}
	sort.SliceStable(inputs, func(i, j int) bool {
		if inputs[i].Machine != inputs[j].Machine {
			return inputs[i].Machine < inputs[j].Machine
		}
		return inputs[i].Path < inputs[j].Path
	})
	setups := map[string]machineSetup{}
	for _, in := range inputs {
		if _, ok := setups[in.Machine]; ok {
			continue
		}
		m := p.Machine(in.Machine)
		if m == nil {
			return nil, fmt.Errorf("features: %s: machine %q is not in the plant", in.Path, in.Machine)
		}
		s, err := setupFor(p, m)
		if err != nil {
			return nil, err
		}
		setups[in.Machine] = s
	}
	old := readIndex(filepath.Join(opt.Out, Dir, IndexFile))
	keep := pictureInputs(inputs, setups)
	workers := opt.Workers
	if workers <= 0 {
		workers = runtime.NumCPU()
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	jobs := make(chan int)
	results := make(chan fileResult)
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			ws := map[string]*worker{}
			for i := range jobs {
				in := inputs[i]
				wk := ws[in.Machine]
				if wk == nil {
					var err error
					wk, err = newWorker(setups[in.Machine], float64(p.SampleRate))
					if err != nil {
						results <- fileResult{idx: i, err: err}
						continue
					}
					ws[in.Machine] = wk
				}
				r := wk.do(p, opt.Out, in, old[in.Path])
				r.idx = i
				if !keep[i] {
					r.feat = nil // memory stays flat: only picture clips keep their arrays
				}
				select {
				case results <- r:
				case <-ctx.Done():
					return
				}
			}
		}()
	}
	go func() {
		defer close(jobs)
		for i := range inputs {
			select {
			case jobs <- i:
			case <-ctx.Done():
				return
			}
		}
	}()
	go func() { wg.Wait(); close(results) }()
	all := make([]fileResult, len(inputs))
	var firstErr error
	done := 0
	for r := range results {
		if r.err != nil && firstErr == nil {
			firstErr = r.err
			cancel()
		}
		all[r.idx] = r
		done++
		if opt.Progress != nil {
			opt.Progress(done, len(inputs))
		}
	}
	if firstErr != nil {
		return nil, firstErr
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	return finishStage(p, opt.Out, inputs, all, setups)
}

// pictureInputs marks, per machine with pictures on, the first normal
// recorded training clip, an augmented variant of the same clip and the
// first synthetic fault: the clips the pictures show.
func pictureInputs(inputs []Input, setups map[string]machineSetup) map[int]bool {
	keep := map[int]bool{}
	rec := map[string]int{}
	for i, in := range inputs {
		if !setups[in.Machine].pictures {
			continue
		}
		if _, ok := rec[in.Machine]; !ok && in.Origin == machine.OriginRecorded && in.Split == machine.SplitTrain && in.Label == machine.LabelNormal {
			rec[in.Machine] = i
			keep[i] = true
		}
	}
	aug := map[string]bool{}
	for i, in := range inputs {
		r, ok := rec[in.Machine]
		if ok && !aug[in.Machine] && in.Origin == machine.OriginAugmented && in.Source == inputs[r].Source && in.Clip == inputs[r].Clip {
			aug[in.Machine] = true
			keep[i] = true
		}
	}
	return keep
}

// finishStage writes, in input order: statistics, ledger sections, stacked
// arrays, the index and pictures.
func finishStage(p *machine.Plant, out string, inputs []Input, all []fileResult, setups map[string]machineSetup) ([]StageSummary, error) {
	var sums []StageSummary
	byMachine := map[string][]int{}
	var ids []string
	for i, in := range inputs {
		if byMachine[in.Machine] == nil {
			ids = append(ids, in.Machine)
		}
		byMachine[in.Machine] = append(byMachine[in.Machine], i)
	}
	for _, id := range ids {
		s := StageSummary{Machine: id}
		st := setups[id]
		acc := NewAccumulator(st.cfg.Bands)
		var masked []ledger.Entry
		for _, i := range byMachine[id] {
			r := all[i]
			s.Files++
			if r.reused {
				s.Reuse++
			}
			masked = append(masked, r.masked...)
			if inputs[i].Split == machine.SplitTrain && inputs[i].Origin != machine.OriginSyntheticFault {
				if err := acc.AddMoments(inputs[i].Path, r.moments); err != nil {
					return nil, err
				}
				s.StatsInputs++
			}
		}
		s.Masked = len(masked)
		stats := acc.Stats(id)
		var buf bytes.Buffer
		if err := stats.WriteJSON(&buf); err != nil {
			return nil, err
		}
		if err := machine.WriteFileAtomic(filepath.Join(out, Dir, id, StatsFile), buf.Bytes()); err != nil {
			return nil, err
		}
		if err := ledger.Commit(filepath.Join(out, id), ledger.Features, ledger.Shard{}, masked); err != nil {
			return nil, err
		}
		if st.stack {
			if err := writeStacks(out, id, st.cfg.Bands, inputs, all, byMachine[id]); err != nil {
				return nil, err
			}
		}
		if st.pictures {
			if err := pictures(p, out, id, st, inputs, all, byMachine[id]); err != nil {
				return nil, err
			}
		}
		sums = append(sums, s)
	}
	return sums, writeIndex(filepath.Join(out, Dir, IndexFile), all)
}

type worker struct {
	st   machineSetup
	lm   *LogMel
	sz   *Summarizer
	env  *EnvelopePlan
	feat []float32
	x    []float64 // reused decode buffer
	spec []float64 // reused envelope spectrum
}

func newWorker(st machineSetup, fs float64) (*worker, error) {
	lm, err := NewLogMel(st.cfg, fs)
	if err != nil {
		return nil, err
	}
	sz, err := NewSummarizer(st.cfg)
	if err != nil {
		return nil, err
	}
	return &worker{st: st, lm: lm, sz: sz}, nil
}

func npyBytes(data []float32, shape ...int) ([]byte, string, error) {
	var buf bytes.Buffer
	buf.Grow(4*len(data) + 128)
	if err := WriteNPY(&buf, data, shape...); err != nil {
		return nil, "", err
	}
	s := sha256.Sum256(buf.Bytes())
	return buf.Bytes(), hex.EncodeToString(s[:]), nil
}

func (w *worker) do(p *machine.Plant, out string, in Input, prev *indexRow) fileResult {
	res := fileResult{row: indexRow{in: in, npy: featurePath(in.Path, ""), env: featurePath(in.Path, ".envelope"), bands: w.st.cfg.Bands}}
	fail := func(err error) fileResult {
		res.err = fmt.Errorf("features: %s: %w", in.Path, err)
		return res
	}
	f, err := wavio.Open(filepath.Join(out, filepath.FromSlash(in.Path)))
	if err != nil {
		return fail(err)
	}
	rate := f.Format().SampleRate
	fs := float64(rate)
	x, err := readMono(f, w.x)
	f.Close()
	if err != nil {
		return fail(err)
	}
	w.x = x
	feat, frames := w.lm.Compute(nil, x)
	res.feat, res.frames = feat, frames
	res.row.frames = frames
	res.moments = ClipMoments(Moments{}, feat, frames, w.st.cfg.Bands)
	res.row.sum = w.sz.Summarize(x, fs)
	b, sum, err := npyBytes(feat, frames, w.st.cfg.Bands)
	if err != nil {
		return fail(err)
	}
	res.row.npySHA = sum
	if prev != nil && prev.npySHA == sum && prev.in.SHA256 == in.SHA256 && fileHash(filepath.Join(out, filepath.FromSlash(res.row.npy))) == sum {
		res.reused = true
	} else if err := machine.WriteFileAtomic(filepath.Join(out, filepath.FromSlash(res.row.npy)), b); err != nil {
		return fail(err)
	}
	// envelope spectrum, the bearing practitioner's view
	ep := w.env
	if ep == nil {
		ep = NewEnvelopePlan(len(x))
		w.env = ep
	}
	ep.Reset(len(x))
	spec, binHz := ep.Spectrum(w.spec, x, fs, w.st.envLo, w.st.envHi)
	w.spec = spec
	keep := int(w.st.envMax/binHz) + 1
	if keep > len(spec) {
		keep = len(spec)
	}
	e32 := make([]float32, keep)
	for i := range e32 {
		e32[i] = float32(spec[i])
	}
	res.row.envBinHz = binHz
	eb, _, err := npyBytes(e32, keep)
	if err != nil {
		return fail(err)
	}
	if err := machine.WriteFileAtomic(filepath.Join(out, filepath.FromSlash(res.row.env)), eb); err != nil {
		return fail(err)
	}
	// masked copies: training clips only, never evaluation features
	if in.Split == machine.SplitTrain {
		for k := 0; k < w.st.copies; k++ {
			seed := maskSeed(p.Seed, in, k)
			rng := rand.New(rand.NewPCG(seed, seed^0x9e3779b97f4a7c15))
			mf := append([]float32(nil), feat...)
			rec := w.st.masks.Apply(mf, frames, w.st.cfg.Bands, rng)
			mpath := featurePath(in.Path, fmt.Sprintf(".mask%02d", k))
			mb, msum, err := npyBytes(mf, frames, w.st.cfg.Bands)
			if err != nil {
				return fail(err)
			}
			if err := machine.WriteFileAtomic(filepath.Join(out, filepath.FromSlash(mpath)), mb); err != nil {
				return fail(err)
			}
			params := map[string]float64{"f": float64(w.st.masks.F), "m_f": float64(w.st.masks.MF), "t": float64(w.st.masks.T),
				"p": w.st.masks.P, "m_t": float64(w.st.masks.MT), "value": float64(rec.Value), "fraction": rec.Fraction}
			for i, sp := range rec.Freq {
				params[fmt.Sprintf("freq%d_start", i)] = float64(sp.Start)
				params[fmt.Sprintf("freq%d_width", i)] = float64(sp.Width)
			}
			for i, sp := range rec.Time {
				params[fmt.Sprintf("time%d_start", i)] = float64(sp.Start)
				params[fmt.Sprintf("time%d_width", i)] = float64(sp.Width)
			}
			res.masked = append(res.masked, ledger.Entry{
				Kind: ledger.KindOutput, Stage: ledger.Features, Path: mpath, SHA256: msum,
				Source: in.Source, SourceSHA256: in.SourceSHA256, Clip: in.Clip, Machine: in.Machine,
				Condition: in.Condition, Origin: machine.OriginAugmented, Label: in.Label, Group: in.Group,
				Variant: k, Seed: seed, SampleRate: rate, Speed: 1, Scale: 1,
				Steps: []ledger.StepRecord{{Kind: "mask", Params: params, Text: map[string]string{"input": in.Path, "features": res.row.npy}}},
				Tool:  machine.ToolVersion,
			})
		}
	}
	return res
}

func maskSeed(plantSeed uint64, in Input, k int) uint64 {
	h := sha256.New()
	var b [8]byte
	binary.LittleEndian.PutUint64(b[:], plantSeed)
	h.Write(b[:])
	fmt.Fprintf(h, "\x00mask\x00%s\x00%s\x00%d", in.Path, in.SHA256, k)
	return binary.LittleEndian.Uint64(h.Sum(nil))
}

func fileHash(p string) string {
	s, err := machine.HashFile(p)
	if err != nil {
		return ""
	}
	return s
}

var indexHeader = []string{"path", "audio", "audio_sha256", "features_sha256", "machine", "condition", "split", "origin", "label",
	"frames", "bands", "envelope", "envelope_bin_hz", "rms_dbfs", "peak_dbfs", "crest_db", "kurtosis", "centroid_hz", "flatness_db"}

func writeIndex(file string, all []fileResult) error {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Write(indexHeader)
	f := func(x float64) string { return strconv.FormatFloat(x, 'g', 8, 64) }
	for _, r := range all {
		ro := r.row
		w.Write([]string{ro.npy, ro.in.Path, ro.in.SHA256, ro.npySHA, ro.in.Machine, ro.in.Condition, string(ro.in.Split), string(ro.in.Origin), string(ro.in.Label),
			strconv.Itoa(ro.frames), strconv.Itoa(ro.bands), ro.env, f(ro.envBinHz), f(finite(ro.sum.RMSdBFS)), f(finite(ro.sum.PeakdBFS)),
			f(finite(ro.sum.CrestDB)), f(finite(ro.sum.Kurtosis)), f(finite(ro.sum.CentroidHz)), f(finite(ro.sum.FlatnessDB))})
	}
	w.Flush()
	if err := w.Error(); err != nil {
		return err
	}
	return machine.WriteFileAtomic(file, buf.Bytes())
}

func finite(x float64) float64 {
	if math.IsInf(x, -1) || math.IsNaN(x) {
		return -400
	}
	return x
}

func readIndex(file string) map[string]*indexRow {
	out := map[string]*indexRow{}
	f, err := os.Open(file)
	if err != nil {
		return out
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil || len(recs) == 0 {
		return out
	}
	col := map[string]int{}
	for i, h := range recs[0] {
		col[h] = i
	}
	for _, r := range recs[1:] {
		if len(r) != len(recs[0]) {
			continue
		}
		out[r[col["audio"]]] = &indexRow{in: Input{Path: r[col["audio"]], SHA256: r[col["audio_sha256"]]}, npySHA: r[col["features_sha256"]]}
	}
	return out
}

// writeStacks streams each split's feature arrays, read back from their
// .npy files in index order, into one (rows, bands) array per split.
func writeStacks(out, id string, bands int, inputs []Input, all []fileResult, idx []int) error {
	for _, sp := range []machine.Split{machine.SplitTrain, machine.SplitEval, machine.SplitTest} {
		var files []string
		for _, i := range idx {
			if inputs[i].Split == sp {
				files = append(files, filepath.Join(out, filepath.FromSlash(all[i].row.npy)))
			}
		}
		if len(files) == 0 {
			continue
		}
		sf, err := CreateStackFile(filepath.Join(out, Dir, id, "stack-"+string(sp)+".npy"), bands)
		if err != nil {
			return err
		}
		for _, f := range files {
			data, err := readNPY32(f, bands)
			if err == nil {
				err = sf.Write(data)
			}
			if err != nil {
				sf.Abort()
				return fmt.Errorf("features: stack %s: %w", f, err)
			}
		}
		if err := sf.Close(); err != nil {
			return err
		}
	}
	return nil
}

// readNPY32 reads a little-endian float32 .npy file written by WriteNPY
// whose last dimension is cols.
func readNPY32(path string, cols int) ([]float32, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	if len(b) < 10 || string(b[1:6]) != "NUMPY" {
		return nil, fmt.Errorf("not a .npy file")
	}
	start := 10 + int(binary.LittleEndian.Uint16(b[8:10]))
	if start > len(b) || (len(b)-start)%4 != 0 || ((len(b)-start)/4)%cols != 0 {
		return nil, fmt.Errorf("unexpected .npy layout")
	}
	out := make([]float32, (len(b)-start)/4)
	for i := range out {
		out[i] = math.Float32frombits(binary.LittleEndian.Uint32(b[start+4*i:]))
	}
	return out, nil
}

// faultRank orders fault files for the envelope picture: bearing defects,
// whose lines the envelope spectrum is made to show, before other kinds.
func faultRank(p string) int {
	for i, k := range []string{"-outer-race-", "-inner-race-", "-ball-", "-cage-", "-gear-tooth-", "-impact-"} {
		if strings.Contains(path.Base(p), k) {
			return i
		}
	}
	return 9
}

// pictures draws, for one machine, a recorded clip next to one of its
// augmented variants, and the envelope spectrum of a fault cue with its
// defect lines marked.
func pictures(p *machine.Plant, out, id string, st machineSetup, inputs []Input, all []fileResult, idx []int) error {
	lm, err := NewLogMel(st.cfg, float64(p.SampleRate))
	if err != nil {
		return err
	}
	var rec, aug, flt = -1, -1, -1
	for _, i := range idx {
		in := inputs[i]
		switch {
		case rec < 0 && in.Origin == machine.OriginRecorded && in.Split == machine.SplitTrain && in.Label == machine.LabelNormal:
			rec = i
		}
	}
	if rec >= 0 {
		for _, i := range idx {
			in := inputs[i]
			if aug < 0 && in.Origin == machine.OriginAugmented && in.Source == inputs[rec].Source && in.Clip == inputs[rec].Clip {
				aug = i
			}
			if in.Origin == machine.OriginSyntheticFault && (flt < 0 || faultRank(in.Path) < faultRank(inputs[flt].Path)) {
				flt = i
			}
		}
	}
	dir := filepath.Join(out, Dir, "pictures")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	if rec >= 0 {
		panels := []Panel{lm.Panel("recorded: "+path.Base(inputs[rec].Path), all[rec].feat, all[rec].frames)}
		if aug >= 0 {
			panels = append(panels, lm.Panel("augmented: "+path.Base(inputs[aug].Path), all[aug].feat, all[aug].frames))
		}
		if err := SpectrogramPNG(filepath.Join(dir, id+"-spectrogram.png"), panels); err != nil {
			return err
		}
	}
	if flt >= 0 {
		ents, err := ledger.ReadFile(ledger.Path(out, id))
		if err != nil {
			return err
		}
		for _, e := range ents {
			if e.Path != inputs[flt].Path || e.Fault == nil {
				continue
			}
			a, err := wavio.ReadFile(filepath.Join(out, filepath.FromSlash(e.Path)))
			if err != nil {
				return err
			}
			x := a.Mono(nil)
			lo, hi := st.envLo, st.envHi
			if e.Fault.ResonanceHz > 0 {
				lo, hi = 0.7*e.Fault.ResonanceHz, math.Min(1.3*e.Fault.ResonanceHz, 0.49*float64(a.Format.SampleRate))
			}
			spec, binHz := EnvelopeSpectrum(nil, x, float64(a.Format.SampleRate), lo, hi)
			lines := map[string]float64{}
			for k, v := range e.Fault.Frequencies {
				if k != "defect" && v > 0 && v < st.envMax {
					lines[k] = v
				}
			}
			keep := int(st.envMax/binHz) + 1
			if keep > len(spec) {
				keep = len(spec)
			}
			if len(lines) > 0 {
				if err := EnvelopePNG(filepath.Join(dir, id+"-envelope-"+e.Fault.Kind+".png"), spec[:keep], binHz, lines); err != nil {
					return err
				}
			}
			break
		}
	}
	return nil
}
