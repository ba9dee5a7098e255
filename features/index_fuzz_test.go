package features

import (
	"bytes"
	"testing"
)

// FuzzReadIndex: no index.csv, however broken, panics or errors the stage:
// what it cannot read gives nothing to reuse, and every row it returns is
// keyed by its own audio path.
func FuzzReadIndex(f *testing.F) {
	f.Add("path,audio,audio_sha256,features_sha256\nfeatures/a.npy,a.wav,ab,cd\n")
	f.Add("audio,features_sha256\na.wav,cd\n")
	f.Add("features_sha256,audio_sha256,audio\n\"x,y\",\"\n\",z\nshort\n")
	f.Fuzz(func(t *testing.T, s string) {
		for k, r := range readIndexFrom(bytes.NewReader([]byte(s))) {
			if r == nil || r.in.Path != k {
				t.Fatalf("row for %q is %+v", k, r)
			}
		}
	})
}
