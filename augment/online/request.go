package online

import (
	"fmt"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"

	"thrum/machine"
)

// RequestError is a request the server refuses; Status is its HTTP status
// (4xx).
type RequestError struct {
	Status int
	Msg    string
}

func (e *RequestError) Error() string { return "online: " + e.Msg }

func badRequest(format string, a ...any) *RequestError {
	return &RequestError{Status: http.StatusBadRequest, Msg: fmt.Sprintf(format, a...)}
}

// DefaultSize is the batch size of a request that names none.
const DefaultSize = 16

// Check validates a request and fills in its defaults (the only machine
// when there is one, size DefaultSize capped by the limit, form wave).
func (s *Server) Check(req Request) (Request, error) {
	if req.Machine == "" {
		if len(s.ids) != 1 {
			return req, badRequest("machine is required (this plant serves %s)", strings.Join(s.ids, ", "))
		}
		req.Machine = s.ids[0]
	}
	ms := s.machines[req.Machine]
	if ms == nil {
		if s.plant.Machine(req.Machine) != nil {
			return req, &RequestError{Status: http.StatusNotFound, Msg: fmt.Sprintf("machine %q has no training clips with a recipe: nothing is served for it", req.Machine)}
		}
		return req, &RequestError{Status: http.StatusNotFound, Msg: fmt.Sprintf("no machine %q in the plant (served: %s)", req.Machine, strings.Join(s.ids, ", "))}
	}
	if req.Size == 0 {
		req.Size = min(DefaultSize, s.opt.MaxBatch)
	}
	if req.Size < 1 || req.Size > s.opt.MaxBatch {
		return req, badRequest("size %d outside 1 … %d (the server's batch limit)", req.Size, s.opt.MaxBatch)
	}
	if req.Form == "" {
		req.Form = FormWave
	}
	if req.Form != FormWave && req.Form != FormLogMel {
		return req, badRequest("form %q is not one of %s, %s", req.Form, FormWave, FormLogMel)
	}
	if req.Epoch < 0 || req.Epoch > MaxEpoch {
		return req, badRequest("epoch %d outside 0 … %d", req.Epoch, MaxEpoch)
	}
	nb := epochBatches(len(ms.items), req.Size)
	if req.Batch < 0 || req.Batch >= nb {
		return req, &RequestError{Status: http.StatusNotFound, Msg: fmt.Sprintf("batch %d outside 0 … %d: an epoch of machine %s has %d training clips, %d batches of size %d",
			req.Batch, nb-1, req.Machine, len(ms.items), nb, req.Size)}
	}
	return req, nil
}

// query parameters of /v1/batch and /v1/describe
var batchParams = []string{"machine", "epoch", "batch", "size", "form", "split"}

// ParseRequest reads a batch request from URL query parameters: machine,
// epoch, batch (required), size, form, and split, which may only be
// "train": eval and test clips are never served (403).
func ParseRequest(q url.Values) (Request, error) {
	var req Request
	for k, v := range q {
		if !slices.Contains(batchParams, k) {
			return req, badRequest("unknown parameter %q (known: %s)", k, strings.Join(batchParams, ", "))
		}
		if len(v) != 1 {
			return req, badRequest("parameter %q given %d times", k, len(v))
		}
	}
	switch sp := q.Get("split"); sp {
	case "", string(machine.SplitTrain):
	case string(machine.SplitEval), string(machine.SplitTest):
		return req, &RequestError{Status: http.StatusForbidden, Msg: fmt.Sprintf("split %q refused: only training clips are served; eval and test clips are never augmented or served (read them from the split lists)", sp)}
	default:
		return req, badRequest("split %q is not train (only training clips are served)", sp)
	}
	num := func(k string, need bool) (int, error) {
		v := q.Get(k)
		if v == "" {
			if need && !q.Has(k) {
				return 0, badRequest("parameter %q is required", k)
			}
			if q.Has(k) {
				return 0, badRequest("parameter %q is empty", k)
			}
			return 0, nil
		}
		n, err := strconv.Atoi(v)
		if err != nil {
			return 0, badRequest("parameter %q: %q is not a whole number", k, v)
		}
		if n < 0 {
			return 0, badRequest("parameter %q: %d is negative", k, n)
		}
		return n, nil
	}
	var err error
	if req.Epoch, err = num("epoch", true); err != nil {
		return req, err
	}
	if req.Batch, err = num("batch", true); err != nil {
		return req, err
	}
	if req.Size, err = num("size", false); err != nil {
		return req, err
	}
	if q.Has("size") && req.Size == 0 {
		return req, badRequest("parameter \"size\": 0 items")
	}
	req.Machine = q.Get("machine")
	req.Form = q.Get("form")
	if q.Has("form") && req.Form == "" {
		return req, badRequest("parameter \"form\" is empty")
	}
	return req, nil
}
