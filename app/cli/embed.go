package cli

import (
	"context"
	"fmt"
	"io"
	"math"
	"os"
	"os/signal"
	"path/filepath"

	"lodestone/app/live"
	"lodestone/app/session"
	"lodestone/compute/embed"
	"lodestone/compute/ingest"
	"lodestone/compute/pipeline"
	"lodestone/internal/atomicfile"
	"lodestone/sampledata"
)

func init() {
	register("embed", "compute a map (t-SNE at an attraction, or the spectral layout) and write it as CSV", runEmbed)
	register("example", "write the bundled, invented example atlas as Matrix Market, label and annotation files", runExample)
}

// interruptible returns a context cancelled by Ctrl-C.
func interruptible() (context.Context, context.CancelFunc) {
	return signal.NotifyContext(context.Background(), os.Interrupt)
}

func runEmbed(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("embed", "--in PATH [--rows FILE --cols FILE] [--meta FILE] --out layout.csv [flags]", stderr)
	var in inputFlags
	var pf prepFlags
	in.register(fs)
	pf.register(fs)
	out := fs.String("out", "", "CSV file to write, with header id,x,y")
	attraction := attractionFlag(1)
	fs.Var(&attraction, "attraction", "the attraction dial: 0.5 (separate groups) … 100 (continuous paths), or inf (spectral layout)")
	iterations := fs.Int("iterations", embed.DefaultIterations, "optimiser iterations, early exaggeration included")
	initName := fs.String("init", "pca", "initial layout: pca, spectral, or a layout CSV (id,x,y) to continue from")
	quiet := fs.Bool("quiet", false, "print no progress")
	sessionPath := fs.String("session", "", "also write a session file (.lodestone) that reopens the map in the window")
	if err := fs.parse(args); err != nil {
		return err
	}
	if *out == "" && *sessionPath == "" {
		return usagef("--out or --session is required")
	}
	if *iterations < 1 {
		return usagef("--iterations must be at least 1")
	}
	ctx, stop := interruptible()
	defer stop()
	b := newBar(stderr, *quiet)
	defer b.finish()

	warmFrom := ""
	switch *initName {
	case "pca":
	case "spectral":
		pf.init = pipeline.InitSpectral
	default:
		warmFrom = *initName
	}
	p, err := prepare(ctx, &in, &pf, b)
	if err != nil {
		return err
	}
	init := p.Init
	kind := live.Fresh
	if warmFrom != "" {
		if init, err = readLayout(ctx, warmFrom, p.CellIDs); err != nil {
			return err
		}
		kind = live.Warm
	}
	a := float64(attraction)
	opt := &live.TSNE{P: p.P, Seed: pf.seed, Threads: pf.threads}
	step := live.Step{Kind: kind, Attraction: a, Iterations: *iterations, Done: *iterations, Setting: p.Settings.Perplexity}
	var layout []float32
	if math.IsInf(a, 1) {
		b.report("spectral layout", 0, 1)
		layout, err = opt.Spectral(ctx, init)
		step = live.Step{Kind: live.Spectral, Attraction: a, Iterations: 15, Done: 15, Setting: p.Settings.Perplexity}
	} else {
		label := "t-SNE ρ=" + formatAttraction(a)
		layout, err = opt.Run(ctx, init, a, *iterations, kind == live.Fresh, func(f live.Frame) {
			b.report(label, int64(f.Iteration), int64(f.Iterations))
		})
	}
	if err != nil {
		return err
	}
	b.finish()
	if *out != "" {
		if err := writeLayout(*out, p.CellIDs, layout); err != nil {
			return err
		}
	}
	if *sessionPath != "" {
		s := &session.Session{
			Program: "lodestone " + session.ProgramVersion, Settings: session.FromSettings(p.Settings),
			CellIDs: p.CellIDs, Columns: session.FromColumns(p.Annotations),
			Layout: layout, Initial: init, Attraction: session.Attraction(a),
			History: session.FromSteps([]live.Step{step}),
			Paint:   session.Paint{Source: "plain"}, PointSize: 0, Opacity: 0,
		}
		if in.example {
			def := sampledata.DefaultOptions()
			s.Example = &session.Example{Cells: def.Cells, Genes: def.Genes, Seed: def.Seed}
		} else {
			abs, err := filepath.Abs(in.in)
			if err != nil {
				return err
			}
			s.OpenedPath = abs
			for _, src := range p.Sources {
				h, err := session.HashFile(src)
				if err != nil {
					return err
				}
				s.Inputs = append(s.Inputs, h)
			}
		}
		if err := session.Write(*sessionPath, s); err != nil {
			return err
		}
	}
	return nil
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
		if err := atomicfile.Write(filepath.Join(*out, f.name), f.write); err != nil {
			return err
		}
	}
	b.report("writing", 1, 1)
	b.finish()
	fmt.Fprintf(stdout, "wrote %d cells × %d genes to %s (counts.mtx, cells.tsv, genes.tsv, annotations.tsv)\n",
		d.Cells(), d.Features(), *out)
	return nil
}
