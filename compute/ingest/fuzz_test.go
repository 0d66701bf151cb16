package ingest

import (
	"bytes"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"lodestone/compute/atlas"
)

// The fuzz targets check that no input makes a reader panic, and that a
// reader either fails with an error or returns a structurally valid result.
// Seed inputs are in testdata/fuzz/<target>/.

// fuzzShapeLimit keeps fuzzed size lines from asking for huge row pointer
// arrays; a caller with label files makes the same check.
const fuzzShapeLimit = 1 << 16

func FuzzMatrixMarket(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte, transpose bool) {
		m, err := ReadMatrixMarket(bg, bytes.NewReader(data), "f.mtx", MatrixOptions{
			Transpose: func(h MatrixHeader) (bool, error) {
				if h.Rows > fuzzShapeLimit || h.Cols > fuzzShapeLimit {
					return false, errors.New("too large for fuzzing")
				}
				return transpose, nil
			},
		})
		if err != nil {
			checkErrorPosition(t, err)
			return
		}
		// Validate also checks that no stored value is zero, negative
		// (for counts) or not finite.
		if err := m.Validate(); err != nil {
			t.Fatalf("invalid matrix: %v", err)
		}
		if m.IsReal() {
			for _, v := range m.Real {
				if v < 0 {
					t.Fatalf("stored value %v", v)
				}
			}
		}
		// What was read writes and reads back the same.
		var b bytes.Buffer
		if err := WriteMatrixMarket(&b, m); err != nil {
			t.Fatal(err)
		}
		back, err := ReadMatrixMarket(bg, &b, "back.mtx", MatrixOptions{})
		if err != nil {
			t.Fatal(err)
		}
		sameCounts(t, back, m)
	})
}

// checkErrorPosition checks that a ParseError's position is not negative.
func checkErrorPosition(t *testing.T, err error) {
	var pe *ParseError
	if errors.As(err, &pe) && (pe.Line < 0 || pe.Column < 0 || pe.Err == nil) {
		t.Fatalf("bad error %#v", pe)
	}
}

func FuzzLabels(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		l, err := ReadLabels(bg, bytes.NewReader(data), "f.tsv", nil)
		if err != nil {
			checkErrorPosition(t, err)
			return
		}
		if len(l.IDs) == 0 || len(l.IDs) != len(l.Symbols) || l.Fields < 1 {
			t.Fatalf("%d IDs, %d symbols, %d fields", len(l.IDs), len(l.Symbols), l.Fields)
		}
		for _, id := range l.IDs {
			if strings.TrimSpace(id) == "" || strings.ContainsAny(id, "\t\n") {
				t.Fatalf("ID %q", id)
			}
		}
	})
}

func FuzzTable(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		ids, header, m, err := ReadTable(bg, bytes.NewReader(data), "f.csv", nil)
		if err != nil {
			checkErrorPosition(t, err)
			return
		}
		checkTable(t, ids, header, m)
	})
}

func checkTable(t *testing.T, ids, header []string, m *atlas.Dense) {
	t.Helper()
	if len(ids) == 0 || len(header) == 0 || m.Rows != len(ids) || m.Cols != len(header) || len(m.Data) != m.Rows*m.Cols {
		t.Fatalf("%d IDs, %d names, %d×%d with %d values", len(ids), len(header), m.Rows, m.Cols, len(m.Data))
	}
	seen := map[string]bool{}
	for _, id := range ids {
		if id == "" || seen[id] {
			t.Fatalf("ID %q empty or repeated", id)
		}
		seen[id] = true
	}
	for _, v := range m.Data {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			t.Fatalf("value %v", v)
		}
	}
}

var fuzzCells = []string{"a", "b", "c", "1", "x y"}

func FuzzAnnotations(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		cols, rep, err := ReadAnnotations(bg, bytes.NewReader(data), "f.csv", fuzzCells, nil)
		if err != nil {
			checkErrorPosition(t, err)
			return
		}
		checkAnnotations(t, cols, rep, len(fuzzCells))
	})
}

func checkAnnotations(t *testing.T, cols []atlas.Column, rep *atlas.JoinReport, cells int) {
	t.Helper()
	if len(cols) == 0 || rep.Matched < 1 || rep.Matched+rep.Unmatched != cells || len(rep.Duplicated) > rep.DuplicatedCount {
		t.Fatalf("%d columns, report %+v", len(cols), rep)
	}
	names := map[string]bool{}
	for _, c := range cols {
		if c.Len() != cells || names[c.Name] || c.Name == "" {
			t.Fatalf("column %q with %d values", c.Name, c.Len())
		}
		names[c.Name] = true
		switch c.Kind {
		case atlas.Categorical:
			for _, code := range c.Codes {
				if code < atlas.Missing || int(code) >= len(c.Levels) {
					t.Fatalf("column %q: code %d of %d levels", c.Name, code, len(c.Levels))
				}
			}
			for k := 1; k < len(c.Levels); k++ {
				if !NaturalLess(c.Levels[k-1], c.Levels[k]) {
					t.Fatalf("column %q: levels %q out of order", c.Name, c.Levels)
				}
			}
		case atlas.Continuous:
			for _, v := range c.Values {
				if math.IsInf(v, 0) {
					t.Fatalf("column %q: value %v", c.Name, v)
				}
			}
		default:
			t.Fatalf("column %q: kind %v", c.Name, c.Kind)
		}
	}
}

// fuzzFileBreak separates the files of a FuzzOpen input.
const fuzzFileBreak = "\x00/\x00"

func FuzzOpen(f *testing.F) {
	// data holds up to four files separated by fuzzFileBreak.
	f.Fuzz(func(t *testing.T, data []byte) {
		dir := t.TempDir()
		for k, part := range bytes.SplitN(data, []byte(fuzzFileBreak), 4) {
			if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("f%d", k)), part, 0o644); err != nil {
				t.Fatal(err)
			}
		}
		ds, err := Open(bg, dir, Options{})
		if err != nil {
			checkErrorPosition(t, err)
			if ds != nil {
				t.Fatal("dataset with an error")
			}
			return
		}
		n, g := ds.Cells(), ds.Features()
		if len(ds.GeneSymbols) != g || len(ds.Sources) == 0 {
			t.Fatalf("%d genes, %d symbols, sources %q", g, len(ds.GeneSymbols), ds.Sources)
		}
		switch {
		case ds.Counts != nil && ds.Table == nil:
			if err := ds.Counts.Validate(); err != nil || ds.Counts.Rows != n || ds.Counts.Cols != g {
				t.Fatalf("counts %d×%d for %d cells, %d genes: %v", ds.Counts.Rows, ds.Counts.Cols, n, g, err)
			}
		case ds.Table != nil && ds.Counts == nil:
			checkTable(t, ds.CellIDs, ds.GeneIDs, ds.Table)
		default:
			t.Fatal("want exactly one of counts and table")
		}
		if ds.Join != nil {
			checkAnnotations(t, ds.Annotations, ds.Join, n)
		}
	})
}

// FuzzLabelDiscovery fuzzes the label files beside a fixed 4 × 6 matrix
// (genes × cells): three files whose names hint at their roles or not.
// Open must not panic; when it succeeds, the cells and genes come from
// files that list exactly 6 and 4 names — or 4 and 6 when the label files
// say that the rows are cells (a file named for the cells listing 4 names),
// a reading Open must state in its notes — and no other plausible label file
// in the folder lists different names for the same dimension (a choice
// between two plausible files is never made silently).
func FuzzLabelDiscovery(f *testing.F) {
	f.Add([]byte(barcodes), []byte(geneLines), []byte("notes\n"))
	f.Add([]byte("barcode\n"+barcodes), []byte(geneNames), []byte(cellNames))
	f.Add([]byte(barcodes+"extra\n"), []byte(geneLines), []byte("a,b\n1,2\n"))
	f.Add([]byte(cellNames), []byte("# genes\n"+geneNames), []byte("cell\tsample\n"+cellNames))
	f.Add([]byte(barcodes), []byte(geneLines), []byte("w x\nv\nu\nt\ns\nr\n"))
	f.Add([]byte(barcodes), []byte(geneLines), []byte("\x00\n0\n0\n0\n"))
	f.Add([]byte("0\n\x01\n2\n7"), []byte("0"), []byte("0\n0\n0\n0\n0\n0"))
	mtx := mtxText(cellsByGenes, true)
	f.Fuzz(func(t *testing.T, a, b, c []byte) {
		dir := t.TempDir()
		files := map[string][]byte{"cells.tsv": a, "features.tsv": b, "other.txt": c}
		for n, data := range files {
			if err := os.WriteFile(filepath.Join(dir, n), data, 0o644); err != nil {
				t.Fatal(err)
			}
		}
		os.WriteFile(filepath.Join(dir, "m.mtx"), []byte(mtx), 0o644)
		ds, err := Open(bg, dir, Options{})
		if err != nil {
			checkErrorPosition(t, err)
			return
		}
		cells, genes := ds.Cells(), ds.Features()
		switch {
		case cells == 6 && genes == 4:
		case cells == 4 && genes == 6:
			if !strings.Contains(strings.Join(ds.Notes, " "), "as cells × genes") {
				t.Fatalf("read the 4 × 6 matrix's rows as cells without saying so: %q", ds.Notes)
			}
		default:
			t.Fatalf("%d cells and %d genes from a 4 × 6 matrix", cells, genes)
		}
		for _, dim := range []struct {
			ids []string
			n   int
		}{{ds.CellIDs, cells}, {ds.GeneIDs, genes}} {
			want := fmt.Sprint(sorted(dim.ids))
			for n, data := range files {
				p := &probe{path: filepath.Join(dir, n), first: firstLine(data)}
				if binaryStart(data) {
					continue // Open ignores binary files
				}
				if p.matrix = bytes.HasPrefix(p.first, []byte("%%MatrixMarket")); p.matrix || (bytes.IndexByte(p.first, ',') >= 0 && bytes.IndexByte(p.first, '\t') < 0) {
					continue
				}
				p.header = isLabelHeader(p.first)
				l, err := ReadLabels(bg, bytes.NewReader(data), n, nil)
				if err != nil {
					continue
				}
				if p.header {
					l.dropFirst()
				}
				spaced := false
				for _, id := range l.IDs {
					spaced = spaced || strings.Contains(id, " ")
				}
				if l.Len() == dim.n && !spaced && fmt.Sprint(sorted(l.IDs)) != want {
					t.Fatalf("took %q for %d names, but %s lists %q", dim.ids, dim.n, n, l.IDs)
				}
			}
		}
	})
}

// binaryStart reports whether data holds a NUL byte within the part of it
// that sniff reads, as Open's test for a binary file does.
func binaryStart(data []byte) bool {
	return bytes.IndexByte(data[:min(len(data), sniffBytes)], 0) >= 0
}

// firstLine returns the first non-blank line of data, as sniff sees it.
func firstLine(data []byte) []byte {
	data = bytes.TrimPrefix(data, utf8BOM)
	for _, l := range bytes.Split(data, []byte("\n")) {
		l = bytes.TrimSuffix(l, []byte("\r"))
		if len(bytes.TrimSpace(l)) > 0 {
			return l
		}
	}
	return nil
}

func sorted(s []string) []string {
	out := append([]string(nil), s...)
	sort.Strings(out)
	return out
}
