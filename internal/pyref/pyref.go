// Package pyref runs the reference libraries that Lodestone's tests compare
// against: Debian's python3-scipy, python3-sklearn and python3-networkx,
// which install for /usr/bin/python3 (the python3 first on PATH may be
// another interpreter without them). Tests that need them skip, saying
// which package to install, when the interpreter cannot import them; CI
// installs them so that the checks really run.
package pyref

import (
	"bytes"
	"encoding/json"
	"os/exec"
	"testing"
)

// Python is the interpreter the Debian packages install for.
const Python = "/usr/bin/python3"

// packages names the Debian package of each Python module.
var packages = map[string]string{
	"scipy": "python3-scipy", "sklearn": "python3-sklearn", "networkx": "python3-networkx", "numpy": "python3-numpy",
}

// Require returns Python after checking that it imports every module of
// the comma-separated list modules (as in "numpy, sklearn"); otherwise it
// skips t with a message naming the Debian packages to install.
func Require(t testing.TB, modules string) string {
	t.Helper()
	if err := exec.Command(Python, "-c", "import "+modules).Run(); err != nil {
		var need []byte
		for _, m := range bytes.Split([]byte(modules), []byte(",")) {
			name := string(bytes.TrimSpace(bytes.SplitN(m, []byte("."), 2)[0]))
			if p, ok := packages[name]; ok {
				need = append(append(need, ' '), p...)
			}
		}
		t.Skipf("reference check skipped: %s cannot import %s (install Debian's%s): %v", Python, modules, need, err)
	}
	return Python
}

// Output runs script (Python source) under Python with args after checking
// that it imports modules, and returns its standard output. A failing
// script fails the test with its standard error.
func Output(t testing.TB, modules, script string, args ...string) []byte {
	t.Helper()
	Require(t, modules)
	cmd := exec.Command(Python, append([]string{"-c", script}, args...)...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("reference script failed: %v\n%s", err, stderr.String())
	}
	return out
}

// JSON runs script under Python with in encoded as JSON on its standard
// input and decodes its standard output, also JSON, into out.
func JSON(t testing.TB, modules, script string, in, out any) {
	t.Helper()
	Require(t, modules)
	data, err := json.Marshal(in)
	if err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(Python, "-c", script)
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
