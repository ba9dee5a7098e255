// The per-clip work of the features stage: log-mel, envelope spectrum and
// masked copies of one clip, written under OUT/features/.

package features

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"math/rand/v2"
	"os"
	"path"
	"path/filepath"
	"strings"

	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/wavio"
)

// featurePath maps an audio path to its feature path under Dir.
func featurePath(audio, suffix string) string {
	return path.Join(Dir, strings.TrimSuffix(audio, path.Ext(audio))+suffix+".npy")
}

type fileResult struct {
	row     indexRow
	moments Moments
	feat    []float32
	frames  int
	masked  []ledger.Entry
	reused  bool
	err     error
}

type worker struct {
	st   machineSetup
	lm   *LogMel
	sz   *Summarizer
	env  *EnvelopePlan
	feat []float32
	x    []float64 // reused decode buffer
	spec []float64 // reused envelope spectrum
	// power is the log-mel's power spectra summed over a clip's frames,
	// for the clip summary
	power []float64
	// batch makes the stage's clip files durable together
	batch *machine.Batch
	buf   bytes.Buffer // reused encoding buffer (npyBytes)
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

func (w *worker) do(p *machine.Plant, out string, in Input, prev *indexRow) fileResult {
	res := fileResult{row: indexRow{in: in, npy: featurePath(in.Path, ""), env: featurePath(in.Path, ".envelope"), bands: w.st.cfg.Bands,
		settings: w.st.settings}}
	fail := func(err error) fileResult {
		res.err = fmt.Errorf("features: %s: %w", in.Path, err)
		return res
	}
	var feat []float32
	var frames, rate int
	if prev != nil && w.reusable(out, in, prev, &res) {
		feat, frames, rate = res.feat, res.frames, res.row.rate
	} else {
		f, err := wavio.Open(filepath.Join(out, filepath.FromSlash(in.Path)))
		if err != nil {
			return fail(err)
		}
		rate = f.Format().SampleRate
		res.row.rate = rate
		fs := float64(rate)
		x, err := readMono(f, w.x)
		f.Close()
		if err != nil {
			return fail(err)
		}
		w.x = x
		if len(w.power) != w.lm.Bins() {
			w.power = make([]float64, w.lm.Bins())
		}
		var power bool
		feat, frames, power = w.lm.ComputePower(nil, x, w.power)
		res.feat, res.frames = feat, frames
		res.row.frames = frames
		res.moments = ClipMoments(Moments{}, feat, frames, w.st.cfg.Bands)
		if power {
			// the log-mel's own power spectra: the same sums, no second STFT
			res.row.sum = w.sz.SummarizePower(x, fs, w.power, frames)
		} else {
			res.row.sum = w.sz.Summarize(x, fs)
		}
		b, sum, err := w.npyBytes(feat, frames, w.st.cfg.Bands)
		if err != nil {
			return fail(err)
		}
		res.row.npySHA = sum
		if err := writeIfChangedIn(w.batch, filepath.Join(out, filepath.FromSlash(res.row.npy)), b); err != nil {
			return fail(err)
		}
		// envelope spectrum, the bearing practitioner's view
		ep := w.env
		if ep == nil {
			ep = NewEnvelopePlan(len(x))
			w.env = ep
		}
		ep.Reset(len(x))
		spec, binHz := ep.BasebandSpectrum(w.spec, x, fs, w.st.envLo, w.st.envHi, w.st.envMax)
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
		eb, esum, err := w.npyBytes(e32, keep)
		if err != nil {
			return fail(err)
		}
		res.row.envSHA = esum
		if err := writeIfChangedIn(w.batch, filepath.Join(out, filepath.FromSlash(res.row.env)), eb); err != nil {
			return fail(err)
		}
	}
	// masked copies: training clips only, never evaluation features. They
	// are cheap (a copy and a few spans), so a reused clip redraws them and
	// rewrites only a file whose bytes differ.
	if in.Split == machine.SplitTrain {
		for k := 0; k < w.st.copies; k++ {
			seed := maskSeed(p.Seed, in, k)
			rng := rand.New(rand.NewPCG(seed, seed^0x9e3779b97f4a7c15))
			mf := append([]float32(nil), feat...)
			rec := w.st.masks.Apply(mf, frames, w.st.cfg.Bands, rng)
			mpath := featurePath(in.Path, fmt.Sprintf(".mask%02d", k))
			mb, msum, err := w.npyBytes(mf, frames, w.st.cfg.Bands)
			if err != nil {
				return fail(err)
			}
			if err := writeIfChangedIn(w.batch, filepath.Join(out, filepath.FromSlash(mpath)), mb); err != nil {
				return fail(err)
			}
			res.row.masks = append(res.row.masks, maskRow{path: mpath, sha: msum, rec: rec})
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

// reusable reports whether the features of a clip from a previous run still
// hold: same audio hash, same settings hash, and the features and envelope
// files on disk still hash as recorded. It then fills res from the previous
// row and the features file (no audio is read, no spectrum computed).
func (w *worker) reusable(out string, in Input, prev *indexRow, res *fileResult) bool {
	if prev.in.SHA256 != in.SHA256 || prev.settings != w.st.settings || prev.npy != res.row.npy || prev.env != res.row.env ||
		prev.npySHA == "" || prev.envSHA == "" {
		return false
	}
	b, err := os.ReadFile(filepath.Join(out, filepath.FromSlash(res.row.npy)))
	if err != nil {
		return false
	}
	if s := sha256.Sum256(b); hex.EncodeToString(s[:]) != prev.npySHA {
		return false
	}
	if fileHash(filepath.Join(out, filepath.FromSlash(res.row.env))) != prev.envSHA {
		return false
	}
	feat, err := npyFloat32(b, w.st.cfg.Bands)
	if err != nil {
		return false
	}
	res.feat, res.frames = feat, len(feat)/w.st.cfg.Bands
	res.moments = ClipMoments(Moments{}, feat, res.frames, w.st.cfg.Bands)
	res.reused = true
	res.row.frames = res.frames
	res.row.npySHA, res.row.envSHA = prev.npySHA, prev.envSHA
	res.row.envBinHz, res.row.sum, res.row.rate = prev.envBinHz, prev.sum, prev.rate
	return true
}

// writeIfChanged writes b to file atomically unless the file already holds
// exactly b: an unchanged output keeps its inode and modification time.
func writeIfChanged(file string, b []byte) error { return writeIfChangedIn(nil, file, b) }

// writeIfChangedIn is writeIfChanged through a batch: the file is in place
// once the batch flushes (a nil batch writes at once).
func writeIfChangedIn(batch *machine.Batch, file string, b []byte) error {
	if old, err := os.ReadFile(file); err == nil && bytes.Equal(old, b) {
		return nil
	}
	return batch.Write(file, b, nil)
}

// npyBytes encodes data as .npy in the worker's buffer and returns the
// bytes with their sha256; the bytes hold until its next call (each file
// is written before the next is encoded).
func (w *worker) npyBytes(data []float32, shape ...int) ([]byte, string, error) {
	w.buf.Reset()
	w.buf.Grow(4*len(data) + 128)
	if err := WriteNPY(&w.buf, data, shape...); err != nil {
		return nil, "", err
	}
	s := sha256.Sum256(w.buf.Bytes())
	return w.buf.Bytes(), hex.EncodeToString(s[:]), nil
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
