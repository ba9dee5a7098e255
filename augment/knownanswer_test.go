package augment

import (
	"encoding/json"
	"testing"

	"thrum/machine/ledger"
)

// TestVariantSeedKnownAnswers pins the byte string VariantSeed hashes (see
// its doc comment). The expected seeds were computed outside the project
// with Python's hashlib, e.g. for the first row:
//
//	/usr/bin/python3 -c 'import hashlib,struct; print(struct.unpack("<Q", hashlib.sha256(struct.pack("<Q",97)+b"\0pump-p1\0f1929f185e7a03b7bc38bb36c4a02d81c2b953e194a18e9419fe1989d545b2ce\x000\x000\0variant").digest()[:8])[0])'
//
// and likewise for the others with their own plant seed and byte string
// (shown beside each row).
func TestVariantSeedKnownAnswers(t *testing.T) {
	for _, c := range []struct {
		plantSeed       uint64
		machine, source string
		clip, variant   int
		purpose         string
		want            uint64
	}{
		// struct.pack("<Q",97)+b"\0pump-p1\0f1929f…b2ce\x000\x000\0variant"
		{97, "pump-p1", "f1929f185e7a03b7bc38bb36c4a02d81c2b953e194a18e9419fe1989d545b2ce", 0, 0, "variant", 6105982442442959121},
		// struct.pack("<Q",18446744073709551615)+b"\0fan-f1\0\x003\x00-1\0fault:bearing-outer"
		{1<<64 - 1, "fan-f1", "", 3, -1, "fault:bearing-outer", 603394748507759285},
		// struct.pack("<Q",0)+b"\0conveyor-c1\0\x000\x000\0microphone-pool"
		{0, "conveyor-c1", "", 0, 0, "microphone-pool", 6756317284339541998},
	} {
		if got := VariantSeed(c.plantSeed, c.machine, c.source, c.clip, c.variant, c.purpose); got != c.want {
			t.Errorf("VariantSeed(%d, %q, %q, %d, %d, %q) = %d, want %d (Python hashlib)",
				c.plantSeed, c.machine, c.source, c.clip, c.variant, c.purpose, got, c.want)
		}
	}
}

// TestDrawHashKnownAnswer pins the ledger's draw field: the JSON the step
// records encode to, and its hash. The expected hashes were computed outside
// the project with Python's hashlib on the JSON text below:
//
//	/usr/bin/python3 -c 'import hashlib; print(hashlib.sha256(b"<json>").hexdigest()[:16])'
//
// with <json> the want field's bytes (quotes escaped for the shell).
func TestDrawHashKnownAnswer(t *testing.T) {
	for _, c := range []struct {
		name  string
		steps []ledger.StepRecord
		json  string
		want  string
	}{
		{
			name: "three steps",
			steps: []ledger.StepRecord{
				{Kind: "speed", Params: map[string]float64{"ratio": 1.03}},
				{Kind: "background", Params: map[string]float64{"snr_db": 12.5, "offset": 1234},
					Text: map[string]string{"background": "hall-hum"}, Undefined: map[string]string{"t30": "no 35 dB decay"}},
				{Kind: "tempo", Params: map[string]float64{"rate": 1.1}, Nonphysical: true},
			},
			json: `[{"kind":"speed","params":{"ratio":1.03}},{"kind":"background","params":{"offset":1234,"snr_db":12.5},"text":{"background":"hall-hum"},"undefined":{"t30":"no 35 dB decay"}},{"kind":"tempo","params":{"rate":1.1},"nonphysical":true}]`,
			want: "13319572f29a1149",
		},
		{
			// nil steps encode as JSON null
			name: "no steps",
			json: `null`,
			want: "74234e98afe7498f",
		},
	} {
		b, err := json.Marshal(c.steps)
		if err != nil {
			t.Fatal(err)
		}
		if string(b) != c.json {
			t.Errorf("%s: steps encode to\n%s\nwant\n%s", c.name, b, c.json)
		}
		if got := drawHash(c.steps); got != c.want {
			t.Errorf("%s: drawHash = %s, want %s (Python hashlib)", c.name, got, c.want)
		}
	}
}
