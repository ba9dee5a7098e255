package online

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"math"

	"thrum/augment"
	"thrum/features"
	"thrum/machine/ledger"
	"thrum/machine/pool"
)

// Forms of a batch.
const (
	// FormWave: (items, clip frames) float32 waveforms at the working
	// rate.
	FormWave = "wave"
	// FormLogMel: (items, frames, bands) float32 log-mel features of the
	// served waveforms, with the machine's [features] settings (the
	// features stage's shape for the machine).
	FormLogMel = "logmel"
)

// Request names one batch.
type Request struct {
	Machine string
	Epoch   int
	Batch   int
	Size    int
	Form    string
}

// Batch is a rendered batch: the .npy bytes and their description.
type Batch struct {
	Body []byte
	Desc *Description
}

// Description describes a batch: what each item is and how it was drawn.
type Description struct {
	Machine        string `json:"machine"`
	Epoch          int    `json:"epoch"`
	Batch          int    `json:"batch"`
	Size           int    `json:"size"`
	Form           string `json:"form"`
	DType          string `json:"dtype"`
	Shape          []int  `json:"shape"`
	SampleRate     int    `json:"sample_rate"`
	EpochClips     int    `json:"epoch_clips"`
	EpochBatches   int    `json:"epoch_batches"`
	PlantSHA256    string `json:"plant_sha256"`
	TrainingSHA256 string `json:"training_sha256"`
	// SHA256 is the batch digest: the sha256 of the items' digests in
	// order (as recorded in OUT/serve/<machine>.jsonl).
	SHA256             string     `json:"sha256"`
	RejectionsReplaced int        `json:"rejections_replaced"`
	Fallbacks          int        `json:"fallbacks"`
	Items              []ItemDesc `json:"items"`
}

// ItemDesc describes one item of a batch.
type ItemDesc struct {
	Item int `json:"item"`
	// Position is the item's place in the epoch's order; ID
	// ("<machine>/e<epoch>/p<position>") names it for Replay.
	Position     int    `json:"position"`
	ID           string `json:"id"`
	Source       string `json:"source"`
	SourceSHA256 string `json:"source_sha256"`
	Condition    string `json:"condition"`
	Group        string `json:"group"`
	Clip         int    `json:"clip"`
	// ClipStart and ClipFrames are the source span read (a speed change
	// reads ratio × clip length).
	ClipStart   int64               `json:"clip_start"`
	ClipFrames  int64               `json:"clip_frames"`
	Seed        uint64              `json:"seed"`
	Attempt     int                 `json:"attempt"`
	Steps       []ledger.StepRecord `json:"steps"`
	Speed       float64             `json:"speed"`
	Backgrounds []string            `json:"backgrounds,omitempty"`
	Scale       float64             `json:"scale"`
	Draw        string              `json:"draw,omitempty"`
	Rejected    []Rejection         `json:"rejected,omitempty"`
	Fallback    string              `json:"fallback,omitempty"`
	SHA256      string              `json:"sha256"`
}

// Rejection is a draw the credibility guard refused, replaced by the next
// attempt.
type Rejection struct {
	Seed   uint64 `json:"seed"`
	Reason string `json:"reason"`
}

// itemID names a served item.
func itemID(machineID string, epoch, position int) string {
	return fmt.Sprintf("%s/e%d/p%d", machineID, epoch, position)
}

// epochBatches is the number of batches of size n in an epoch of clips.
func epochBatches(clips, n int) int { return (clips + n - 1) / n }

// compute renders a batch. Every item's seed follows from the request
// alone (see the package doc), so the bytes do not depend on the worker
// count or on other requests.
func (s *Server) compute(ctx context.Context, req Request) (*Batch, error) {
	ms := s.machines[req.Machine]
	n := len(ms.items)
	lo := req.Batch * req.Size
	cnt := min(req.Size, n-lo)
	order := ms.order(s.plant.Seed, req.Epoch)
	per := ms.frames
	shape := []int{cnt, ms.frames}
	if req.Form == FormLogMel {
		per = ms.melFrames * ms.lmCfg.Bands
		shape = []int{cnt, ms.melFrames, ms.lmCfg.Bands}
	}
	data := make([]float32, cnt*per)
	items := make([]ItemDesc, cnt)
	sums := make([][32]byte, cnt)
	err := pool.Each(ctx, cnt, s.opt.Workers, func(ctx context.Context, _, i int) error {
		select {
		case s.cpu <- struct{}{}:
		case <-ctx.Done():
			return ctx.Err()
		}
		defer func() { <-s.cpu }()
		if err := ctx.Err(); err != nil {
			return err
		}
		d, sum, err := s.renderItem(ms, req, lo+i, ms.items[order[lo+i]], data[i*per:(i+1)*per:(i+1)*per])
		if err != nil {
			return err
		}
		d.Item = i
		items[i], sums[i] = d, sum
		return nil
	})
	if err != nil {
		return nil, err
	}
	desc := &Description{Machine: req.Machine, Epoch: req.Epoch, Batch: req.Batch, Size: req.Size, Form: req.Form,
		DType: "<f4", Shape: shape, SampleRate: s.plant.SampleRate, EpochClips: n, EpochBatches: epochBatches(n, req.Size),
		PlantSHA256: s.plantSHA, TrainingSHA256: ms.trainingSHA, Items: items}
	desc.SHA256 = batchDigest(sums)
	for _, d := range items {
		desc.RejectionsReplaced += len(d.Rejected)
		if d.Fallback != "" {
			desc.Fallbacks++
		}
	}
	var buf bytes.Buffer
	buf.Grow(4*len(data) + 128)
	if err := features.WriteNPY(&buf, data, shape...); err != nil {
		return nil, err
	}
	return &Batch{Body: buf.Bytes(), Desc: desc}, nil
}

// batchDigest is the sha256 of the items' digests in order.
func batchDigest(sums [][32]byte) string {
	h := sha256.New()
	for _, s := range sums {
		h.Write(s[:])
	}
	return hex.EncodeToString(h.Sum(nil))
}

// renderItem renders the clip at position pos of the epoch into dst (a
// waveform, or its log-mel features) and returns its description and the
// digest of its waveform.
func (s *Server) renderItem(ms *machineState, req Request, pos int, it item, dst []float32) (ItemDesc, [32]byte, error) {
	d := ItemDesc{Position: pos, ID: itemID(ms.m.ID, req.Epoch, pos), Source: it.rec.Rel, SourceSHA256: it.rec.SHA256,
		Condition: it.rec.Condition, Group: s.plant.ClipGroup(it.rec, it.clip), Clip: it.clip.Index,
		ClipStart: it.clip.Start, ClipFrames: it.clip.Frames, Speed: 1, Scale: 1, Steps: []ledger.StepRecord{}}
	sc, _ := ms.scratch.Get().(*augment.Scratch)
	if sc == nil {
		sc = &augment.Scratch{}
	}
	defer ms.scratch.Put(sc)
	var y []float64
	for a := 0; a < MaxAttempts && y == nil; a++ {
		seed := itemSeed(s.plant.Seed, ms.m.ID, it, req.Epoch, a)
		out, ent, err := ms.rd.Render(sc, it.rec, it.clip, seed)
		if err != nil {
			return d, [32]byte{}, fmt.Errorf("online: %s: %w", d.ID, err)
		}
		if out == nil {
			d.Rejected = append(d.Rejected, Rejection{Seed: seed, Reason: ent.Reason})
			continue
		}
		y = out
		d.Seed, d.Attempt, d.Steps, d.Speed, d.Backgrounds, d.Scale, d.Draw = seed, a, ent.Steps, ent.Speed, ent.Backgrounds, ent.Scale, ent.Draw
		d.ClipStart, d.ClipFrames = ent.ClipStart, ent.ClipFrames
		if d.Steps == nil {
			d.Steps = []ledger.StepRecord{}
		}
	}
	if y == nil {
		x, err := ms.rd.Clip(sc, it.rec, it.clip)
		if err != nil {
			return d, [32]byte{}, fmt.Errorf("online: %s: %w", d.ID, err)
		}
		y = x
		d.Fallback = "recorded"
	}
	if len(y) != ms.frames {
		return d, [32]byte{}, fmt.Errorf("online: %s: %d samples, the machine's clips have %d", d.ID, len(y), ms.frames)
	}
	// the waveform as served (float32), and its digest
	wave := dst
	if req.Form == FormLogMel {
		wave = make([]float32, len(y))
	}
	b := make([]byte, 0, 4*len(y))
	for i, v := range y {
		f := float32(v)
		wave[i] = f
		b = binary.LittleEndian.AppendUint32(b, math.Float32bits(f))
	}
	sum := sha256.Sum256(b)
	d.SHA256 = hex.EncodeToString(sum[:])
	if req.Form == FormLogMel {
		// log-mel of the served waveform, so a client can recompute it
		x := make([]float64, len(wave))
		for i, v := range wave {
			x[i] = float64(v)
		}
		lm, _ := ms.logmels.Get().(*features.LogMel)
		if lm == nil {
			var err error
			if lm, err = features.NewLogMel(ms.lmCfg, float64(s.plant.SampleRate)); err != nil {
				return d, sum, err
			}
		}
		lm.Compute(dst[:0], x)
		ms.logmels.Put(lm)
	}
	return d, sum, nil
}
