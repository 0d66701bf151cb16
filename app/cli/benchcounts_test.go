package cli

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"lodestone/compute/ingest"
	"lodestone/sampledata"
)

// The atlas the counts section writes batch by batch reads back equal to
// the atlas generated in memory, plain and compressed in gzip members; the
// section's analysis reports every stage.
func TestBenchCountsAtlas(t *testing.T) {
	ctx := context.Background()
	data := t.TempDir()
	opt := sampledata.DefaultOptions()
	opt.Cells = 9000 // more than one batch of cells
	want, _, err := sampledata.Generate(ctx, opt)
	if err != nil {
		t.Fatal(err)
	}
	var notes []string
	note := func(s string) { notes = append(notes, s) }
	for _, gz := range []bool{false, true} {
		dir, err := ensureAtlas(ctx, data, opt.Cells, opt.Genes, opt.Seed, gz, note)
		if err != nil {
			t.Fatal(err)
		}
		if !atlasReady(dir, gz) {
			t.Fatalf("%s is not complete", dir)
		}
		d, err := ingest.Open(ctx, dir, ingest.Options{})
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(d.Counts.ToCSR(), want.Counts.ToCSR()) || !reflect.DeepEqual(d.CellIDs, want.CellIDs) ||
			!reflect.DeepEqual(d.GeneSymbols, want.GeneSymbols) || len(d.Annotations) != len(want.Annotations) {
			t.Fatalf("gzip %v: the atlas read back differs from the one generated", gz)
		}
	}
	if _, err := os.Stat(filepath.Join(atlasDir(data, opt.Cells, opt.Genes, opt.Seed, false) + ".partial")); !os.IsNotExist(err) {
		t.Error("a partial folder was left behind")
	}
	// A second call reuses the folder.
	notes = nil
	if _, err := ensureAtlas(ctx, data, opt.Cells, opt.Genes, opt.Seed, true, note); err != nil || len(notes) != 1 || !strings.HasPrefix(notes[0], "reusing") {
		t.Errorf("second call: %v, notes %q", err, notes)
	}

	if testing.Short() {
		return
	}
	var out bytes.Buffer
	if err := benchCountsRun(ctx, &out, atlasDir(data, opt.Cells, opt.Genes, opt.Seed, false), 20, 0, 1); err != nil {
		t.Fatal(err)
	}
	for _, stage := range []string{"reading the files", "quality control", "principal components", "nearest neighbours",
		"embedding, 20 iterations", "whole run", "painting by a gene", "markers: "} {
		if !strings.Contains(out.String(), "\t"+stage) {
			t.Errorf("no stage %q in the report:\n%s", stage, out.String())
		}
	}
	var table bytes.Buffer
	printCountsReport(&table, opt.Cells, opt.Genes, "dir", out.String())
	if !strings.Contains(table.String(), "principal components") || strings.Contains(table.String(), "\t") {
		t.Errorf("table:\n%s", table.String())
	}
}
