package markers

import (
	"bytes"
	"encoding/json"
	"os/exec"
	"testing"
)

// referencePython is the interpreter that Debian's python3-scipy installs
// for.
const referencePython = "/usr/bin/python3"

// runReference runs a Python script under referencePython with in encoded as
// JSON on its standard input and decodes its JSON output into out. It skips
// the test when the interpreter cannot import the modules.
func runReference(t *testing.T, modules, script string, in, out any) {
	t.Helper()
	if err := exec.Command(referencePython, "-c", "import "+modules).Run(); err != nil {
		t.Skipf("reference check skipped: %s cannot import %s (install Debian's python3-scipy): %v",
			referencePython, modules, err)
	}
	data, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(referencePython, "-c", script)
	cmd.Stdin = bytes.NewReader(data)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	res, err := cmd.Output()
	if err != nil {
		t.Fatalf("reference script failed: %v\n%s", err, stderr.String())
	}
	if err := json.Unmarshal(res, out); err != nil {
		t.Fatalf("reference output: %v\n%s", err, res)
	}
}
