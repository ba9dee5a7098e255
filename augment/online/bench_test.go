package online

import (
	"context"
	"fmt"
	"io"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"sync"
	"testing"

	"thrum/augment"
	"thrum/machine/demoplant"
	"thrum/split"
)

var (
	benchOnce  sync.Once
	benchPlant string
	benchOut   string
	benchErr   error
)

// tenSecondPlant is the demo plant with its default 20 s recordings cut
// into 10 s clips, expanded and split once per benchmark run.
func tenSecondPlant(b *testing.B) (string, string) {
	benchOnce.Do(func() {
		dir, err := os.MkdirTemp("", "online-bench-")
		if err != nil {
			benchErr = err
			return
		}
		benchPlant, benchErr = demoplant.Write(dir, demoplant.Options{})
		if benchErr != nil {
			return
		}
		benchOut = filepath.Join(dir, "out")
		inv := scan(b, benchPlant)
		if _, benchErr = augment.Expand(context.Background(), inv, augment.Options{Out: benchOut, Policy: split.TrainingPolicy(inv)}); benchErr != nil {
			return
		}
		_, benchErr = split.Run(context.Background(), inv.Plant, benchOut)
	})
	if benchErr != nil {
		b.Fatal(benchErr)
	}
	return benchPlant, benchOut
}

// BenchmarkServe reports served 10 s variants per second: rendered,
// guarded, encoded as .npy (waveform, or log-mel too) and hashed, for
// -j 1, 2 and 4, batches of 16, nothing prepared ahead and each batch of a
// new epoch, so every item is rendered (after a warm-up that fills the
// impulse-response cache, as a running server has it). "http" adds the HTTP round trip
// on loopback. Run with -cpu 2 for the figures of a 2-core machine.
// cpu-ms/variant is the process's CPU time per variant, the figure that
// stays meaningful on a shared machine (2000 / cpu-ms is the rate two free
// cores would reach with perfect scaling).
func BenchmarkServe(b *testing.B) {
	plant, out := tenSecondPlant(b)
	inv := scan(b, plant)
	const size = 16
	for _, form := range []string{FormWave, FormLogMel} {
		for _, j := range []int{1, 2, 4} {
			b.Run(fmt.Sprintf("%s/j%d", form, j), func(b *testing.B) {
				s, err := New(inv, Options{Out: out, Workers: j, Ahead: -1, NoRecord: true})
				if err != nil {
					b.Fatal(err)
				}
				defer s.Close()
				id := busiest(s)
				// a running server has its impulse responses cached: warm up
				// with two batches of an epoch the loop does not serve
				for k := 0; k < 2; k++ {
					if _, err := s.Batch(context.Background(), Request{Machine: id, Epoch: MaxEpoch, Batch: k, Size: size, Form: form}); err != nil {
						b.Fatal(err)
					}
				}
				items := 0
				b.ResetTimer()
				c0 := processCPU()
				for i := 0; i < b.N; i++ {
					bt, err := s.Batch(context.Background(), Request{Machine: id, Epoch: i, Batch: 0, Size: size, Form: form})
					if err != nil {
						b.Fatal(err)
					}
					items += len(bt.Desc.Items)
				}
				b.ReportMetric(float64(items)/b.Elapsed().Seconds(), "variants/s")
				if cpu := processCPU() - c0; cpu > 0 {
					b.ReportMetric(cpu.Seconds()*1000/float64(items), "cpu-ms/variant")
				}
			})
		}
	}
	b.Run("http/wave/j2", func(b *testing.B) {
		s, err := New(inv, Options{Out: out, Workers: 2, Ahead: -1, NoRecord: true})
		if err != nil {
			b.Fatal(err)
		}
		defer s.Close()
		ts := httptest.NewServer(s.Handler(""))
		defer ts.Close()
		id := busiest(s)
		items := 0
		b.ResetTimer()
		for i := 0; i < b.N; i++ {
			resp, err := http.Get(fmt.Sprintf("%s/v1/batch?machine=%s&epoch=%d&batch=0&size=%d", ts.URL, id, i, size))
			if err != nil {
				b.Fatal(err)
			}
			n, _ := io.Copy(io.Discard, resp.Body)
			resp.Body.Close()
			if resp.StatusCode != 200 {
				b.Fatalf("status %d", resp.StatusCode)
			}
			items += int(n) / (4 * s.machines[id].frames)
		}
		b.ReportMetric(float64(items)/b.Elapsed().Seconds(), "variants/s")
	})
}

// busiest is the machine with the most training clips.
func busiest(s *Server) string {
	best := s.ids[0]
	for _, id := range s.ids {
		if len(s.machines[id].items) > len(s.machines[best].items) {
			best = id
		}
	}
	return best
}
