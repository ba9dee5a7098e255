package online

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/http/httptest"
	"strings"
	"sync"
	"testing"
)

func get(t *testing.T, url, token string) (int, []byte, http.Header) {
	t.Helper()
	req, err := http.NewRequest(http.MethodGet, url, nil)
	if err != nil {
		t.Fatal(err)
	}
	if token != "" {
		req.Header.Set("Authorization", "Bearer "+token)
	}
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatal(err)
	}
	return resp.StatusCode, b, resp.Header
}

// TestBadRequests: malformed or refused requests get their 4xx and a
// message naming the problem.
func TestBadRequests(t *testing.T) {
	s, _ := newServer(t, Options{Workers: 1, MaxBatch: 8})
	ts := httptest.NewServer(s.Handler("sesame"))
	defer ts.Close()
	m := s.Machines()[0]
	nb := epochBatches(len(s.machines[m].items), 4)
	cases := []struct {
		name   string
		path   string
		token  string
		status int
		says   string
	}{
		{"no token", "/v1/info", "", 401, "access token"},
		{"wrong token", "/v1/info", "open", 401, "access token"},
		{"unknown endpoint", "/v2/batch", "sesame", 404, "no endpoint"},
		{"no epoch", "/v1/batch?machine=" + m + "&batch=0", "sesame", 400, `"epoch" is required`},
		{"no machine", "/v1/batch?epoch=0&batch=0", "sesame", 400, "machine is required"},
		{"unknown machine", "/v1/batch?machine=nope&epoch=0&batch=0", "sesame", 404, `no machine "nope"`},
		{"epoch not a number", "/v1/batch?machine=" + m + "&epoch=x&batch=0", "sesame", 400, "not a whole number"},
		{"negative batch", "/v1/batch?machine=" + m + "&epoch=0&batch=-1", "sesame", 400, "negative"},
		{"batch past the epoch", fmt.Sprintf("/v1/batch?machine=%s&epoch=0&batch=%d&size=4", m, nb), "sesame", 404, "outside 0"},
		{"size over the limit", "/v1/batch?machine=" + m + "&epoch=0&batch=0&size=9", "sesame", 400, "outside 1 … 8"},
		{"size zero", "/v1/batch?machine=" + m + "&epoch=0&batch=0&size=0", "sesame", 400, "0 items"},
		{"unknown form", "/v1/batch?machine=" + m + "&epoch=0&batch=0&form=mp3", "sesame", 400, `form "mp3"`},
		{"unknown parameter", "/v1/batch?machine=" + m + "&epoch=0&batch=0&seed=3", "sesame", 400, `unknown parameter "seed"`},
		{"repeated parameter", "/v1/batch?machine=" + m + "&epoch=0&epoch=1&batch=0", "sesame", 400, "given 2 times"},
		{"eval", "/v1/batch?machine=" + m + "&epoch=0&batch=0&split=eval", "sesame", 403, "only training clips"},
		{"test", "/v1/describe?machine=" + m + "&epoch=0&batch=0&split=test", "sesame", 403, "only training clips"},
		{"other split", "/v1/batch?machine=" + m + "&epoch=0&batch=0&split=all", "sesame", 400, "not train"},
		{"info with parameters", "/v1/info?x=1", "sesame", 400, "no parameters"},
	}
	for _, c := range cases {
		code, body, _ := get(t, ts.URL+c.path, c.token)
		var e struct{ Error string }
		if code != c.status || json.Unmarshal(body, &e) != nil || !strings.Contains(e.Error, c.says) {
			t.Errorf("%s: %d %s, want %d with %q", c.name, code, body, c.status, c.says)
		}
	}
	// a method other than GET
	post, _ := http.NewRequest(http.MethodPost, ts.URL+"/v1/info", strings.NewReader("x"))
	post.Header.Set("Authorization", "Bearer sesame")
	resp, err := http.DefaultClient.Do(post)
	if err != nil {
		t.Fatal(err)
	}
	resp.Body.Close()
	if resp.StatusCode != http.StatusMethodNotAllowed {
		t.Errorf("POST: %d, want 405", resp.StatusCode)
	}
}

// TestConcurrentClients: two clients fetching interleaved batches at once
// get exactly the bytes one client fetching them alone gets.
func TestConcurrentClients(t *testing.T) {
	s, _ := newServer(t, Options{Workers: 2, MaxRequests: 2})
	ts := httptest.NewServer(s.Handler(""))
	defer ts.Close()
	m := s.Machines()[0]
	url := func(epoch, batch int) string {
		return fmt.Sprintf("%s/v1/batch?machine=%s&epoch=%d&batch=%d&size=3", ts.URL, m, epoch, batch)
	}
	// alone, one after the other
	want := map[string][]byte{}
	for e := 0; e < 2; e++ {
		for b := 0; b < 3; b++ {
			code, body, _ := get(t, url(e, b), "")
			if code != 200 {
				t.Fatalf("%s: %d %s", url(e, b), code, body)
			}
			want[url(e, b)] = body
		}
	}
	// two clients at once, each an epoch, one of them backwards
	fresh, _ := newServer(t, Options{Workers: 2, MaxRequests: 2})
	ts2 := httptest.NewServer(fresh.Handler(""))
	defer ts2.Close()
	var wg sync.WaitGroup
	var mu sync.Mutex
	got := map[string][]byte{}
	for e := 0; e < 2; e++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for k := 0; k < 3; k++ {
				b := k
				if e == 1 {
					b = 2 - k
				}
				u := url(e, b)
				resp, err := http.Get(strings.Replace(u, ts.URL, ts2.URL, 1))
				if err != nil {
					t.Error(err)
					return
				}
				body, _ := io.ReadAll(resp.Body)
				resp.Body.Close()
				if resp.StatusCode != 200 {
					t.Errorf("%s: %d %s", u, resp.StatusCode, body)
					return
				}
				mu.Lock()
				got[u] = body
				mu.Unlock()
			}
		}()
	}
	wg.Wait()
	for u, w := range want {
		if !bytes.Equal(got[u], w) {
			t.Errorf("%s: two clients at once got other bytes than one alone", u)
		}
	}
}

// TestTooManyRequests: a batch request beyond the concurrent-request limit
// is refused with 429 and Retry-After, not queued without bound.
func TestTooManyRequests(t *testing.T) {
	s, _ := newServer(t, Options{Workers: 1, MaxRequests: 1})
	ts := httptest.NewServer(s.Handler(""))
	defer ts.Close()
	u := ts.URL + "/v1/batch?machine=" + s.Machines()[0] + "&epoch=0&batch=0&size=2"
	s.sem <- struct{}{} // one request in progress
	code, body, h := get(t, u, "")
	if code != http.StatusTooManyRequests || h.Get("Retry-After") == "" || !strings.Contains(string(body), "at once") {
		t.Errorf("over the limit: %d %s (Retry-After %q), want 429", code, body, h.Get("Retry-After"))
	}
	<-s.sem
	if code, body, _ := get(t, u, ""); code != http.StatusOK {
		t.Errorf("under the limit: %d %s", code, body)
	}
}
