package online

import (
	"context"
	"fmt"
	"sync"
)

// Batches prepared ahead: after a batch is served the next ones of its
// epoch are rendered in the background, so the following request finds
// them ready. At most cap prepared batches wait; the oldest is dropped
// (its rendering cancelled) to make room. Descriptions of recently served
// batches are kept for /describe.

type entry struct {
	done   chan struct{}
	b      *Batch
	err    error
	cancel context.CancelFunc
}

type cache struct {
	mu      sync.Mutex
	cap     int
	entries map[Request]*entry
	fifo    []Request
	descs   map[Request]*Description
	descAge []Request
	wg      sync.WaitGroup
}

// maxDescs is the number of served batches' descriptions kept.
const maxDescs = 256

func newCache(cap int) *cache {
	return &cache{cap: cap, entries: map[Request]*entry{}, descs: map[Request]*Description{}}
}

// take removes and returns the prepared entry of req, if any.
func (c *cache) take(req Request) *entry {
	c.mu.Lock()
	defer c.mu.Unlock()
	e := c.entries[req]
	if e != nil {
		c.drop(req)
	}
	return e
}

// drop forgets req's entry (the caller holds mu).
func (c *cache) drop(req Request) {
	delete(c.entries, req)
	for i, r := range c.fifo {
		if r == req {
			c.fifo = append(c.fifo[:i], c.fifo[i+1:]...)
			break
		}
	}
}

// wait waits for the background renderings to end.
func (c *cache) wait() { c.wg.Wait() }

func (c *cache) keepDesc(req Request, d *Description) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if _, ok := c.descs[req]; ok {
		return
	}
	c.descs[req] = d
	c.descAge = append(c.descAge, req)
	if len(c.descAge) > maxDescs {
		delete(c.descs, c.descAge[0])
		c.descAge = c.descAge[1:]
	}
}

func (c *cache) desc(req Request) *Description {
	c.mu.Lock()
	defer c.mu.Unlock()
	return c.descs[req]
}

// get returns the batch of req: prepared ahead, or rendered now.
func (s *Server) get(ctx context.Context, req Request) (*Batch, error) {
	if e := s.cache.take(req); e != nil {
		select {
		case <-e.done:
			if e.err == nil {
				return e.b, nil
			}
			// cancelled or failed: render it here
		case <-ctx.Done():
			return nil, ctx.Err()
		}
	}
	return s.compute(ctx, req)
}

// prepareAhead starts rendering the Ahead batches after req (into the next
// epoch at the end of one).
func (s *Server) prepareAhead(req Request) {
	if s.cache.cap == 0 {
		return
	}
	ms := s.machines[req.Machine]
	nb := epochBatches(len(ms.items), req.Size)
	next := req
	for k := 0; k < s.opt.Ahead; k++ {
		next.Batch++
		if next.Batch >= nb {
			next.Epoch, next.Batch = next.Epoch+1, 0
		}
		if next.Epoch > MaxEpoch {
			return
		}
		s.prepare(next)
	}
}

// prepare starts rendering req in the background unless it is prepared
// or being prepared.
func (s *Server) prepare(req Request) {
	c := s.cache
	c.mu.Lock()
	defer c.mu.Unlock()
	if s.base.Err() != nil || c.cap == 0 {
		return
	}
	if _, ok := c.entries[req]; ok {
		return
	}
	for len(c.fifo) >= c.cap {
		old := c.fifo[0]
		c.entries[old].cancel()
		c.drop(old)
	}
	ctx, cancel := context.WithCancel(s.base)
	e := &entry{done: make(chan struct{}), cancel: cancel}
	c.entries[req] = e
	c.fifo = append(c.fifo, req)
	c.wg.Add(1)
	go func() {
		defer c.wg.Done()
		defer cancel()
		defer close(e.done)
		defer func() {
			// a rendering that panics must not take the server down
			if r := recover(); r != nil {
				e.err = fmt.Errorf("online: preparing batch: %v", r)
			}
		}()
		e.b, e.err = s.compute(ctx, req)
	}()
}

// Batch returns the batch req names and records it as served. A bad
// request is a *RequestError.
func (s *Server) Batch(ctx context.Context, req Request) (*Batch, error) {
	req, err := s.Check(req)
	if err != nil {
		return nil, err
	}
	b, err := s.get(ctx, req)
	if err != nil {
		return nil, err
	}
	s.cache.keepDesc(req, b.Desc)
	if s.record != nil {
		if err := s.record.batch(s.machines[req.Machine], b.Desc); err != nil {
			return nil, err
		}
	}
	s.prepareAhead(req)
	return b, nil
}

// Describe returns the description of the batch req names (of a batch
// served recently, or rendered now and kept for the request that fetches
// it). It records nothing.
func (s *Server) Describe(ctx context.Context, req Request) (*Description, error) {
	req, err := s.Check(req)
	if err != nil {
		return nil, err
	}
	// the description does not depend on the form, apart from the shape
	if d := s.cache.desc(req); d != nil {
		return d, nil
	}
	s.prepare(req)
	c := s.cache
	c.mu.Lock()
	e := c.entries[req]
	c.mu.Unlock()
	if e != nil {
		select {
		case <-e.done:
			if e.err == nil {
				return e.b.Desc, nil
			}
		case <-ctx.Done():
			return nil, ctx.Err()
		}
	}
	b, err := s.compute(ctx, req)
	if err != nil {
		return nil, err
	}
	return b.Desc, nil
}
