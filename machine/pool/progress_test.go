package pool

import (
	"context"
	"errors"
	"strings"
	"testing"
)

func TestCollect(t *testing.T) {
	a, b := errors.New("a.wav: bad header"), errors.New("c.wav: not a regular file")
	cases := []struct {
		name string
		errs []error
		want string // "" = nil error
	}{
		{"none failed", []error{nil, nil}, ""},
		{"empty batch", nil, ""},
		{"two of three", []error{a, nil, b}, "2 of 3 file(s) failed:\n  a.wav: bad header\n  c.wav: not a regular file"},
	}
	for _, c := range cases {
		err := Collect(c.errs)
		if c.want == "" {
			if err != nil {
				t.Errorf("%s: %v, want nil", c.name, err)
			}
			continue
		}
		var f *Failed
		if !errors.As(err, &f) || err.Error() != c.want || !errors.Is(err, a) {
			t.Errorf("%s: %q, want %q wrapping each item error", c.name, err, c.want)
		}
	}
}

// The reporter counts units from many goroutines into one running total
// and never calls its callback concurrently.
func TestReporterSerialisesAndCounts(t *testing.T) {
	var events []Event
	inside := false
	r := NewReporter(func(e Event) {
		if inside {
			t.Error("callback called concurrently")
		}
		inside = true
		events = append(events, e)
		inside = false
	}, "expand", UnitClips, 300)
	err := Each(context.Background(), 100, 4, func(_ context.Context, _, i int) error {
		r.Add(3, 1, 0, "pump-p1", strings.Repeat("x", i%3))
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	last := events[len(events)-1]
	if len(events) != 100 || last.Done != 300 || last.Total != 300 || last.Written != 100 || last.Unit != UnitClips {
		t.Errorf("%d events, last %+v", len(events), last)
	}
	var nilReporter *Reporter
	nilReporter.Add(1, 0, 0, "", "") // must not panic
	NewReporter(nil, "s", UnitClips, 1).Add(1, 0, 0, "", "")
}
