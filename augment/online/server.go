package online

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"path/filepath"
	"sort"
	"sync"

	"thrum/augment"
	"thrum/features"
	"thrum/machine"
	"thrum/machine/ledger"
	"thrum/machine/pool"
	"thrum/machine/wavio"
	"thrum/split"
)

// Limits and defaults of Options.
const (
	DefaultMaxBatch    = 64
	MaxMaxBatch        = 1024
	DefaultMaxRequests = 4
	DefaultAhead       = 1
	// MaxAttempts is the number of draws an item gets before it is served
	// as recorded.
	MaxAttempts = 8
	// MaxEpoch is the largest epoch served.
	MaxEpoch = 1 << 30
)

// Options configure a Server.
type Options struct {
	// Out is the output root: the ledgers and OUT/splits are read, the
	// served record is written under OUT/serve.
	Out string
	// Workers is the number of variants rendered at once over all
	// requests (pool.Size(Workers)).
	Workers int
	// MaxBatch is the largest batch size a request may ask for (0:
	// DefaultMaxBatch; at most MaxMaxBatch).
	MaxBatch int
	// MaxRequests is the number of batch requests handled at once; more
	// are refused with 429 (0: DefaultMaxRequests).
	MaxRequests int
	// Ahead is the number of batches prepared ahead of each batch served
	// (the next ones of its epoch); at most Ahead·MaxRequests prepared
	// batches wait at any time. 0: DefaultAhead; negative: none.
	Ahead int
	// NoRecord leaves the served record unwritten (benchmarks).
	NoRecord bool
}

func (o Options) resolved() (Options, error) {
	if o.Out == "" {
		return o, errors.New("online: no output folder")
	}
	if o.MaxBatch == 0 {
		o.MaxBatch = DefaultMaxBatch
	}
	if o.MaxBatch < 1 || o.MaxBatch > MaxMaxBatch {
		return o, fmt.Errorf("online: max batch %d outside 1 … %d", o.MaxBatch, MaxMaxBatch)
	}
	if o.MaxRequests == 0 {
		o.MaxRequests = DefaultMaxRequests
	}
	if o.MaxRequests < 1 || o.MaxRequests > 256 {
		return o, fmt.Errorf("online: max requests %d outside 1 … 256", o.MaxRequests)
	}
	switch {
	case o.Ahead == 0:
		o.Ahead = DefaultAhead
	case o.Ahead < 0:
		o.Ahead = 0
	case o.Ahead > 16:
		return o, fmt.Errorf("online: ahead %d outside 0 … 16", o.Ahead)
	}
	return o, nil
}

// Server hands out batches of variants of training clips. Its methods are
// safe for concurrent use.
type Server struct {
	plant    *machine.Plant
	plantSHA string
	opt      Options
	machines map[string]*machineState
	ids      []string // servable machines, sorted
	cpu      chan struct{}
	sem      chan struct{}

	base   context.Context
	cancel context.CancelFunc
	cache  *cache
	record *recorder
}

// machineState is one servable machine.
type machineState struct {
	m           *machine.Machine
	rd          *augment.Renderer
	items       []item
	trainingSHA string
	frames      int
	lmCfg       features.Config
	melFrames   int
	scratch     sync.Pool // *augment.Scratch
	logmels     sync.Pool // *features.LogMel
	orderMu     sync.Mutex
	orders      map[int][]int // recent epochs' orders
	orderAge    []int
}

// item is one training clip.
type item struct {
	rec  *machine.Recording
	clip machine.Clip
}

// New prepares a server for a scanned plant whose output root has been
// split: each machine's training clips are those the training policy gives
// variants and OUT/splits/lists.csv puts in train. A training clip of the
// policy that the lists do not put in train (the plant or its recordings
// changed since the split) is an error: rerun the split first.
func New(inv *machine.Inventory, opt Options) (*Server, error) {
	opt, err := opt.resolved()
	if err != nil {
		return nil, err
	}
	p := inv.Plant
	plantSHA, err := machine.HashFile(p.Path)
	if err != nil {
		return nil, fmt.Errorf("online: plant file: %w", err)
	}
	rows, _, err := split.ReadSplits(opt.Out)
	if err != nil {
		return nil, fmt.Errorf("online: %w (serve needs a split output root: run thrum split or thrum run first)", err)
	}
	trainPath := map[string]bool{}
	for _, r := range rows {
		if r.Split == machine.SplitTrain && r.Origin == machine.OriginRecorded {
			trainPath[r.Path] = true
		}
	}
	policy := split.TrainingPolicy(inv)
	s := &Server{plant: p, plantSHA: plantSHA, opt: opt, machines: map[string]*machineState{}}
	byMachine := map[string][]*machine.Recording{}
	for _, r := range inv.Recordings {
		byMachine[r.Machine] = append(byMachine[r.Machine], r)
	}
	for i := range p.Machines {
		m := &p.Machines[i]
		recs := byMachine[m.ID]
		if len(recs) == 0 {
			continue
		}
		rd, err := augment.NewRenderer(p, m.ID, augment.Options{Out: opt.Out, Policy: policy, Encoding: wavio.Float32})
		if err != nil {
			return nil, err
		}
		// the recorded clips the split put in train, by (source, sha, clip)
		ents, err := ledger.ReadFile(filepath.Join(opt.Out, m.ID, ledger.FileName))
		if err != nil {
			return nil, fmt.Errorf("online: machine %s: %w (run thrum run first)", m.ID, err)
		}
		inTrain := map[string]bool{}
		for _, e := range ents {
			if e.Stage == ledger.Expand && e.Kind == ledger.KindOutput && e.Origin == machine.OriginRecorded && trainPath[e.Path] {
				inTrain[clipKey(e.Source, e.SourceSHA256, e.Clip)] = true
			}
		}
		ms := &machineState{m: m, rd: rd, orders: map[int][]int{}}
		missing := 0
		for _, r := range recs {
			for _, c := range r.Clips {
				if !rd.Trains(r, c) {
					continue
				}
				if !inTrain[clipKey(r.Rel, r.SHA256, c.Index)] {
					missing++
					continue
				}
				ms.items = append(ms.items, item{rec: r, clip: c})
			}
		}
		if missing > 0 {
			return nil, fmt.Errorf("online: machine %s: %d training clip(s) of the plant are not train in %s (the plant or its recordings changed since the split): rerun thrum run",
				m.ID, missing, filepath.Join(opt.Out, split.SplitsDir, split.ListsFile))
		}
		if len(ms.items) == 0 {
			continue
		}
		sort.Slice(ms.items, func(a, b int) bool {
			x, y := ms.items[a], ms.items[b]
			if x.rec.Rel != y.rec.Rel {
				return x.rec.Rel < y.rec.Rel
			}
			return x.clip.Index < y.clip.Index
		})
		h := sha256.New()
		for _, it := range ms.items {
			fmt.Fprintf(h, "%s\x00%s\x00%d\n", it.rec.Rel, it.rec.SHA256, it.clip.Index)
			if ms.frames == 0 {
				ms.frames = int(it.clip.Frames)
			} else if int(it.clip.Frames) != ms.frames {
				return nil, fmt.Errorf("online: machine %s: clips of %d and %d frames: a batch needs one clip length", m.ID, ms.frames, it.clip.Frames)
			}
		}
		ms.trainingSHA = hex.EncodeToString(h.Sum(nil))
		cfg, err := features.MachineConfig(p, m)
		if err != nil {
			return nil, err
		}
		ms.lmCfg = cfg
		lm, err := features.NewLogMel(cfg, float64(p.SampleRate))
		if err != nil {
			return nil, fmt.Errorf("online: machine %s: %w", m.ID, err)
		}
		ms.melFrames = lm.Frames(ms.frames)
		ms.logmels.Put(lm)
		s.machines[m.ID] = ms
		s.ids = append(s.ids, m.ID)
	}
	sort.Strings(s.ids)
	if len(s.ids) == 0 {
		return nil, errors.New("online: no machine has training clips with a recipe: nothing to serve")
	}
	s.cpu = make(chan struct{}, pool.Size(opt.Workers))
	s.sem = make(chan struct{}, opt.MaxRequests)
	s.base, s.cancel = context.WithCancel(context.Background())
	s.cache = newCache(opt.Ahead * opt.MaxRequests)
	if !opt.NoRecord {
		s.record, err = openRecorder(opt.Out, s)
		if err != nil {
			return nil, err
		}
	}
	return s, nil
}

func clipKey(source, sha string, clip int) string {
	return fmt.Sprintf("%s\x00%s\x00%d", source, sha, clip)
}

// Close stops the batches being prepared ahead and closes the served
// record. Requests still running see their context cancelled.
func (s *Server) Close() error {
	s.cancel()
	s.cache.wait()
	if s.record != nil {
		return s.record.close()
	}
	return nil
}

// Machines returns the ids of the machines served, sorted.
func (s *Server) Machines() []string { return append([]string(nil), s.ids...) }

// MachineInfo describes what a machine serves.
type MachineInfo struct {
	Machine        string `json:"machine"`
	TrainingClips  int    `json:"training_clips"`
	TrainingSHA256 string `json:"training_sha256"`
	ClipFrames     int    `json:"clip_frames"`
	// LogMelFrames × LogMelBands is one item's log-mel shape.
	LogMelFrames int `json:"logmel_frames"`
	LogMelBands  int `json:"logmel_bands"`
	LogMelHop    int `json:"logmel_hop"`
	LogMelNFFT   int `json:"logmel_n_fft"`
}

// Info describes the server: machines, sample rate and limits.
type Info struct {
	Tool        string        `json:"tool"`
	PlantSHA256 string        `json:"plant_sha256"`
	SampleRate  int           `json:"sample_rate"`
	MaxBatch    int           `json:"max_batch"`
	MaxRequests int           `json:"max_requests"`
	Forms       []string      `json:"forms"`
	Machines    []MachineInfo `json:"machines"`
}

// Info returns the server's description.
func (s *Server) Info() Info {
	in := Info{Tool: machine.ToolVersion, PlantSHA256: s.plantSHA, SampleRate: s.plant.SampleRate,
		MaxBatch: s.opt.MaxBatch, MaxRequests: s.opt.MaxRequests, Forms: []string{FormWave, FormLogMel}}
	for _, id := range s.ids {
		ms := s.machines[id]
		in.Machines = append(in.Machines, MachineInfo{Machine: id, TrainingClips: len(ms.items), TrainingSHA256: ms.trainingSHA,
			ClipFrames: ms.frames, LogMelFrames: ms.melFrames, LogMelBands: ms.lmCfg.Bands, LogMelHop: ms.lmCfg.Hop, LogMelNFFT: ms.lmCfg.NFFT})
	}
	return in
}

// orderSeed is the seed of an epoch's order.
func (ms *machineState) orderSeed(plantSeed uint64, epoch int) uint64 {
	return augment.VariantSeed(plantSeed, ms.m.ID, ms.trainingSHA, epoch, 0, "serve-order")
}

// order returns epoch's permutation of the training clips (a few recent
// epochs are kept).
func (ms *machineState) order(plantSeed uint64, epoch int) []int {
	ms.orderMu.Lock()
	defer ms.orderMu.Unlock()
	if o, ok := ms.orders[epoch]; ok {
		return o
	}
	o := augment.NewRand(ms.orderSeed(plantSeed, epoch)).Perm(len(ms.items))
	ms.orders[epoch] = o
	ms.orderAge = append(ms.orderAge, epoch)
	if len(ms.orderAge) > 4 {
		delete(ms.orders, ms.orderAge[0])
		ms.orderAge = ms.orderAge[1:]
	}
	return o
}

// itemSeed is the seed of attempt a of a clip in an epoch.
func itemSeed(plantSeed uint64, machineID string, it item, epoch, attempt int) uint64 {
	purpose := "serve"
	if attempt > 0 {
		purpose = fmt.Sprintf("serve-retry-%d", attempt)
	}
	return augment.VariantSeed(plantSeed, machineID, it.rec.SHA256, it.clip.Index, epoch, purpose)
}
