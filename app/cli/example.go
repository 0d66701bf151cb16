package cli

import (
	"fmt"
	"io"
	"os"
	"path/filepath"

	"lodestone/compute/ingest"
	"lodestone/sampledata"
)

func init() {
	register("example", "write the bundled, invented example atlas as Matrix Market, label and annotation files", runExample)
}

func runExample(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("example", "--out DIR [--cells N] [--genes N] [--seed S]", stderr)
	out := fs.String("out", "", "folder to write into (created when missing)")
	def := sampledata.DefaultOptions()
	cells := fs.Int("cells", def.Cells, "number of cells")
	genes := fs.Int("genes", def.Genes, "number of genes")
	seed := fs.Int64("seed", def.Seed, "seed of the generator")
	quiet := fs.Bool("quiet", false, "print no progress")
	if err := fs.parse(args); err != nil {
		return err
	}
	if *out == "" {
		return usagef("--out is required")
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return usageError{err}
	}
	ctx, stop := interruptible()
	defer stop()
	b := newBar(stderr, *quiet)
	defer b.finish()
	opt := def
	opt.Cells, opt.Genes, opt.Seed = *cells, *genes, *seed
	opt.Progress = func(done, total int64) { b.report("generating", done, total) }
	d, _, err := sampledata.Generate(ctx, opt)
	if err != nil {
		return usageError{err}
	}
	files := []struct {
		name  string
		write func(io.Writer) error
	}{
		{"counts.mtx", func(w io.Writer) error { return ingest.WriteMatrixMarket(w, d.Counts) }},
		{"cells.tsv", func(w io.Writer) error { return ingest.WriteLabels(w, d.CellIDs, nil) }},
		{"genes.tsv", func(w io.Writer) error { return ingest.WriteLabels(w, d.GeneIDs, d.GeneSymbols) }},
		{"annotations.tsv", func(w io.Writer) error { return ingest.WriteAnnotations(w, d.CellIDs, d.Annotations) }},
	}
	for i, f := range files {
		b.report("writing", int64(i), int64(len(files)))
		if err := writeOutput(b, "out", filepath.Join(*out, f.name), f.write); err != nil {
			return err
		}
	}
	b.report("writing", 1, 1)
	b.finish()
	fmt.Fprintf(stdout, "wrote %d cells × %d genes to %s (counts.mtx, cells.tsv, genes.tsv, annotations.tsv)\n",
		d.Cells(), d.Features(), *out)
	return nil
}
