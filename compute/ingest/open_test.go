package ingest

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"lodestone/compute/atlas"
)

// cellsByGenes is the counts of the small test atlas, 6 cells × 4 genes.
var cellsByGenes = [][]float64{
	{1, 0, 0, 2},
	{0, 3, 0, 0},
	{0, 0, 0, 0},
	{4, 0, 5, 0},
	{0, 0, 0, 6},
	{7, 8, 0, 0},
}

// mtxText writes a as a Matrix Market file, transposed when genesByCells.
func mtxText(a [][]float64, genesByCells bool) string {
	if genesByCells {
		a = transposeDense(a)
	}
	var entries []string
	for j := range a[0] { // column by column, as most exports write
		for i := range a {
			if a[i][j] != 0 {
				entries = append(entries, fmt.Sprintf("%d %d %g", i+1, j+1, a[i][j]))
			}
		}
	}
	return fmt.Sprintf("%%%%MatrixMarket matrix coordinate integer general\n%d %d %d\n%s\n", len(a), len(a[0]), len(entries), strings.Join(entries, "\n"))
}

const (
	barcodes   = "AAACCTGA-1\nAAACGGGA-1\nAAAGATGC-1\nAACTCAGT-1\nAAGACCTC-1\nACGTACGT-1\n"
	geneLines  = "ENSG01\tCD3E\tGene Expression\nENSG02\tMS4A1\tGene Expression\nENSG03\tLYZ\tGene Expression\nENSG04\tNKG7\tGene Expression\n"
	cellNames  = "n1\nn2\nn3\nn4\nn5\nn6\n"
	geneNames  = "CD3E\nMS4A1\nLYZ\nNKG7\n"
	annotTable = "barcode,sample,depth\nAAAGATGC-1,s1,10.5\nAAACCTGA-1,s2,3\nTTTTTTTT-1,s3,1\n"
)

var barcodeIDs = strings.Fields(barcodes)

func checkAtlas(t *testing.T, ds *atlas.Dataset, cells, genes, symbols []string) {
	t.Helper()
	if ds == nil {
		t.Fatal("nil dataset")
	}
	if err := ds.Counts.Validate(); err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(ds.CellIDs, cells) || !reflect.DeepEqual(ds.GeneIDs, genes) || !reflect.DeepEqual(ds.GeneSymbols, symbols) {
		t.Errorf("cells %q genes %q symbols %q; want %q %q %q", ds.CellIDs, ds.GeneIDs, ds.GeneSymbols, cells, genes, symbols)
	}
	float32Equal(t, dense(ds.Counts), cellsByGenes)
}

func TestOpenFolder(t *testing.T) {
	// Reference: the counts written into the files (an exact comparison).
	dir := writeFiles(t, map[string]string{
		"counts.mtx":  mtxText(cellsByGenes, true),
		"one.txt":     barcodes,
		"two.txt":     geneLines,
		"meta.csv":    annotTable,
		"notes.md":    "# a readme\n\nnothing to see\n",
		".hidden.csv": "x,y\n1,2\n",
	})
	var notes []string
	var last, total int64
	calls := 0
	ds, err := Open(bg, dir, Options{
		Note: func(s string) { notes = append(notes, s) },
		Progress: func(done, tot int64) {
			if done < last {
				t.Errorf("progress went back from %d to %d", last, done)
			}
			last, total = done, tot
			calls++
		},
	})
	if err != nil {
		t.Fatal(err)
	}
	checkAtlas(t, ds, barcodeIDs, []string{"ENSG01", "ENSG02", "ENSG03", "ENSG04"}, []string{"CD3E", "MS4A1", "LYZ", "NKG7"})
	var want int64
	for _, f := range []string{"counts.mtx", "one.txt", "two.txt", "meta.csv"} {
		fi, _ := os.Stat(filepath.Join(dir, f))
		want += fi.Size()
	}
	if calls == 0 || last != want || total != want {
		t.Errorf("progress ended at %d of %d after %d calls, want %d of %d", last, total, calls, want, want)
	}
	if len(ds.Sources) != 4 || ds.Name != filepath.Base(dir) {
		t.Errorf("sources %q, name %q", ds.Sources, ds.Name)
	}
	if ds.Join == nil || ds.Join.Matched != 2 || ds.Join.Extra != 1 || len(ds.Annotations) != 2 {
		t.Fatalf("join %+v, %d columns", ds.Join, len(ds.Annotations))
	}
	if s := ds.Column("sample"); s == nil || s.Label(2) != "s1" || s.Label(0) != "s2" || s.Label(1) != "" {
		t.Errorf("sample column %+v", s)
	}
	joined := strings.Join(notes, " | ")
	for _, w := range []string{"genes × cells", "genes from two.txt (4, found beside it)", "cells from one.txt (6, found beside it)", "meta.csv"} {
		if !strings.Contains(joined, w) {
			t.Errorf("notes %q do not mention %q", joined, w)
		}
	}
}

func TestOpenMatrixFileGzipAnyName(t *testing.T) {
	dir := writeFiles(t, nil)
	os.WriteFile(filepath.Join(dir, "data.bin"), gz(t, []byte(mtxText(cellsByGenes, false))), 0o644)
	os.WriteFile(filepath.Join(dir, "c.gz"), gz(t, []byte(barcodes)), 0o644)
	os.WriteFile(filepath.Join(dir, "g"), []byte(geneLines), 0o644)
	ds, err := Open(bg, filepath.Join(dir, "data.bin"), Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkAtlas(t, ds, barcodeIDs, []string{"ENSG01", "ENSG02", "ENSG03", "ENSG04"}, []string{"CD3E", "MS4A1", "LYZ", "NKG7"})
	if ds.Annotations != nil || ds.Join != nil {
		t.Errorf("annotations %v", ds.Annotations)
	}
}

func TestOpenOrientationRules(t *testing.T) {
	plainGenes := []string{"CD3E", "MS4A1", "LYZ", "NKG7"}
	cells := strings.Fields(cellNames)
	cases := []struct {
		name         string
		genesByCells bool
		files        map[string]string
		cells, genes []string
		note         string
	}{
		// Rule 2: the genes file has a second field.
		{"fields", false, map[string]string{"x.txt": cellNames, "y.txt": geneLines}, cells, []string{"ENSG01", "ENSG02", "ENSG03", "ENSG04"}, "second field"},
		// Rule 3: names.
		{"names", false, map[string]string{"my_genes.txt": geneNames, "list.txt": cellNames}, cells, plainGenes, "names say so"},
		{"names, transposed", true, map[string]string{"features.txt": geneNames, "cells.txt": cellNames}, cells, plainGenes, "names say so"},
		// Rule 4: barcodes.
		{"barcodes", false, map[string]string{"x.txt": barcodes, "y.txt": geneNames}, barcodeIDs, plainGenes, "look like barcodes"},
		// Rule 5: rows are genes.
		{"default", true, map[string]string{"x.txt": cellNames, "y.txt": geneNames}, cells, plainGenes, "rows are taken to be genes"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			files := map[string]string{"m.mtx": mtxText(cellsByGenes, c.genesByCells)}
			for k, v := range c.files {
				files[k] = v
			}
			var notes []string
			ds, err := Open(bg, writeFiles(t, files), Options{Note: func(s string) { notes = append(notes, s) }})
			if err != nil {
				t.Fatal(err)
			}
			checkAtlas(t, ds, c.cells, c.genes, strings.Fields(geneNames))
			if !strings.Contains(strings.Join(notes, " "), c.note) {
				t.Errorf("notes %q do not say %q", notes, c.note)
			}
		})
	}
}

func TestOpenHeaderLines(t *testing.T) {
	// A label file one line longer than its dimension starts with a header.
	dir := writeFiles(t, map[string]string{
		"m.mtx":     mtxText(cellsByGenes, true),
		"cells.tsv": "barcode\n" + barcodes,
		"genes.tsv": "id\tname\n" + geneLines,
	})
	var notes []string
	ds, err := Open(bg, dir, Options{Note: func(s string) { notes = append(notes, s) }})
	if err != nil {
		t.Fatal(err)
	}
	checkAtlas(t, ds, barcodeIDs, []string{"ENSG01", "ENSG02", "ENSG03", "ENSG04"}, []string{"CD3E", "MS4A1", "LYZ", "NKG7"})
	if n := strings.Count(strings.Join(notes, "\n"), "for a header"); n != 2 {
		t.Errorf("%d header notes in %q", n, notes)
	}
}

func TestOpenHeaderLinesBesideAnnotations(t *testing.T) {
	// The cells file and a tab-separated annotation table both have one
	// line more than there are cells: the one with fewer fields lists them.
	dir := writeFiles(t, map[string]string{
		"m.mtx":    mtxText(cellsByGenes, true),
		"cells":    "barcode\n" + barcodes,
		"genes":    geneLines,
		"meta.tsv": "cell\tsample\n" + strings.ReplaceAll(barcodes, "\n", "\tq\n"),
	})
	ds, err := Open(bg, dir, Options{})
	if err != nil {
		t.Fatal(err)
	}
	checkAtlas(t, ds, barcodeIDs, []string{"ENSG01", "ENSG02", "ENSG03", "ENSG04"}, []string{"CD3E", "MS4A1", "LYZ", "NKG7"})
	if ds.Join == nil || ds.Join.Matched != 6 || ds.Column("sample").Label(5) != "q" {
		t.Errorf("join %+v", ds.Join)
	}
}

func TestOpenExplicitLabels(t *testing.T) {
	dir := writeFiles(t, map[string]string{
		"m.mtx":  mtxText(cellsByGenes, false),
		"a":      geneNames,
		"b":      cellNames,
		"decoy1": geneNames,
		"decoy2": cellNames,
	})
	ds, err := Open(bg, filepath.Join(dir, "m.mtx"), Options{Cells: filepath.Join(dir, "b"), Genes: filepath.Join(dir, "a")})
	if err != nil {
		t.Fatal(err)
	}
	checkAtlas(t, ds, strings.Fields(cellNames), strings.Fields(geneNames), strings.Fields(geneNames))
	// One given, the other found (the decoys tie with the given files'
	// twins, so name only one and remove its twin).
	os.Remove(filepath.Join(dir, "decoy2"))
	ds, err = Open(bg, filepath.Join(dir, "m.mtx"), Options{Genes: filepath.Join(dir, "a")})
	if err != nil {
		t.Fatal(err)
	}
	checkAtlas(t, ds, strings.Fields(cellNames), strings.Fields(geneNames), strings.Fields(geneNames))
}

func TestOpenSquare(t *testing.T) {
	a := [][]float64{{1, 0}, {2, 3}}
	dir := writeFiles(t, map[string]string{"m.mtx": mtxText(a, false), "p.txt": "x\ny\n", "q.txt": "G1\tA\nG2\tB\n"})
	var notes []string
	ds, err := Open(bg, dir, Options{Note: func(s string) { notes = append(notes, s) }})
	if err != nil {
		t.Fatal(err)
	}
	// Rows are taken to be genes: the result is the transpose.
	float32Equal(t, dense(ds.Counts), [][]float64{{1, 2}, {0, 3}})
	if !reflect.DeepEqual(ds.CellIDs, []string{"x", "y"}) || !reflect.DeepEqual(ds.GeneSymbols, []string{"A", "B"}) {
		t.Errorf("cells %q symbols %q", ds.CellIDs, ds.GeneSymbols)
	}
	if !strings.Contains(strings.Join(notes, " "), "it is square; its rows are taken to be genes") {
		t.Errorf("notes %q", notes)
	}
}

func TestOpenTableFolder(t *testing.T) {
	dir := writeFiles(t, map[string]string{
		"pcs.csv":   "cell,PC1,PC2\nAAACCTGA-1,1.5,-2\nAAAGATGC-1,0,3\n",
		"meta.tsv":  "cell\tsample\nAAAGATGC-1\tx\n",
		"other.csv": "a,b\nq,w\n",
	})
	ds, err := Open(bg, dir, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if ds.Table == nil || ds.Counts != nil || !reflect.DeepEqual(ds.Table.Data, []float32{1.5, -2, 0, 3}) || !reflect.DeepEqual(ds.GeneIDs, []string{"PC1", "PC2"}) {
		t.Fatalf("table %+v, genes %q", ds.Table, ds.GeneIDs)
	}
	if ds.Join == nil || ds.Join.Matched != 1 || ds.Column("sample").Label(1) != "x" {
		t.Errorf("join %+v", ds.Join)
	}
	// A single table file opens on its own.
	ds, err = Open(bg, filepath.Join(dir, "pcs.csv"), Options{Annotations: filepath.Join(dir, "meta.tsv")})
	if err != nil || ds.Table.Rows != 2 || ds.Join.Matched != 1 {
		t.Fatalf("%v %+v", err, ds)
	}
}

func TestOpenErrors(t *testing.T) {
	mtx := mtxText(cellsByGenes, true)
	cases := []struct {
		name  string
		files map[string]string
		open  string // file to open, else the folder
		opt   func(dir string) Options
		err   error
		pos   *ParseError // file (base name), line and column, when a ParseError
		msg   string      // part of the message
	}{
		{"two matrices", map[string]string{"a.mtx": mtx, "b.mtx": mtx, "c": barcodes, "g": geneLines}, "", nil, ErrAmbiguous, nil, "2 Matrix Market files (a.mtx, b.mtx)"},
		{"no labels", map[string]string{"a.mtx": mtx, "c": "x\ny\n"}, "", nil, ErrLabelCount, nil, "want 1 label file(s) listing 4 names without spaces, one per line (the matrix is 4 × 6); found c (2 lines)"},
		{"one label file", map[string]string{"a.mtx": mtx, "c": barcodes}, "", nil, ErrLabelCount, nil, "found c (6 lines)"},
		{"two gene files", map[string]string{"a.mtx": mtx, "c": barcodes, "g1": geneLines, "g2": geneNames}, "", nil, ErrAmbiguous, nil, "2 files list 4 different names each (g1, g2)"},
		{"one list in two orders", map[string]string{"a.mtx": mtx, "c": barcodes, "g1": geneNames, "g2": "MS4A1\nCD3E\nLYZ\nNKG7\n"}, "", nil, ErrAmbiguous, nil, "g1 and g2 list the same 4 names in different orders"},
		{"explicit labels of the wrong size", map[string]string{"a.mtx": mtx, "c": barcodes, "g": geneLines, "x": "1\n2\n3\n"}, "a.mtx",
			func(dir string) Options { return Options{Cells: filepath.Join(dir, "x")} }, ErrLabelCount, nil, `x: label count matches no matrix dimension: 3 cell labels on 3 lines (its first line "1" is not a column name, so no header was taken), but the matrix a.mtx has 4 rows and 6 columns`},
		{"duplicate cells", map[string]string{"a.mtx": mtx, "c": "A\nB\nC\nD\nB\nF\n", "g": geneLines}, "", nil, ErrDuplicateID, &ParseError{File: "c", Line: 5, Column: 1}, `cell ID "B" already on line 2`},
		{"nothing", map[string]string{"readme": "hello\n"}, "", nil, ErrNothingToRead, nil, "no numeric table among 1 files (readme)"},
		{"two tables", map[string]string{"a.csv": "c,x\nr,1\n", "b.csv": "c,y\nr,2\n"}, "", nil, ErrAmbiguous, nil, "2 numeric tables (a.csv, b.csv)"},
		{"two annotation tables", map[string]string{"a.mtx": mtx, "c": barcodes, "g": geneLines, "m1.csv": annotTable, "m2.csv": annotTable}, "", nil, ErrAmbiguous, nil, "2 tables name cells (m1.csv, m2.csv)"},
		{"annotations match no cell", map[string]string{"a.mtx": mtx, "c": barcodes, "g": geneLines, "m.csv": "id,x\nq,1\n"}, "a.mtx",
			func(dir string) Options { return Options{Annotations: filepath.Join(dir, "m.csv")} }, ErrNoMatch, &ParseError{File: "m.csv"}, `such as "q", names a cell (cells are named like "AAACCTGA-1")`},
		{"bad entry", map[string]string{"a.mtx": strings.Replace(mtx, "\n1 1 1\n", "\n1 1 one\n", 1), "c": barcodes, "g": geneLines}, "", nil, ErrNotNumber, &ParseError{File: "a.mtx", Line: 3, Column: 3}, `value "one" is not an integer`},
		{"empty file", map[string]string{"e.csv": ""}, "e.csv", nil, ErrEmpty, &ParseError{File: "e.csv", Line: 1}, `empty file`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			dir := writeFiles(t, c.files)
			path := dir
			if c.open != "" {
				path = filepath.Join(dir, c.open)
			}
			var opt Options
			if c.opt != nil {
				opt = c.opt(dir)
			}
			ds, err := Open(bg, path, opt)
			if ds != nil || !errors.Is(err, c.err) {
				t.Fatalf("dataset %v, error %v; want %v", ds != nil, err, c.err)
			}
			if c.pos != nil {
				wantParseError(t, err, filepath.Join(dir, c.pos.File), c.pos.Line, c.pos.Column, c.err)
			}
			if !strings.Contains(err.Error(), c.msg) {
				t.Errorf("message %q does not say %q", err, c.msg)
			}
		})
	}
}

func TestOpenDuplicateEntryLines(t *testing.T) {
	// Entries not grouped by cell: the file is read again to find both
	// lines of a duplicate.
	mtx := "%%MatrixMarket matrix coordinate integer general\n4 6 4\n1 6 1\n2 1 1\n3 4 1\n2 1 7\n"
	dir := writeFiles(t, map[string]string{"a.mtx": mtx, "c": barcodes, "g": geneLines})
	_, err := Open(bg, dir, Options{})
	wantParseError(t, err, filepath.Join(dir, "a.mtx"), 6, 0, ErrDuplicateEntry)
	if !strings.Contains(err.Error(), "row 2, column 1 already given on line 4") {
		t.Errorf("message %q", err)
	}
}

func TestOpenCancelled(t *testing.T) {
	dir := writeFiles(t, map[string]string{"m.mtx": mtxText(cellsByGenes, true), "c": barcodes, "g": geneLines})
	ctx, cancel := context.WithCancel(bg)
	cancel()
	if ds, err := Open(ctx, dir, Options{}); ds != nil || !errors.Is(err, context.Canceled) {
		t.Errorf("error %v, want context.Canceled", err)
	}
}

func TestOpenNeverTakesAHeaderFromTheLineCount(t *testing.T) {
	mtx := mtxText(cellsByGenes, true) // 4 genes × 6 cells
	genes := strings.Fields(geneNames)
	t.Run("explicit file one line too long", func(t *testing.T) {
		// The first line is a cell, not a column name: refused, not
		// dropped (which would shift every ID by one).
		dir := writeFiles(t, map[string]string{"m.mtx": mtx, "r.tsv": barcodes + "extra\n", "g.tsv": geneNames})
		ds, err := Open(bg, filepath.Join(dir, "m.mtx"), Options{Cells: filepath.Join(dir, "r.tsv")})
		if ds != nil || !errors.Is(err, ErrLabelCount) {
			t.Fatalf("dataset %v, error %v", ds != nil, err)
		}
		for _, w := range []string{filepath.Join(dir, "r.tsv"), "7 cell labels on 7 lines", `"AAACCTGA-1" is not a column name`, "4 rows and 6 columns"} {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("message %q does not say %q", err, w)
			}
		}
	})
	t.Run("found file one line too long", func(t *testing.T) {
		dir := writeFiles(t, map[string]string{"m.mtx": mtx, "cells.tsv": barcodes + "extra\n", "genes.tsv": geneNames})
		_, err := Open(bg, dir, Options{})
		if !errors.Is(err, ErrLabelCount) || !strings.Contains(err.Error(), "cells.tsv (7 lines)") || !strings.Contains(err.Error(), "listing 6 names") {
			t.Fatalf("error %v", err)
		}
	})
	headers := []struct {
		name, first string
		opt         Header
		ok          bool
	}{
		{"column name", "barcode", HeaderAuto, true},
		{"quoted column name", `"Cell ID"`, HeaderAuto, true},
		{"comment", "# cells of run 3", HeaderAuto, true},
		{"said so", "whatever", HeaderFirst, true},
		{"said not", "barcode", HeaderNone, false},
		{"not a column name", "whatever", HeaderAuto, false},
	}
	for _, h := range headers {
		t.Run("header: "+h.name, func(t *testing.T) {
			dir := writeFiles(t, map[string]string{"m.mtx": mtx, "c.tsv": h.first + "\n" + barcodes, "g.tsv": geneNames})
			var notes []string
			ds, err := Open(bg, filepath.Join(dir, "m.mtx"), Options{Cells: filepath.Join(dir, "c.tsv"), CellsHeader: h.opt,
				Note: func(s string) { notes = append(notes, s) }})
			if !h.ok {
				if !errors.Is(err, ErrLabelCount) || !strings.Contains(err.Error(), "7 cell labels") {
					t.Fatalf("error %v", err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			checkAtlas(t, ds, barcodeIDs, genes, genes)
			if !strings.Contains(strings.Join(notes, " "), "Took the first line of c.tsv") {
				t.Errorf("notes %q", notes)
			}
		})
	}
}

func TestOpenFolderRefusesUnrelatedLabelFiles(t *testing.T) {
	mtx := mtxText(cellsByGenes, true) // 4 genes × 6 cells
	t.Run("a second list of six names", func(t *testing.T) {
		dir := writeFiles(t, map[string]string{"counts.mtx": mtx, "cells.tsv": barcodes, "genes.tsv": geneLines,
			"notes.txt": "alpha\nbeta\ngamma\ndelta\nepsilon\nzeta\n", "contacts.tsv": "ann\nbob\ncid\n"})
		_, err := Open(bg, dir, Options{})
		if !errors.Is(err, ErrAmbiguous) || !strings.Contains(err.Error(), "cells.tsv") || !strings.Contains(err.Error(), "notes.txt") {
			t.Fatalf("error %v, want ErrAmbiguous naming cells.tsv and notes.txt", err)
		}
	})
	t.Run("prose is no label file", func(t *testing.T) {
		dir := writeFiles(t, map[string]string{"counts.mtx": mtx, "genes.tsv": geneLines,
			"notes.txt": strings.Repeat("a line of notes\n", 6)})
		_, err := Open(bg, dir, Options{})
		if !errors.Is(err, ErrLabelCount) || !strings.Contains(err.Error(), "notes.txt (6 lines, IDs with spaces)") {
			t.Fatalf("error %v", err)
		}
	})
	t.Run("an annotation table in another order", func(t *testing.T) {
		rows := strings.Fields(barcodes)
		var meta strings.Builder
		meta.WriteString("barcode\tsample\n")
		for i := len(rows) - 1; i >= 0; i-- {
			fmt.Fprintf(&meta, "%s\ts%d\n", rows[i], i)
		}
		dir := writeFiles(t, map[string]string{"counts.mtx": mtx, "cells.tsv": barcodes, "genes.tsv": geneLines, "meta.tsv": meta.String()})
		var notes []string
		ds, err := Open(bg, dir, Options{Note: func(s string) { notes = append(notes, s) }})
		if err != nil {
			t.Fatal(err)
		}
		checkAtlas(t, ds, barcodeIDs, []string{"ENSG01", "ENSG02", "ENSG03", "ENSG04"}, strings.Fields(geneNames))
		if ds.Column("sample").Label(0) != "s0" || ds.Column("sample").Label(5) != "s5" {
			t.Errorf("annotations joined wrongly: %+v", ds.Column("sample"))
		}
		joined := strings.Join(notes, " ")
		if !strings.Contains(joined, "cells from cells.tsv (6, found beside it), genes from genes.tsv (4, found beside it)") || !reflect.DeepEqual(ds.Notes, notes) {
			t.Errorf("notes %q, dataset notes %q", notes, ds.Notes)
		}
	})
	t.Run("a copy of the cells", func(t *testing.T) {
		dir := writeFiles(t, map[string]string{"counts.mtx": mtx, "cells.tsv": barcodes, "copy.tsv": barcodes, "genes.tsv": geneLines})
		ds, err := Open(bg, dir, Options{})
		if err != nil {
			t.Fatal(err)
		}
		checkAtlas(t, ds, barcodeIDs, []string{"ENSG01", "ENSG02", "ENSG03", "ENSG04"}, strings.Fields(geneNames))
	})
}

func TestOpenExplicitLabelRoles(t *testing.T) {
	mtx := mtxText(cellsByGenes, false) // 6 cells × 4 genes
	dir := writeFiles(t, map[string]string{"m.mtx": mtx, "cells.tsv": cellNames, "genes.tsv": geneNames})
	at := func(n string) string { return filepath.Join(dir, n) }
	// Swapped: the names say so.
	_, err := Open(bg, at("m.mtx"), Options{Cells: at("genes.tsv"), Genes: at("cells.tsv")})
	if !errors.Is(err, ErrLabelRole) || !strings.Contains(err.Error(), "genes.tsv") || !strings.Contains(err.Error(), "its name says it lists genes") {
		t.Fatalf("error %v", err)
	}
	// MatrixRows that the counts contradict.
	_, err = Open(bg, at("m.mtx"), Options{Cells: at("cells.tsv"), MatrixRows: RowsGenes})
	if !errors.Is(err, ErrLabelCount) || !strings.Contains(err.Error(), "rows cannot be genes") {
		t.Fatalf("error %v", err)
	}
	// MatrixRows decides a square matrix.
	sq := writeFiles(t, map[string]string{"m.mtx": mtxText([][]float64{{1, 0}, {2, 3}}, false), "p.txt": "x\ny\n", "q.txt": "G1\tA\nG2\tB\n"})
	ds, err := Open(bg, sq, Options{MatrixRows: RowsCells})
	if err != nil {
		t.Fatal(err)
	}
	float32Equal(t, dense(ds.Counts), [][]float64{{1, 0}, {2, 3}})
	// Nothing tells which of two files lists the genes of a square matrix.
	sq = writeFiles(t, map[string]string{"m.mtx": mtxText([][]float64{{1, 0}, {2, 3}}, false), "p.txt": "x\ny\n", "q.txt": "u\nv\n"})
	if _, err := Open(bg, sq, Options{}); !errors.Is(err, ErrAmbiguous) || !strings.Contains(err.Error(), "nothing tells which lists the genes") {
		t.Fatalf("error %v", err)
	}
}
