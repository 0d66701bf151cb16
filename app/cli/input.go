package cli

import (
	"context"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	"lodestone/app/restore"
	"lodestone/compute/atlas"
	"lodestone/compute/ingest"
	"lodestone/compute/neighbors"
	"lodestone/compute/pipeline"
	"lodestone/internal/atomicfile"
	"lodestone/sampledata"
)

// inputFlags name the atlas a command reads.
type inputFlags struct {
	in, rows, cols, meta string
	example              bool
}

func (f *inputFlags) register(fs *flags) {
	fs.StringVar(&f.in, "in", "", "the atlas: a Matrix Market file, a CSV/TSV table, or a folder")
	fs.StringVar(&f.rows, "rows", "", "label file of the Matrix Market file's cells (found beside it when not given)")
	fs.StringVar(&f.cols, "cols", "", "label file of the Matrix Market file's genes (found beside it when not given)")
	fs.StringVar(&f.meta, "meta", "", "annotation table keyed by cell ID (found beside the atlas when not given)")
	fs.BoolVar(&f.example, "example", false, "use the bundled, invented example atlas instead of --in")
}

// load reads the atlas. Files that cannot be read are usage errors.
func (f *inputFlags) load(ctx context.Context, b *bar) (*atlas.Dataset, error) {
	switch {
	case f.example && f.in != "":
		return nil, usagef("give either --in or --example, not both")
	case f.example:
		opt := sampledata.DefaultOptions()
		opt.Progress = func(done, total int64) { b.report("example atlas", done, total) }
		d, _, err := sampledata.Generate(ctx, opt)
		return d, err
	case f.in == "":
		return nil, usagef("--in is required (or --example)")
	}
	d, err := ingest.Open(ctx, f.in, ingest.Options{
		Cells: f.rows, Genes: f.cols, Annotations: f.meta,
		Progress: func(done, total int64) { b.report("reading", done, total) },
	})
	if err != nil {
		return nil, usageError{err}
	}
	return d, nil
}

// prepFlags are the settings of the preparation shared by the commands that
// compute a map or its scores.
type prepFlags struct {
	pcs, genes, threads int
	minGenes, minCells  int
	maxMito             float64
	perplexity          float64
	seed                int64
	metric              string
	init                pipeline.Init // set by the command; empty means the default
}

func (f *prepFlags) register(fs *flags) {
	d := pipeline.Default()
	fs.IntVar(&f.pcs, "pcs", d.Prep.PCA.Components, "principal components to keep")
	fs.IntVar(&f.genes, "genes", d.Prep.Genes, "highly variable genes to select")
	fs.Float64Var(&f.perplexity, "perplexity", d.Perplexity, "perplexity: the effective number of neighbours of each cell")
	fs.Int64Var(&f.seed, "seed", d.Seed, "seed of every random choice")
	fs.IntVar(&f.threads, "threads", 0, "goroutines to use (0: all processors)")
	fs.StringVar(&f.metric, "metric", "euclidean", "distance between cells: euclidean or cosine")
	fs.IntVar(&f.minGenes, "min-genes", d.Prep.QC.MinGenes, "quality control: keep cells with at least this many detected genes")
	fs.IntVar(&f.minCells, "min-cells", d.Prep.QC.MinCells, "quality control: keep genes detected in at least this many cells")
	fs.Float64Var(&f.maxMito, "max-mito", 1, "quality control: keep cells with at most this fraction of mitochondrial counts (1: off)")
}

func (f *prepFlags) settings() (pipeline.Settings, error) {
	s := pipeline.Default()
	if f.pcs < 1 || f.genes < 1 || f.perplexity <= 0 || f.threads < 0 || f.minGenes < 0 || f.minCells < 0 || f.maxMito <= 0 || f.maxMito > 1 {
		return s, usagef("--pcs, --genes and --perplexity must be positive, --threads, --min-genes and --min-cells not negative, --max-mito in (0, 1]")
	}
	s.Prep.QC.MinGenes = f.minGenes
	s.Prep.QC.MinCells = f.minCells
	s.Prep.QC.MaxMitoFraction = f.maxMito
	s.Prep.PCA.Components = f.pcs
	s.Prep.Genes = f.genes
	s.Perplexity = f.perplexity
	s.Seed = f.seed
	s.Threads = f.threads
	if f.init != "" {
		s.Init = f.init
	}
	switch strings.ToLower(f.metric) {
	case "euclidean":
		s.Metric = neighbors.Euclidean
	case "cosine":
		s.Metric = neighbors.Cosine
	default:
		return s, usagef("--metric %q: want euclidean or cosine", f.metric)
	}
	return s, nil
}

// prepare reads the atlas and runs the pipeline, reporting on b.
func prepare(ctx context.Context, in *inputFlags, pf *prepFlags, b *bar) (*pipeline.Prepared, error) {
	s, err := pf.settings()
	if err != nil {
		return nil, err
	}
	d, err := in.load(ctx, b)
	if err != nil {
		return nil, err
	}
	return pipeline.Prepare(ctx, d, s, stageReporter(b))
}

// attractionFlag parses an attraction: a number ≥ 0.5, or "inf" / "∞".
type attractionFlag float64

func (a *attractionFlag) String() string { return formatAttraction(float64(*a)) }

func (a *attractionFlag) Set(s string) error {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "inf", "infinity", "∞", "spectral":
		*a = attractionFlag(math.Inf(1))
		return nil
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || v < 0.5 || v > 1000 {
		return fmt.Errorf("want a number from 0.5 to 1000, or inf")
	}
	*a = attractionFlag(v)
	return nil
}

func formatAttraction(v float64) string {
	if math.IsInf(v, 1) {
		return "inf"
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

// writeLayout writes a layout as CSV with header id,x,y, atomically.
func writeLayout(path string, ids []string, layout []float32) error {
	return atomicfile.Write(path, func(w io.Writer) error {
		if _, err := io.WriteString(w, "id,x,y\n"); err != nil {
			return err
		}
		buf := make([]byte, 0, 64)
		for i, id := range ids {
			buf = appendCSVField(buf[:0], id)
			buf = append(buf, ',')
			buf = strconv.AppendFloat(buf, float64(layout[2*i]), 'g', -1, 32)
			buf = append(buf, ',')
			buf = strconv.AppendFloat(buf, float64(layout[2*i+1]), 'g', -1, 32)
			buf = append(buf, '\n')
			if _, err := w.Write(buf); err != nil {
				return err
			}
		}
		return nil
	})
}

// appendCSVField appends s quoted as RFC 4180 asks when it holds a comma, a
// quote or a line break.
func appendCSVField(dst []byte, s string) []byte {
	if !strings.ContainsAny(s, ",\"\r\n") {
		return append(dst, s...)
	}
	dst = append(dst, '"')
	dst = append(dst, strings.ReplaceAll(s, `"`, `""`)...)
	return append(dst, '"')
}

// readLayout reads a layout CSV (id,x,y) and orders it by ids. Every id must
// be present; extra rows are an error too, so that a layout of another atlas
// is not taken by mistake.
func readLayout(ctx context.Context, path string, ids []string) ([]float32, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, usageError{err}
	}
	defer f.Close()
	rowIDs, header, m, err := ingest.ReadTable(ctx, f, path, nil)
	if err != nil {
		return nil, usageError{err}
	}
	if m.Cols != 2 {
		return nil, usagef("%s: a layout has two numeric columns (x, y), found %d: %v", path, m.Cols, header)
	}
	pos := make(map[string]int, len(rowIDs))
	for i, id := range rowIDs {
		pos[id] = i
	}
	out := make([]float32, 2*len(ids))
	for i, id := range ids {
		r, ok := pos[id]
		if !ok {
			return nil, usagef("%s: no row for cell %q", path, id)
		}
		out[2*i], out[2*i+1] = m.At(r, 0), m.At(r, 1)
	}
	if len(rowIDs) != len(ids) {
		return nil, usagef("%s: %d rows for %d cells", path, len(rowIDs), len(ids))
	}
	return out, nil
}

// origin says where the atlas the flags name came from, for a session: the
// example with its options, or the path with the hashes of the files read
// (p.Sources).
func (f *inputFlags) origin(p *pipeline.Prepared) (restore.Origin, error) {
	if f.example {
		opt := sampledata.DefaultOptions()
		return restore.Origin{Example: &opt}, nil
	}
	ins, err := restore.Hash(p.Sources)
	if err != nil {
		return restore.Origin{}, err
	}
	return restore.Origin{Path: f.in, Inputs: ins}, nil
}
