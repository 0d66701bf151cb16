package term

import (
	"bytes"
	"os"
	"path/filepath"
	"testing"
)

func TestFilesPipesAndNullAreNotTerminals(t *testing.T) {
	f, err := os.Create(filepath.Join(t.TempDir(), "log"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	r, w, err := os.Pipe()
	if err != nil {
		t.Fatal(err)
	}
	defer r.Close()
	defer w.Close()
	null, err := os.OpenFile(os.DevNull, os.O_WRONLY, 0)
	if err != nil {
		t.Fatal(err)
	}
	defer null.Close()
	for name, s := range map[string]any{"file": f, "pipe": w, "null device": null, "buffer": &bytes.Buffer{}} {
		if IsTerminal(s.(interface{ Write([]byte) (int, error) })) {
			t.Errorf("%s taken for a terminal", name)
		}
	}
}

func TestTerminalIsRecognised(t *testing.T) {
	tty, err := os.OpenFile("/dev/tty", os.O_WRONLY, 0)
	if err != nil {
		t.Skipf("no controlling terminal: %v", err)
	}
	defer tty.Close()
	if !IsTerminal(tty) {
		t.Fatal("/dev/tty not taken for a terminal")
	}
}
