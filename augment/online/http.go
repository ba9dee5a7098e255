package online

import (
	"context"
	"crypto/subtle"
	"encoding/json"
	"errors"
	"fmt"
	"net/http"
	"strconv"
	"strings"
)

// The HTTP face of a Server:
//
//	GET /v1/info                      machines, shapes, limits (JSON)
//	GET /v1/batch?epoch=E&batch=B     the batch as .npy bytes
//	GET /v1/describe?epoch=E&batch=B  the batch's description (JSON)
//
// with machine, size and form (wave, logmel) as further parameters. Errors
// are JSON {"error": "..."} with a 4xx status for a bad request (400), a
// missing or wrong token (401), a refused split (403), an unknown machine
// or a batch past the epoch's end (404), a method other than GET (405) and
// too many requests at once (429).

// Handler returns the server's HTTP handler. A non-empty token is required
// of every request as "Authorization: Bearer <token>".
func (s *Server) Handler(token string) http.Handler {
	mux := http.NewServeMux()
	mux.HandleFunc("/v1/info", func(w http.ResponseWriter, r *http.Request) {
		if len(r.URL.Query()) > 0 {
			writeError(w, badRequest("/v1/info takes no parameters"))
			return
		}
		writeJSON(w, http.StatusOK, s.Info())
	})
	mux.HandleFunc("/v1/batch", func(w http.ResponseWriter, r *http.Request) {
		s.limited(w, r, func(ctx context.Context, req Request) error {
			b, err := s.Batch(ctx, req)
			if err != nil {
				return err
			}
			d := b.Desc
			h := w.Header()
			h.Set("Content-Type", "application/octet-stream")
			h.Set("Content-Length", strconv.Itoa(len(b.Body)))
			h.Set("X-Thrum-Sha256", d.SHA256)
			h.Set("X-Thrum-Items", strconv.Itoa(len(d.Items)))
			h.Set("X-Thrum-Epoch-Batches", strconv.Itoa(d.EpochBatches))
			h.Set("X-Thrum-Describe", "/v1/describe?"+r.URL.RawQuery)
			w.WriteHeader(http.StatusOK)
			w.Write(b.Body)
			return nil
		})
	})
	mux.HandleFunc("/v1/describe", func(w http.ResponseWriter, r *http.Request) {
		s.limited(w, r, func(ctx context.Context, req Request) error {
			d, err := s.Describe(ctx, req)
			if err != nil {
				return err
			}
			writeJSON(w, http.StatusOK, d)
			return nil
		})
	})
	mux.HandleFunc("/", func(w http.ResponseWriter, r *http.Request) {
		writeError(w, &RequestError{Status: http.StatusNotFound, Msg: fmt.Sprintf("no endpoint %q: use /v1/info, /v1/batch or /v1/describe", r.URL.Path)})
	})
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if token != "" {
			got, ok := strings.CutPrefix(r.Header.Get("Authorization"), "Bearer ")
			if !ok || subtle.ConstantTimeCompare([]byte(got), []byte(token)) != 1 {
				w.Header().Set("WWW-Authenticate", "Bearer")
				writeError(w, &RequestError{Status: http.StatusUnauthorized, Msg: "missing or wrong access token: send \"Authorization: Bearer <token>\""})
				return
			}
		}
		if r.Method != http.MethodGet {
			w.Header().Set("Allow", http.MethodGet)
			writeError(w, &RequestError{Status: http.StatusMethodNotAllowed, Msg: fmt.Sprintf("method %s: only GET is served", r.Method)})
			return
		}
		mux.ServeHTTP(w, r)
	})
}

// limited parses the request and runs fn under the concurrent-request
// limit.
func (s *Server) limited(w http.ResponseWriter, r *http.Request, fn func(context.Context, Request) error) {
	req, err := ParseRequest(r.URL.Query())
	if err != nil {
		writeError(w, err)
		return
	}
	select {
	case s.sem <- struct{}{}:
		defer func() { <-s.sem }()
	default:
		w.Header().Set("Retry-After", "1")
		writeError(w, &RequestError{Status: http.StatusTooManyRequests, Msg: fmt.Sprintf("more than %d batch requests at once: retry later", s.opt.MaxRequests)})
		return
	}
	if err := fn(r.Context(), req); err != nil {
		writeError(w, err)
	}
}

func writeJSON(w http.ResponseWriter, status int, v any) {
	b, err := json.Marshal(v)
	if err != nil {
		http.Error(w, err.Error(), http.StatusInternalServerError)
		return
	}
	w.Header().Set("Content-Type", "application/json")
	w.WriteHeader(status)
	w.Write(append(b, '\n'))
}

func writeError(w http.ResponseWriter, err error) {
	status := http.StatusInternalServerError
	var re *RequestError
	if errors.As(err, &re) {
		status = re.Status
	} else if errors.Is(err, context.Canceled) {
		// the client went away or the server is stopping
		status = http.StatusServiceUnavailable
	}
	writeJSON(w, status, map[string]string{"error": err.Error()})
}
