package augment

import (
	"context"
	"strings"
	"testing"

	"thrum/machine"
)

// The stages have no unsafe default: without a training policy they refuse
// to run instead of making variants of eval and test groups.
func TestStagesRefuseMissingPolicy(t *testing.T) {
	dir := t.TempDir()
	inv := &machine.Inventory{Plant: &machine.Plant{Path: dir + "/plant.toml", Recordings: "recordings"}}
	opt := Options{Out: dir + "/out"}
	for name, run := range map[string]func() error{
		"expand": func() error { _, err := Expand(context.Background(), inv, opt); return err },
		"faults": func() error { _, err := Faults(context.Background(), inv, opt); return err },
		"replay": func() error { _, err := Replay(inv, opt, "pump/x.wav"); return err },
	} {
		err := run()
		if err == nil || !strings.HasPrefix(err.Error(), "augment: ") || !strings.Contains(err.Error(), "Policy") {
			t.Errorf("%s without a policy: %v", name, err)
		}
	}
}
