package atomicfile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestWriteReplacesWholeFile(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "out.txt")
	if err := os.WriteFile(p, []byte("old"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := Write(p, func(w io.Writer) error { _, err := io.WriteString(w, "new content"); return err }); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(p); string(b) != "new content" {
		t.Fatalf("content %q", b)
	}
	assertOnlyFile(t, dir, "out.txt")
}

func TestFailedWriteLeavesOldFileAndNoTemporary(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "out.txt")
	os.WriteFile(p, []byte("old"), 0o644)
	boom := errors.New("boom")
	err := Write(p, func(w io.Writer) error { io.WriteString(w, "half"); return boom })
	if !errors.Is(err, boom) {
		t.Fatalf("error %v does not wrap the fill error", err)
	}
	if b, _ := os.ReadFile(p); string(b) != "old" {
		t.Fatalf("old file changed to %q", b)
	}
	assertOnlyFile(t, dir, "out.txt")
}

func TestReadOnlyFolderGivesClearError(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("root writes into read-only folders; permission check not meaningful")
	}
	dir := t.TempDir()
	os.Chmod(dir, 0o555)
	defer os.Chmod(dir, 0o755)
	err := Write(filepath.Join(dir, "x"), func(io.Writer) error { return nil })
	if err == nil {
		t.Fatal("write into a read-only folder succeeded")
	}
}

func TestMissingFolderGivesErrorNamingPath(t *testing.T) {
	p := filepath.Join(t.TempDir(), "no", "such", "x.csv")
	err := Write(p, func(io.Writer) error { return nil })
	if err == nil || !strings.Contains(err.Error(), p) {
		t.Fatalf("error %v does not name %s", err, p)
	}
}

func assertOnlyFile(t *testing.T, dir, name string) {
	t.Helper()
	es, _ := os.ReadDir(dir)
	if len(es) != 1 || es[0].Name() != name {
		var names []string
		for _, e := range es {
			names = append(names, e.Name())
		}
		t.Fatalf("folder holds %v, want only %s", names, name)
	}
}
