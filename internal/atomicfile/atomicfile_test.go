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

func writeString(s string) func(io.Writer) error {
	return func(w io.Writer) error { _, err := io.WriteString(w, s); return err }
}

func TestSymlinkIsFollowedAndItsTargetReplaced(t *testing.T) {
	dir := t.TempDir()
	sub := filepath.Join(dir, "data")
	os.Mkdir(sub, 0o755)
	target := filepath.Join(sub, "real.csv")
	os.WriteFile(target, []byte("old"), 0o600)
	link := filepath.Join(dir, "link.csv")
	if err := os.Symlink("data/real.csv", link); err != nil { // relative, as ln -s makes them
		t.Fatal(err)
	}
	o, err := Save(link, writeString("new"))
	if err != nil {
		t.Fatal(err)
	}
	if o.How != Followed || o.Target != target {
		t.Fatalf("outcome %+v, want Followed to %s", o, target)
	}
	if fi, err := os.Lstat(link); err != nil || fi.Mode()&os.ModeSymlink == 0 {
		t.Fatalf("the link was replaced: %v %v", fi.Mode(), err)
	}
	if b, _ := os.ReadFile(target); string(b) != "new" {
		t.Fatalf("target holds %q", b)
	}
	if fi, _ := os.Stat(target); fi.Mode().Perm() != 0o600 {
		t.Fatalf("target's permission became %v, want it kept (0600)", fi.Mode().Perm())
	}
	if !strings.Contains(o.String(), "symbolic link") || !strings.Contains(o.String(), target) {
		t.Fatalf("outcome says %q", o)
	}
	assertOnlyFile(t, sub, "real.csv")
}

func TestDanglingSymlinkCreatesItsTarget(t *testing.T) {
	dir := t.TempDir()
	link := filepath.Join(dir, "a")
	os.Symlink("b", filepath.Join(dir, "a"))
	os.Symlink(filepath.Join(dir, "c"), filepath.Join(dir, "b")) // a → b → c (absent)
	if _, err := Save(link, writeString("x")); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(filepath.Join(dir, "c")); string(b) != "x" {
		t.Fatalf("c holds %q", b)
	}
	for _, n := range []string{"a", "b"} {
		if fi, _ := os.Lstat(filepath.Join(dir, n)); fi.Mode()&os.ModeSymlink == 0 {
			t.Fatalf("%s is no longer a link", n)
		}
	}
}

func TestNamedPipeIsWrittenThrough(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "pipe")
	if err := mkfifo(fifo); err != nil {
		t.Skipf("cannot make a named pipe: %v", err)
	}
	got := make(chan string)
	go func() {
		f, err := os.Open(fifo)
		if err != nil {
			got <- err.Error()
			return
		}
		b, _ := io.ReadAll(f)
		f.Close()
		got <- string(b)
	}()
	o, err := Save(fifo, writeString("through the pipe"))
	if err != nil {
		t.Fatal(err)
	}
	if s := <-got; s != "through the pipe" {
		t.Fatalf("reader got %q", s)
	}
	if o.How != Through || !strings.Contains(o.String(), "named pipe") {
		t.Fatalf("outcome %+v %q", o, o)
	}
	if fi, _ := os.Lstat(fifo); fi.Mode()&os.ModeNamedPipe == 0 {
		t.Fatalf("the pipe was replaced by %v", fi.Mode())
	}
	assertOnlyFile(t, dir, "pipe")
}

func TestDevicesAreWrittenThroughNeverReplaced(t *testing.T) {
	for _, dev := range []string{"/dev/null", "/dev/full"} {
		before, err := os.Lstat(dev)
		if err != nil || before.Mode()&os.ModeCharDevice == 0 {
			t.Skipf("%s is not a character device here", dev)
		}
		o, err := Save(dev, writeString("data"))
		if o.How != Through {
			t.Fatalf("%s: outcome %+v", dev, o)
		}
		if dev == "/dev/full" {
			// Writing to /dev/full fails with "no space left on device".
			if err == nil || !strings.Contains(err.Error(), dev) {
				t.Fatalf("%s: error %v", dev, err)
			}
		} else if err != nil {
			t.Fatalf("%s: %v", dev, err)
		}
		after, err := os.Lstat(dev)
		if err != nil || after.Mode() != before.Mode() || !os.SameFile(before, after) {
			t.Fatalf("%s changed: %v → %v", dev, before.Mode(), after.Mode())
		}
	}
}

func TestFolderSocketAndLoopAreRefused(t *testing.T) {
	dir := t.TempDir()
	loop := filepath.Join(dir, "loop")
	os.Symlink("loop", loop)
	cases := map[string]string{dir: "folder", loop: "symbolic links"}
	if sock, err := listenUnix(filepath.Join(dir, "s")); err == nil {
		defer sock.Close()
		cases[filepath.Join(dir, "s")] = "neither"
	}
	for p, want := range cases {
		_, err := Save(p, func(io.Writer) error { t.Fatalf("%s: fill called", p); return nil })
		if !errors.Is(err, ErrNotWritable) || !strings.Contains(err.Error(), want) || !strings.Contains(err.Error(), p) {
			t.Fatalf("%s: error %v, want ErrNotWritable naming it and %q", p, err, want)
		}
	}
	if fi, _ := os.Stat(dir); !fi.IsDir() {
		t.Fatal("folder replaced")
	}
}

func TestCheckRefusesMissingFolderBeforeWriting(t *testing.T) {
	p := filepath.Join(t.TempDir(), "absent", "x.csv")
	if _, err := Check(p); !errors.Is(err, ErrNotWritable) || !strings.Contains(err.Error(), "absent") {
		t.Fatalf("error %v", err)
	}
}

func TestSameFileByDeviceAndInode(t *testing.T) {
	dir := t.TempDir()
	a := filepath.Join(dir, "a.csv")
	os.WriteFile(a, []byte("x"), 0o644)
	os.Mkdir(filepath.Join(dir, "sub"), 0o755)
	link := filepath.Join(dir, "link.csv")
	hard := filepath.Join(dir, "hard.csv")
	dangling := filepath.Join(dir, "dangling.csv")
	other := filepath.Join(dir, "other.csv")
	os.WriteFile(other, []byte("x"), 0o644)
	if err := os.Symlink("a.csv", link); err != nil {
		t.Skipf("no symbolic links here: %v", err)
	}
	os.Symlink("new.csv", dangling)
	hasHard := os.Link(a, hard) == nil
	for _, c := range []struct {
		a, b string
		same bool
	}{
		{a, filepath.Join(dir, "sub", "..", "a.csv"), true},
		{a, link, true},
		{a, hard, hasHard},
		{a, other, false}, // equal content, another file
		{dangling, filepath.Join(dir, "new.csv"), true},
		{filepath.Join(dir, "new.csv"), filepath.Join(dir, "sub", "..", "new.csv"), true},
		{filepath.Join(dir, "new.csv"), filepath.Join(dir, "sub", "new.csv"), false},
		{a, filepath.Join(dir, "new.csv"), false},
	} {
		if got := SameFile(c.a, c.b); got != c.same {
			t.Errorf("SameFile(%s, %s) = %v, want %v", c.a, c.b, got, c.same)
		}
	}
}
