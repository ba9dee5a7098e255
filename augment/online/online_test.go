package online

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"net/http"
	"testing"

	"thrum/machine"
)

// TestDeterministic: a batch's bytes and description depend on the
// request alone, not on the worker count, the request order, or batches
// prepared ahead.
func TestDeterministic(t *testing.T) {
	type req struct{ epoch, batch int }
	reqs := []req{{0, 0}, {0, 1}, {1, 0}, {0, 2}}
	cases := []struct {
		name    string
		workers int
		ahead   int
		order   []int
	}{
		{"1 worker in order", 1, -1, []int{0, 1, 2, 3}},
		{"3 workers reversed", 3, -1, []int{3, 2, 1, 0}},
		{"2 workers ahead shuffled", 2, 2, []int{2, 0, 3, 1}},
	}
	var want [][]byte
	var wantDesc []string
	for ci, c := range cases {
		s, _ := newServer(t, Options{Workers: c.workers, Ahead: c.ahead})
		id := s.Machines()[0]
		got := make([][]byte, len(reqs))
		desc := make([]string, len(reqs))
		for _, k := range c.order {
			for _, form := range []string{FormWave, FormLogMel} {
				b, err := s.Batch(context.Background(), Request{Machine: id, Epoch: reqs[k].epoch, Batch: reqs[k].batch, Size: 3, Form: form})
				if err != nil {
					t.Fatal(err)
				}
				got[k] = append(got[k], b.Body...)
				if form == FormWave {
					desc[k] = b.Desc.SHA256
				}
			}
		}
		if ci == 0 {
			want, wantDesc = got, desc
			// distinct batches differ
			if bytes.Equal(got[0], got[1]) || bytes.Equal(got[0], got[2]) {
				t.Errorf("batches of different positions or epochs are identical")
			}
			continue
		}
		for k := range reqs {
			if !bytes.Equal(got[k], want[k]) || desc[k] != wantDesc[k] {
				t.Errorf("%s: epoch %d batch %d differs from %s", c.name, reqs[k].epoch, reqs[k].batch, cases[0].name)
			}
		}
	}
}

// TestTrainOnly: every clip served is a training clip of the split lists
// (the only clips with variants), each once per epoch; eval and test are
// refused.
func TestTrainOnly(t *testing.T) {
	s, inv := newServer(t, Options{Workers: 2})
	for _, id := range s.Machines() {
		ms := s.machines[id]
		seen := map[string]int{}
		nb := epochBatches(len(ms.items), 4)
		for b := 0; b < nb; b++ {
			bt, err := s.Batch(context.Background(), Request{Machine: id, Epoch: 1, Batch: b, Size: 4})
			if err != nil {
				t.Fatal(err)
			}
			for _, it := range bt.Desc.Items {
				seen[clipKey(it.Source, it.SourceSHA256, it.Clip)]++
			}
		}
		if len(seen) != len(ms.items) {
			t.Errorf("%s: epoch served %d distinct clips, has %d", id, len(seen), len(ms.items))
		}
		for k, n := range seen {
			if n != 1 {
				t.Errorf("%s: %q served %d times in one epoch", id, k, n)
			}
		}
	}
	// every served clip's recording is normal and of a condition that is
	// not held out, and its recorded clip is in train
	for _, r := range inv.Recordings {
		ms := s.machines[r.Machine]
		if ms == nil {
			continue
		}
		for _, it := range ms.items {
			if it.rec != r {
				continue
			}
			c := inv.Plant.Machine(r.Machine).Condition(r.Condition)
			if r.Label != machine.LabelNormal || c.HoldOut {
				t.Errorf("%s served: label %s, hold-out %v", r.Rel, r.Label, c.HoldOut)
			}
		}
	}
	for _, sp := range []string{"eval", "test"} {
		_, err := ParseRequest(map[string][]string{"epoch": {"0"}, "batch": {"0"}, "split": {sp}})
		var re *RequestError
		if !errors.As(err, &re) || re.Status != http.StatusForbidden {
			t.Errorf("split=%s: %v, want 403", sp, err)
		}
	}
}

// TestReplay: a served item regenerates from the record to the digest and
// the item hash the description gave.
func TestReplay(t *testing.T) {
	plant, _ := splitPlant(t)
	s, _ := newServer(t, Options{Workers: 2})
	id := s.Machines()[0]
	b, err := s.Batch(context.Background(), Request{Machine: id, Epoch: 2, Batch: 1, Size: 3, Form: FormLogMel})
	if err != nil {
		t.Fatal(err)
	}
	it := b.Desc.Items[1]
	// the description's item hash is the hash of the float32 waveform
	s.Close()
	res, err := Replay(context.Background(), scan(t, plant), Options{Out: s.opt.Out, Workers: 1}, it.ID)
	if err != nil {
		t.Fatal(err)
	}
	if !res.OK() || res.Item.SHA256 != it.SHA256 || res.Item.Seed != it.Seed {
		t.Errorf("replay %s: digest %s recorded %s, item %s/%d want %s/%d", it.ID, res.SHA256, res.Recorded, res.Item.SHA256, res.Item.Seed, it.SHA256, it.Seed)
	}
	// an item never served is not replayed
	if _, err := Replay(context.Background(), scan(t, plant), Options{Out: s.opt.Out}, itemID(id, 2, 0)); err == nil {
		t.Errorf("replay of an item never served: no error")
	}
	wave, err := s.compute(context.Background(), Request{Machine: id, Epoch: 2, Batch: 1, Size: 3, Form: FormWave})
	if err != nil {
		t.Fatal(err)
	}
	// item 1 of the .npy body: header then rows of float32
	hlen := len(wave.Body) - 4*3*s.machines[id].frames
	row := wave.Body[hlen+4*s.machines[id].frames : hlen+8*s.machines[id].frames]
	sum := sha256.Sum256(row)
	if hex.EncodeToString(sum[:]) != it.SHA256 {
		t.Errorf("item sha256 %s is not the hash of its waveform row %x", it.SHA256, sum)
	}
}

// TestPreparedAhead: after a batch is served the next ones are being
// prepared, and never more than Ahead × MaxRequests wait.
func TestPreparedAhead(t *testing.T) {
	s, _ := newServer(t, Options{Workers: 1, Ahead: 2, MaxRequests: 1})
	id := s.Machines()[0]
	for _, b := range []int{0, 3, 1, 5} {
		if _, err := s.Batch(context.Background(), Request{Machine: id, Epoch: 0, Batch: b, Size: 2}); err != nil {
			t.Fatal(err)
		}
		s.cache.mu.Lock()
		n := len(s.cache.entries)
		_, next := s.cache.entries[Request{Machine: id, Epoch: 0, Batch: b + 1, Size: 2, Form: FormWave}]
		s.cache.mu.Unlock()
		if n > 2 || !next {
			t.Errorf("after batch %d: %d prepared (limit 2), next prepared %v", b, n, next)
		}
	}
}
