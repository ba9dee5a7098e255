package features

import (
	"bytes"
	"encoding/binary"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// parseNPY reads back the parts of a .npy v1.0 file the writer produces
// (format: numpy's NEP 1, "A simple file format for NumPy arrays").
func parseNPY(t *testing.T, b []byte) (dict string, data []float32) {
	t.Helper()
	if len(b) < 10 || string(b[:8]) != "\x93NUMPY\x01\x00" {
		t.Fatalf("bad magic/version % x", b[:min(len(b), 8)])
	}
	hl := int(binary.LittleEndian.Uint16(b[8:10]))
	if (10+hl)%64 != 0 {
		t.Fatalf("data starts at %d, not a multiple of 64", 10+hl)
	}
	h := string(b[10 : 10+hl])
	if !strings.HasSuffix(h, "\n") {
		t.Fatalf("header does not end in newline: %q", h)
	}
	rest := b[10+hl:]
	if len(rest)%4 != 0 {
		t.Fatalf("%d data bytes", len(rest))
	}
	for i := 0; i < len(rest); i += 4 {
		data = append(data, math.Float32frombits(binary.LittleEndian.Uint32(rest[i:])))
	}
	return strings.TrimRight(h, " \n"), data
}

func TestWriteNPY(t *testing.T) {
	tests := []struct {
		shape []int
		dict  string
	}{
		{[]int{2, 3}, "{'descr': '<f4', 'fortran_order': False, 'shape': (2, 3), }"},
		{[]int{6}, "{'descr': '<f4', 'fortran_order': False, 'shape': (6,), }"},
		{nil, "{'descr': '<f4', 'fortran_order': False, 'shape': (6,), }"},
		{[]int{1, 2, 3}, "{'descr': '<f4', 'fortran_order': False, 'shape': (1, 2, 3), }"},
	}
	data := ramp(6)
	for _, tc := range tests {
		var buf bytes.Buffer
		if err := WriteNPY(&buf, data, tc.shape...); err != nil {
			t.Fatal(err)
		}
		dict, got := parseNPY(t, buf.Bytes())
		if dict != tc.dict {
			t.Errorf("%v: header %q, want %q", tc.shape, dict, tc.dict)
		}
		for i := range data {
			if got[i] != data[i] {
				t.Fatalf("%v: value %d = %v, want %v", tc.shape, i, got[i], data[i])
			}
		}
	}
	if err := WriteNPY(&bytes.Buffer{}, data, 4, 2); err == nil {
		t.Error("shape mismatch accepted")
	}
	if err := WriteNPY(&bytes.Buffer{}, nil, -1); err == nil {
		t.Error("negative dimension accepted")
	}
}

func TestStackWriter(t *testing.T) {
	// Known row count: any writer works, and the count is enforced.
	var buf bytes.Buffer
	sw, err := NewStackWriter(&buf, 3, 4)
	if err != nil {
		t.Fatal(err)
	}
	all := ramp(12)
	for _, part := range [][2]int{{0, 5}, {5, 6}, {6, 12}} {
		if err := sw.Write(all[part[0]:part[1]]); err != nil {
			t.Fatal(err)
		}
	}
	if err := sw.Close(); err != nil {
		t.Fatal(err)
	}
	dict, got := parseNPY(t, buf.Bytes())
	if !strings.Contains(dict, "'shape': (4, 3)") || len(got) != 12 || got[11] != all[11] {
		t.Errorf("known rows: %q, %d values", dict, len(got))
	}
	sw, _ = NewStackWriter(&bytes.Buffer{}, 3, 4)
	sw.Write(ramp(6))
	if err := sw.Close(); err == nil {
		t.Error("short stack accepted")
	}
	sw, _ = NewStackWriter(&bytes.Buffer{}, 3, 1)
	if err := sw.Write(ramp(6)); err == nil {
		t.Error("long stack accepted")
	}
	sw, _ = NewStackWriter(&bytes.Buffer{}, 3, 0)
	if err := sw.Close(); err != nil {
		t.Errorf("empty known stack: %v", err)
	}
	if _, err := NewStackWriter(&bytes.Buffer{}, 3, -1); err == nil {
		t.Error("unknown rows on a plain writer accepted")
	}

	// Unknown row count: the header is patched on close and keeps its size.
	dir := t.TempDir()
	path := filepath.Join(dir, "s.npy")
	sf, err := CreateStackFile(path, 128)
	if err != nil {
		t.Fatal(err)
	}
	big := ramp(128 * 1000)
	if err := sf.Write(big); err != nil {
		t.Fatal(err)
	}
	if err := sf.Write(big[:128*3]); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(path); !os.IsNotExist(err) {
		t.Error("file visible before close")
	}
	if err := sf.Close(); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	dict, got = parseNPY(t, b)
	if !strings.Contains(dict, "'shape': (1003, 128)") || len(got) != 1003*128 || got[128*1000+5] != big[5] {
		t.Errorf("unknown rows: %q, %d values", dict, len(got))
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 1 {
		t.Errorf("%d files in dir, want 1 (temporary left behind?)", len(ents))
	}
	// A partial row is an error and leaves no file.
	sf, _ = CreateStackFile(filepath.Join(dir, "bad.npy"), 4)
	sf.Write(ramp(6))
	if err := sf.Close(); err == nil {
		t.Error("partial row accepted")
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 1 {
		t.Errorf("failed stack left %d files", len(ents))
	}
}

func BenchmarkWriteNPY(b *testing.B) {
	data := ramp(313 * 128)
	var buf bytes.Buffer
	b.SetBytes(int64(4 * len(data)))
	b.ReportAllocs()
	for b.Loop() {
		buf.Reset()
		if err := WriteNPY(&buf, data, 313, 128); err != nil {
			b.Fatal(err)
		}
	}
}

func FuzzWriteNPY(f *testing.F) {
	f.Add(uint8(2), uint8(3), uint8(0), []byte{1, 2, 3})
	f.Add(uint8(0), uint8(9), uint8(1), []byte{})
	f.Fuzz(func(t *testing.T, a, b, c uint8, seed []byte) {
		shape := []int{int(a % 17), int(b % 17)}
		if c%2 == 1 {
			shape = append(shape, int(c%5))
		}
		n := 1
		for _, d := range shape {
			n *= d
		}
		data := make([]float32, n)
		for i := range data {
			if len(seed) > 0 {
				data[i] = float32(seed[i%len(seed)]) * float32(i-3)
			}
		}
		var buf bytes.Buffer
		if err := WriteNPY(&buf, data, shape...); err != nil {
			t.Fatal(err)
		}
		_, got := parseNPY(t, buf.Bytes())
		if len(got) != n {
			t.Fatalf("%d values back, want %d", len(got), n)
		}
		for i := range got {
			if got[i] != data[i] {
				t.Fatalf("value %d: %v, want %v", i, got[i], data[i])
			}
		}
	})
}
