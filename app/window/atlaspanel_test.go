package window

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"lodestone/compute/ingest"
	"lodestone/compute/pipeline"
	"lodestone/sampledata"
)

// TestAtlasTabSaysWhichFilesGaveCellsAndGenes opens the example atlas from
// files and checks that the Atlas tab names the file of the cells and the
// file of the genes, as the reader chose them.
func TestAtlasTabSaysWhichFilesGaveCellsAndGenes(t *testing.T) {
	opt := sampledata.DefaultOptions()
	opt.Cells, opt.Genes = 300, 200
	d, _, err := sampledata.Generate(context.Background(), opt)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	write := func(name string, fill func(*os.File) error) {
		f, err := os.Create(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		defer f.Close()
		if err := fill(f); err != nil {
			t.Fatal(err)
		}
	}
	write("m.mtx", func(f *os.File) error { return ingest.WriteMatrixMarket(f, d.Counts) })
	write("barcodes.tsv", func(f *os.File) error { return ingest.WriteLabels(f, d.CellIDs, nil) })
	write("features.tsv", func(f *os.File) error { return ingest.WriteLabels(f, d.GeneIDs, d.GeneSymbols) })
	read, err := ingest.Open(context.Background(), dir, ingest.Options{})
	if err != nil {
		t.Fatal(err)
	}
	s := pipeline.Default()
	s.Prep.QC.MinGenes, s.Prep.Genes, s.Prep.PCA.Components, s.Perplexity = 20, 100, 10, 5
	p, err := pipeline.Features(context.Background(), read, s, nil)
	if err != nil {
		t.Fatal(err)
	}
	text := atlasSummary("m", read, p)
	if !strings.Contains(text, "cells from barcodes.tsv (300, found beside it), genes from features.tsv (200, found beside it)") {
		t.Fatalf("the Atlas tab does not say where the cells and genes came from:\n%s", text)
	}
}

// TestSavingThroughALinkSaysSo saves the selected cells' IDs to a symbolic
// link: its target gets the file, the link stays, and the status line says
// what happened.
func TestSavingThroughALinkSaysSo(t *testing.T) {
	dir := t.TempDir()
	target := filepath.Join(dir, "real.txt")
	link := filepath.Join(dir, "link.txt")
	if err := os.Symlink("real.txt", link); err != nil {
		t.Skipf("no symbolic links here: %v", err)
	}
	ch := chooserAnswering(link)
	u := newTestUI(t, ch)
	v := openFixture(t, u)
	onUI(func() { selectFirst(v, 10) })
	choose(t, u, "Export the selected cells' IDs…")
	waitForFile(t, target)
	waitFor(t, "the status line", 10*time.Second, func() bool {
		var note string
		onUI(func() { note = v.st.note })
		return strings.Contains(note, "is a symbolic link: wrote its target "+target)
	})
	if fi, err := os.Lstat(link); err != nil || fi.Mode()&os.ModeSymlink == 0 {
		t.Fatal("the link was replaced")
	}
}
