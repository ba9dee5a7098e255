package ledger

import (
	"bytes"
	"errors"
	"testing"
)

// FuzzRead: no input panics; every failure names the reader's input; what
// reads encodes to lines that read back to the same encoding (the first
// rewrite only stamps the schema and drops empty fields).
func FuzzRead(f *testing.F) {
	var buf bytes.Buffer
	if err := Encode(&buf, sample()); err != nil {
		f.Fatal(err)
	}
	f.Add(buf.Bytes())
	f.Add([]byte(`{"kind":"output","stage":"expand","path":"a.wav","steps":[],"extra":{"x":[1,{"y":null}]}}` + "\n\n"))
	f.Add([]byte(`{"schema":2,"kind":"output","stage":"expand"}`))
	f.Add([]byte(`{"kind":"rejected","stage":"faults","speed":1e400}`))
	f.Add([]byte(`{"kind":"output","stage":"features"` + "\n"))
	f.Fuzz(func(t *testing.T, in []byte) {
		es, err := Read(bytes.NewReader(in), "fuzz.jsonl")
		if err != nil {
			var se *SchemaError
			if !errors.As(err, &se) && !bytes.Contains([]byte(err.Error()), []byte("ledger: fuzz.jsonl:")) {
				t.Fatalf("error does not name the input: %v", err)
			}
			return
		}
		var a bytes.Buffer
		if err := Encode(&a, es); err != nil {
			return // e.g. a float the encoder refuses; never written by thrum
		}
		again, err := Read(bytes.NewReader(a.Bytes()), "again.jsonl")
		if err != nil {
			t.Fatalf("re-read of encoded lines: %v\n%s", err, a.Bytes())
		}
		if len(again) != len(es) {
			t.Fatalf("%d lines read back as %d", len(es), len(again))
		}
		var b bytes.Buffer
		if err := Encode(&b, again); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(a.Bytes(), b.Bytes()) {
			t.Fatalf("round trip:\n%s\n%s", a.Bytes(), b.Bytes())
		}
	})
}
