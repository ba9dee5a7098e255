package evaluate

import (
	"bytes"
	"os/exec"
	"strings"
	"testing"
)

// python is Debian's system interpreter, where python3-numpy installs; a
// python3 found first on PATH may lack numpy.
const python = "/usr/bin/python3"

// needNumpy skips the test unless numpy, the reference of the
// cross-checks, can be imported.
func needNumpy(t *testing.T) {
	t.Helper()
	if err := exec.Command(python, "-c", "import numpy").Run(); err != nil {
		t.Skipf("numpy reference unavailable (%s -c 'import numpy': %v)", python, err)
	}
}

// runPythonIn runs script with stdin and returns its standard output.
func runPythonIn(t *testing.T, script, stdin string) string {
	t.Helper()
	cmd := exec.Command(python, "-c", script)
	cmd.Stdin = strings.NewReader(stdin)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		t.Fatalf("python: %v\n%s%s", err, out.String(), errb.String())
	}
	return out.String()
}
