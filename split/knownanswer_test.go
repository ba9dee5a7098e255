package split

import "testing"

// TestUnitKnownAnswers pins the byte string of the split's stable group
// hash (see Unit's doc comment). The expected values were computed outside
// the project with Python's hashlib, e.g. for the first row:
//
//	/usr/bin/python3 -c 'import hashlib,struct; print(repr((struct.unpack(">Q", hashlib.sha256(b"thrum/split/v1\0"+struct.pack("<Q",97)+b"group\0pump-p1\0pump-p1/duty/take-01.wav\0").digest()[:8])[0]>>11)/2**53))'
//
// and likewise for the others with their own seed and strings. Python's
// repr is the shortest decimal that reads back as the same float64, so the
// comparison is exact.
func TestUnitKnownAnswers(t *testing.T) {
	for _, c := range []struct {
		seed               uint64
		kind, machine, key string
		want               float64
	}{
		// b"thrum/split/v1\0"+struct.pack("<Q",97)+b"group\0pump-p1\0pump-p1/duty/take-01.wav\0"
		{97, "group", "pump-p1", "pump-p1/duty/take-01.wav", 0.2533215709506973},
		// b"thrum/split/v1\0"+struct.pack("<Q",1)+b"background\0\0hall-hum\0"
		{1, "background", "", "hall-hum", 0.839676026214895},
		// b"thrum/split/v1\0"+struct.pack("<Q",18446744073709551615)+b"group\0fan-f1\0fan-f1/high/session-visit-02\0"
		{1<<64 - 1, "group", "fan-f1", "fan-f1/high/session-visit-02", 0.21634994824824882},
	} {
		if got := Unit(c.seed, c.kind, c.machine, c.key); got != c.want {
			t.Errorf("Unit(%d, %q, %q, %q) = %v, want %v (Python hashlib)", c.seed, c.kind, c.machine, c.key, got, c.want)
		}
	}
}
