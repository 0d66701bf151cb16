package cli

import (
	"context"
	"crypto/sha256"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"

	"lodestone/app/restore"
	"lodestone/app/session"
)

// Tests of hostile but realistic use of the headless commands: each checks
// the status, the message (file, line, the flag or setting named) and that
// nothing was written or destroyed.

// digest returns the SHA-256 of every regular file under dir, by name.
func digest(t *testing.T, dir string) map[string]string {
	t.Helper()
	out := map[string]string{}
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range es {
		b, err := os.ReadFile(filepath.Join(dir, e.Name()))
		if err != nil {
			continue
		}
		out[e.Name()] = fmt.Sprintf("%x", sha256.Sum256(b))
	}
	return out
}

func sameDigest(t *testing.T, dir string, before map[string]string) {
	t.Helper()
	after := digest(t, dir)
	if fmt.Sprint(after) != fmt.Sprint(before) {
		t.Fatalf("the files of %s changed:\nbefore %v\nafter  %v", dir, before, after)
	}
}

// wantRefused runs args and checks status 2, a one-line message holding
// every part of want, and that dir's files are unchanged.
func wantRefused(t *testing.T, dir string, want []string, args ...string) {
	t.Helper()
	before := digest(t, dir)
	code, _, errs := run(t, args...)
	if code != ExitUsage {
		t.Fatalf("%v: status %d, want 2; stderr %q", args, code, errs)
	}
	last := strings.TrimSpace(errs)
	if i := strings.LastIndex(last, "\n"); i >= 0 {
		last = last[i+1:]
	}
	for _, w := range want {
		if !strings.Contains(last, w) {
			t.Errorf("%v: message %q does not say %q", args, last, w)
		}
	}
	sameDigest(t, dir, before)
}

func TestOutputEqualToAnInputIsRefused(t *testing.T) {
	dir := writeExample(t)
	other := t.TempDir()
	link := filepath.Join(other, "link.tsv")
	os.Symlink(filepath.Join(dir, "annotations.tsv"), link)
	hard := filepath.Join(other, "hard.mtx")
	if err := os.Link(filepath.Join(dir, "counts.mtx"), hard); err != nil {
		t.Skipf("no hard links here: %v", err)
	}
	mtx := filepath.Join(dir, "counts.mtx")
	cases := []struct {
		args []string
		want []string
	}{
		{[]string{"embed", "--in", mtx, "--out", mtx}, []string{"--out " + mtx + " is the same file as --in " + mtx}},
		{[]string{"embed", "--in", dir, "--out", filepath.Join(dir, "cells.tsv")}, []string{"is the same file as the input file", "cells.tsv"}},
		{[]string{"embed", "--in", dir, "--out", filepath.Join(dir, "x", "..", "genes.tsv")}, []string{"same file", "genes.tsv"}},
		{[]string{"embed", "--in", dir, "--out", link}, []string{"--out " + link, "annotations.tsv"}},
		{[]string{"embed", "--in", dir, "--out", hard}, []string{"--out " + hard, "counts.mtx"}},
		{[]string{"embed", "--in", mtx, "--cell-labels", filepath.Join(dir, "cells.tsv"), "--out", filepath.Join(dir, "cells.tsv")}, []string{"same file as --cell-labels"}},
		{[]string{"embed", "--in", dir, "--out", filepath.Join(other, "s.lodestone"), "--session", filepath.Join(other, ".", "s.lodestone")}, []string{"--out", "--session", "are the same file"}},
		{[]string{"cluster", "--in", dir, "--out", mtx}, []string{"same file as the input file " + mtx}},
		{[]string{"embed", "--in", dir, "--init", filepath.Join(other, "l.csv"), "--out", filepath.Join(other, "l.csv")}, []string{"is the same file as --init"}},
		{[]string{"score", "--in", dir, "--layout", mtx, "--out", mtx}, nil}, // score has no --out: a usage error too
		{[]string{"embed", "--in", dir, "--out", other}, []string{"--out: cannot write " + other + ": it is a folder"}},
		{[]string{"embed", "--in", dir, "--out", filepath.Join(other, "no", "such", "x.csv")}, []string{"--out: cannot write " + filepath.Join(other, "no", "such", "x.csv") + ": its folder " + filepath.Join(other, "no", "such") + " does not exist"}},
	}
	for _, c := range cases {
		os.Mkdir(filepath.Join(dir, "x"), 0o755)
		wantRefused(t, dir, c.want, append(c.args, smallFlags...)...)
		if _, err := os.Stat(filepath.Join(other, "s.lodestone")); err == nil {
			t.Fatal("a session was written")
		}
	}
}

func TestOutputsThatAreNotRegularFiles(t *testing.T) {
	dir := writeExample(t)
	other := t.TempDir()
	args := func(out string) []string {
		return append([]string{"embed", "--in", dir, "--out", out, "--iterations", "30", "--quiet"}, smallFlags...)
	}
	// A symbolic link: its target is replaced, the link stays.
	target := filepath.Join(other, "real.csv")
	os.WriteFile(target, []byte("old"), 0o644)
	link := filepath.Join(other, "link.csv")
	os.Symlink("real.csv", link)
	code, _, errs := run(t, args(link)...)
	if code != ExitOK || !strings.Contains(errs, "--out "+link+" is a symbolic link: wrote its target "+target) {
		t.Fatalf("status %d, stderr %q", code, errs)
	}
	if fi, _ := os.Lstat(link); fi.Mode()&os.ModeSymlink == 0 {
		t.Fatal("the link was replaced")
	}
	if b, _ := os.ReadFile(target); !strings.HasPrefix(string(b), "id,x,y\n") {
		t.Fatalf("target holds %q", b[:min(20, len(b))])
	}
	// A named pipe: written through, still a pipe.
	fifo := filepath.Join(other, "fifo")
	if err := syscall.Mkfifo(fifo, 0o600); err != nil {
		t.Skipf("mkfifo: %v", err)
	}
	got := make(chan int)
	go func() {
		f, err := os.Open(fifo)
		if err != nil {
			got <- -1
			return
		}
		b, _ := io.ReadAll(f)
		f.Close()
		got <- strings.Count(string(b), "\n")
	}()
	code, _, errs = run(t, args(fifo)...)
	if n := <-got; code != ExitOK || n < 1000 || !strings.Contains(errs, "is a named pipe: wrote to it directly") {
		t.Fatalf("status %d, %d lines through the pipe, stderr %q", code, n, errs)
	}
	if fi, _ := os.Lstat(fifo); fi.Mode()&os.ModeNamedPipe == 0 {
		t.Fatal("the pipe was replaced")
	}
	// A device that refuses data: a failure (1), and the device stays.
	if fi, err := os.Lstat("/dev/full"); err == nil && fi.Mode()&os.ModeCharDevice != 0 {
		code, _, errs = run(t, args("/dev/full")...)
		if after, _ := os.Lstat("/dev/full"); code != ExitFailed || !strings.Contains(errs, "/dev/full") || after.Mode()&os.ModeCharDevice == 0 {
			t.Fatalf("status %d, stderr %q, mode now %v", code, errs, after.Mode())
		}
	}
}

func TestLabelFilesAreNeverGuessedWrong(t *testing.T) {
	dir := writeExample(t)
	other := t.TempDir()
	cells, _ := os.ReadFile(filepath.Join(dir, "cells.tsv"))
	long := filepath.Join(other, "r.tsv")
	os.WriteFile(long, append(cells, "extra\n"...), 0o644)
	out := filepath.Join(other, "layout.csv")
	mtx := filepath.Join(dir, "counts.mtx")
	// One line too many: refused, naming the file, its count and the matrix.
	wantRefused(t, other, []string{long, "1201 cell labels on 1201 lines", `"bcomb-c000001" is not a column name`, "1200 rows and 300 columns", "--label-header"},
		append([]string{"embed", "--in", mtx, "--rows", long, "--out", out}, smallFlags...)...)
	// The new name and the old one, disagreeing.
	wantRefused(t, other, []string{"--cell-labels or its old name --rows"},
		"embed", "--in", mtx, "--rows", long, "--cell-labels", filepath.Join(dir, "cells.tsv"), "--out", out)
	// Swapped files: the names say so.
	wantRefused(t, other, []string{"genes.tsv", "given as the cell labels, but its name says it lists genes"},
		"embed", "--in", mtx, "--cell-labels", filepath.Join(dir, "genes.tsv"), "--gene-labels", filepath.Join(dir, "cells.tsv"), "--out", out)
	// A pipe cannot be read twice.
	r, w, _ := os.Pipe()
	defer r.Close()
	go func() { w.Write(cells); w.Close() }()
	wantRefused(t, other, []string{"not a regular file", "it is a pipe", "save it to a file first"},
		"embed", "--in", mtx, "--cell-labels", fmt.Sprintf("/dev/fd/%d", r.Fd()), "--out", out)

	// A folder with unrelated files that fit the same dimension.
	folder := t.TempDir()
	for _, f := range []string{"counts.mtx", "cells.tsv", "genes.tsv"} {
		b, _ := os.ReadFile(filepath.Join(dir, f))
		os.WriteFile(filepath.Join(folder, f), b, 0o644)
	}
	var notes strings.Builder
	for i := range 1200 {
		fmt.Fprintf(&notes, "entry%04d\n", i)
	}
	os.WriteFile(filepath.Join(folder, "notes.txt"), []byte(notes.String()), 0o644)
	wantRefused(t, folder, []string{"cells.tsv", "notes.txt", "--cell-labels and --gene-labels"},
		append([]string{"embed", "--in", folder, "--out", out}, smallFlags...)...)
	// Named, it opens, and progress says which file gave what; the session
	// keeps the name, so the atlas is read again the same way.
	sess := filepath.Join(other, "map.lodestone")
	code, _, errs := run(t, append([]string{"embed", "--in", folder, "--cell-labels", filepath.Join(folder, "cells.tsv"), "--out", out,
		"--session", sess, "--iterations", "30"}, smallFlags...)...)
	if code != ExitOK || !strings.Contains(errs, "cells from cells.tsv (1200, given), genes from genes.tsv (300, found beside it)") {
		t.Fatalf("status %d, stderr %q", code, errs)
	}
	s, err := session.Read(sess)
	if err != nil || s.Reading == nil || s.Reading.CellLabels != filepath.Join(folder, "cells.tsv") {
		t.Fatalf("session %v, reading %+v", err, s.Reading)
	}
	d, err := restore.Load(context.Background(), s, nil)
	if err != nil || d.Cells() != 1200 || d.CellIDs[0] != "bcomb-c000001" {
		t.Fatalf("reading again: %v", err)
	}
}

func TestQualityControlReportsAndRefuses(t *testing.T) {
	dir := writeExample(t)
	out := filepath.Join(t.TempDir(), "layout.csv")
	// Every filter's removals on the error stream; a warning when most
	// cells go.
	code, _, errs := run(t, "embed", "--in", dir, "--out", out, "--pcs", "15", "--genes", "200", "--min-genes", "170", "--iterations", "30")
	if code != ExitOK || !strings.Contains(errs, "quality control kept") || !strings.Contains(errs, "cells with fewer than 170 detected genes") {
		t.Fatalf("status %d, stderr %q", code, errs)
	}
	if !strings.Contains(errs, "warning: quality control removed") {
		t.Fatalf("no warning for a filter that removes most cells: %q", errs)
	}
	// Too few left: refused with the filters' numbers, nothing written.
	os.Remove(out)
	wantRefused(t, filepath.Dir(out), []string{"a map needs at least 10 cells", "passed quality control", "cells with fewer than 200 detected genes", "perplexity"},
		"embed", "--in", dir, "--out", out, "--min-genes", "200")
	// A perplexity the cells cannot meet, named.
	wantRefused(t, filepath.Dir(out), []string{"--perplexity 20", "46 cells passed quality control", "below a third of them (15.33)"},
		"embed", "--in", dir, "--out", out, "--min-genes", "185", "--perplexity", "20", "--pcs", "5", "--genes", "50")
	// More components than the atlas allows.
	wantRefused(t, filepath.Dir(out), []string{"--pcs 300", "1200 cells and 200 highly variable genes", "at most 199"},
		"embed", "--in", dir, "--out", out, "--pcs", "300", "--genes", "200")
}

func TestDenseTablesRefuseWhatTheyCannotHold(t *testing.T) {
	dir := t.TempDir()
	var wide, narrow, big strings.Builder
	wide.WriteString("cell")
	for j := range 120 {
		fmt.Fprintf(&wide, ",g%d", j)
	}
	narrow.WriteString("cell,PC1,PC2,PC3\n")
	big.WriteString("cell,PC1,PC2,PC3\n")
	wide.WriteString("\n")
	for i := range 60 {
		fmt.Fprintf(&wide, "c%d", i)
		for j := range 120 {
			v := float64((i*7+j*3)%11) / 2
			if i == 40 && j == 17 {
				v = -0.25
			}
			fmt.Fprintf(&wide, ",%g", v)
		}
		wide.WriteString("\n")
		x := []float64{float64(i % 7), -float64(i % 5), float64(i%3) - 1}
		fmt.Fprintf(&narrow, "c%d,%g,%g,%g\n", i, x[0]*1e12, x[1]*1e12, x[2])
		if i == 30 {
			x[1] = -1e30
		}
		fmt.Fprintf(&big, "c%d,%g,%g,%g\n", i, x[0], x[1], x[2])
	}
	files := map[string]string{"wide.csv": wide.String(), "narrow.csv": narrow.String(), "big.csv": big.String()}
	for n, s := range files {
		os.WriteFile(filepath.Join(dir, n), []byte(s), 0o644)
	}
	out := filepath.Join(t.TempDir(), "layout.csv")
	// Expression (more than 100 columns) is never negative: file:line:column.
	wantRefused(t, filepath.Dir(out), []string{filepath.Join(dir, "wide.csv") + ":42:19: negative value", `"-0.25"`, `"g17"`},
		"embed", "--in", filepath.Join(dir, "wide.csv"), "--out", out, "--perplexity", "5")
	// A magnitude distances cannot hold: named with its place.
	wantRefused(t, filepath.Dir(out), []string{filepath.Join(dir, "big.csv") + ":32:3: number too large", "-1e+30"},
		"embed", "--in", filepath.Join(dir, "big.csv"), "--out", out, "--perplexity", "5")
	// Components may be negative and large.
	if code, _, errs := run(t, "embed", "--in", filepath.Join(dir, "narrow.csv"), "--out", out, "--perplexity", "5", "--iterations", "50", "--quiet"); code != ExitOK {
		t.Fatalf("narrow table: status %d: %s", code, errs)
	}
}

func TestTooFewCellsNamesTheSetting(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "three.csv")
	os.WriteFile(p, []byte("cell,PC1,PC2\nc1,1,2\nc2,3,1\nc3,0,0\n"), 0o644)
	wantRefused(t, dir, []string{"a map needs at least 10 cells", "the table has 3", "the perplexity (30) would have to fall below 3"},
		"embed", "--in", p, "--out", filepath.Join(dir, "x.csv"))
	// Clustering has no perplexity: its message names the graph's neighbours.
	wantRefused(t, dir, []string{"a neighbour graph needs at least 10 cells", "the table has 3", "each has at most 2 neighbours, and the graph asks for 15"},
		"cluster", "--in", p, "--out", filepath.Join(dir, "x.csv"))
}

func TestDamagedSessionsAndAnnotationsAreNotSilent(t *testing.T) {
	dir := writeExample(t)
	other := t.TempDir()
	sess := filepath.Join(other, "map.lodestone")
	if code, _, errs := run(t, append([]string{"embed", "--in", dir, "--session", sess, "--iterations", "30", "--quiet"}, smallFlags...)...); code != ExitOK {
		t.Fatalf("embed: %s", errs)
	}
	s, err := session.Read(sess)
	if err != nil {
		t.Fatal(err)
	}
	for name, c := range map[string]struct {
		damage func([]float32)
		want   string
	}{
		"all NaN": {func(l []float32) {
			for i := range l {
				l[i] = float32(math.NaN())
			}
		}, "the layout has no point with finite coordinates"},
		"one point": {func(l []float32) { l[7] = float32(math.Inf(1)) }, "the layout has 1 of"},
	} {
		d := *s
		d.Layout = append([]float32(nil), s.Layout...)
		c.damage(d.Layout)
		bad := filepath.Join(other, "bad.lodestone")
		f, _ := os.Create(bad)
		if err := session.Encode(f, &d); err != nil {
			t.Fatal(err)
		}
		f.Close()
		wantRefused(t, other, []string{bad, c.want}, "figure", "--session", bad, "--out", filepath.Join(other, name+".png"))
	}

	// Duplicate cell IDs and a few marks in a numeric column of the
	// annotation table: both said, the column kept numeric.
	ann, _ := os.ReadFile(filepath.Join(dir, "annotations.tsv"))
	lines := strings.Split(strings.TrimSuffix(string(ann), "\n"), "\n")
	lines = append(lines, lines[1]) // a second row for the first cell
	f := strings.Split(lines[2], "\t")
	f[len(f)-1] = "-" // the maturation of the second cell
	lines[2] = strings.Join(f, "\t")
	meta := filepath.Join(other, "meta.tsv")
	os.WriteFile(meta, []byte(strings.Join(lines, "\n")+"\n"), 0o644)
	out := filepath.Join(other, "layout.csv")
	code, _, errs := run(t, append([]string{"embed", "--in", dir, "--meta", meta, "--out", out, "--iterations", "30"}, smallFlags...)...)
	if code != ExitOK || !strings.Contains(errs, "warning: meta.tsv names 1 cell on more than one row (bcomb-c000001)") ||
		!strings.Contains(errs, `warning: meta.tsv: column "maturation": 1 value that is not a number ("-") read as missing`) {
		t.Fatalf("status %d, stderr %q", code, errs)
	}
}

// TestOutputEqualToASessionInputIsRefused: a command that reads the inputs
// of a session again never writes over one of them — a label file the
// session names (refused before anything is read) or a file found in the
// folder it was opened from (refused once it is found) — and the folder is
// left as it was.
func TestOutputEqualToASessionInputIsRefused(t *testing.T) {
	dir := writeExample(t)
	other := t.TempDir()
	labels := filepath.Join(other, "cells-given.tsv")
	cells, _ := os.ReadFile(filepath.Join(dir, "cells.tsv"))
	os.WriteFile(labels, cells, 0o644)
	folderSession := filepath.Join(other, "folder.lodestone")
	labelSession := filepath.Join(other, "labels.lodestone")
	mtx := filepath.Join(dir, "counts.mtx")
	for _, args := range [][]string{
		{"embed", "--in", dir, "--session", folderSession},
		{"embed", "--in", mtx, "--cell-labels", labels, "--session", labelSession},
	} {
		if code, _, errs := run(t, append(args, append([]string{"--iterations", "30", "--quiet"}, smallFlags...)...)...); code != ExitOK {
			t.Fatalf("%v: %s", args, errs)
		}
	}
	genes := filepath.Join(dir, "genes.tsv")
	for _, c := range []struct {
		args []string
		want []string
	}{
		{[]string{"recompute", "--session", folderSession, "--out", genes}, []string{"--out " + genes + " is the same file as the session's input file"}},
		{[]string{"markers", "--session", folderSession, "--by", "state", "--group", "seedbed", "--out", genes}, []string{"--out " + genes + " is the same file as the session's input file"}},
		{[]string{"recompute", "--session", labelSession, "--out", labels}, []string{"--out " + labels + " is the same file as the session's input file " + labels}},
		{[]string{"markers", "--session", labelSession, "--by", "state", "--group", "seedbed", "--out", labels}, []string{"the session's input file " + labels}},
	} {
		wantRefused(t, dir, c.want, c.args...)
		wantRefused(t, other, c.want, c.args...)
	}
	// A label file the session names is refused before the inputs are read.
	_, _, errs := run(t, "recompute", "--session", labelSession, "--out", labels)
	if strings.Count(errs, "\n") != 1 {
		t.Errorf("the inputs were read before the refusal: %q", errs)
	}
}
