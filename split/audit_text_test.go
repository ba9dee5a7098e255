package split

import (
	"bytes"
	"fmt"
	"strings"
	"testing"
)

// WriteText prints one heading per rule and machine pair with its count,
// at most TextGroupLines violations of a group and a line counting the
// rest; finish records the same groups for --json.
func TestWriteTextGrouped(t *testing.T) {
	var r Report
	for i := range 7 {
		r.add(RuleNearDup, "BER 0.1", fmt.Sprintf("pump-p1/duty/augmented/a-c%04d.wav", i), fmt.Sprintf("fan-f1/high/recorded/b-c%04d.wav", i))
	}
	r.add(RuleNearDup, "BER 0.2", "pump-p1/duty/recorded/x.wav", "pump-p1/duty/recorded/y.wav")
	r.add(RuleGroupOneSplit, "group in train and eval", "pump-p1/duty/recorded/z.wav")
	r.add(RuleListed, "missing", "lists.csv")
	r.ran(RuleNearDup, 1)
	r.finish()
	var buf bytes.Buffer
	if err := r.WriteText(&buf); err != nil {
		t.Fatal(err)
	}
	text := buf.String()
	t.Logf("\n%s", text)
	for _, tc := range []struct {
		want  string
		count int
	}{
		{RuleNearDup + " [" + LeakDuplicates + "] fan-f1 ↔ pump-p1: 7 violation(s)\n", 1},
		{RuleNearDup + " [" + LeakDuplicates + "] pump-p1: 1 violation(s)\n", 1},
		{RuleGroupOneSplit + " [" + LeakNonIndependent + "] pump-p1: 1 violation(s)\n", 1},
		{RuleListed + " [" + LeakNoCleanSplit + "]: 1 violation(s)\n", 1},
		{"  pump-p1/duty/augmented/a-c0004.wav, fan-f1/high/recorded/b-c0004.wav: BER 0.1\n", 1},
		{"a-c0005.wav", 0}, // beyond the first five of its group
		{"  … and 2 more (--json lists every one)\n", 1},
		{"  pump-p1/duty/recorded/x.wav, pump-p1/duty/recorded/y.wav: BER 0.2\n", 1},
		{"audit: 10 violation(s) in 4 group(s); ", 1},
	} {
		if n := strings.Count(text, tc.want); n != tc.count {
			t.Errorf("%q appears %d times, want %d", tc.want, n, tc.count)
		}
	}
	want := []GroupCount{
		{RuleGroupOneSplit, LeakNonIndependent, "pump-p1", 1},
		{RuleListed, LeakNoCleanSplit, "", 1},
		{RuleNearDup, LeakDuplicates, "fan-f1 ↔ pump-p1", 7},
		{RuleNearDup, LeakDuplicates, "pump-p1", 1},
	}
	if fmt.Sprint(r.Groups) != fmt.Sprint(want) {
		t.Errorf("groups %v, want %v", r.Groups, want)
	}
}
