package cli

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	"lodestone/app/restore"
	"lodestone/app/session"
	"lodestone/compute/atlas"
	"lodestone/compute/ingest"
	"lodestone/compute/neighbors"
	"lodestone/compute/pipeline"
	"lodestone/sampledata"
)

// inputFlags name the atlas a command reads.
type inputFlags struct {
	fs                     *flags
	in, cells, genes, meta string
	oldCells, oldGenes     string // --rows, --cols: the old names of --cell-labels, --gene-labels
	header, matrixRows     string
	example                bool
}

func (f *inputFlags) register(fs *flags) {
	f.fs = fs
	fs.inputPath(&f.in, "in", "the atlas: a Matrix Market file, a CSV/TSV table, or a folder")
	fs.inputPath(&f.cells, "cell-labels", "label file listing the Matrix Market file's cells, one per line (found beside it when not given)")
	fs.inputPath(&f.genes, "gene-labels", "label file listing the Matrix Market file's genes, one per line (found beside it when not given)")
	fs.inputPath(&f.oldCells, "rows", "old name of --cell-labels")
	fs.inputPath(&f.oldGenes, "cols", "old name of --gene-labels")
	fs.StringVar(&f.header, "label-header", "auto", "which label files given start with a header line: auto (those whose first line is a column name such as barcode or gene_id), none, cells, genes or both")
	fs.StringVar(&f.matrixRows, "matrix-rows", "", "what the Matrix Market file's rows are, cells or genes (default: decided from the label files)")
	fs.inputPath(&f.meta, "meta", "annotation table keyed by cell ID (found beside the atlas when not given)")
	fs.BoolVar(&f.example, "example", false, "use the bundled, invented example atlas instead of --in")
}

// options returns the reader's options for the label flags.
func (f *inputFlags) options() (ingest.Options, error) {
	var o ingest.Options
	pick := func(name, v, old, oldName string) (string, error) {
		if v != "" && old != "" && v != old {
			return "", usagef("give --%s or its old name --%s, not both", name, oldName)
		}
		if v == "" {
			v = old
		}
		return v, nil
	}
	var err error
	if o.Cells, err = pick("cell-labels", f.cells, f.oldCells, "rows"); err != nil {
		return o, err
	}
	if o.Genes, err = pick("gene-labels", f.genes, f.oldGenes, "cols"); err != nil {
		return o, err
	}
	switch strings.ToLower(f.header) {
	case "auto", "":
	case "none":
		o.CellsHeader, o.GenesHeader = ingest.HeaderNone, ingest.HeaderNone
	case "cells":
		o.CellsHeader, o.GenesHeader = ingest.HeaderFirst, ingest.HeaderNone
	case "genes":
		o.CellsHeader, o.GenesHeader = ingest.HeaderNone, ingest.HeaderFirst
	case "both":
		o.CellsHeader, o.GenesHeader = ingest.HeaderFirst, ingest.HeaderFirst
	default:
		return o, usagef("--label-header %q: want auto, none, cells, genes or both", f.header)
	}
	switch strings.ToLower(f.matrixRows) {
	case "":
	case "cells":
		o.MatrixRows = ingest.RowsCells
	case "genes":
		o.MatrixRows = ingest.RowsGenes
	default:
		return o, usagef("--matrix-rows %q: want cells or genes", f.matrixRows)
	}
	o.Annotations = f.meta
	return o, nil
}

// load reads the atlas, tells on b what the reader chose (which files gave
// the cells and the genes, how the matrix was read, duplicate annotation
// rows), and refuses an output that is one of the files read. Files that
// cannot be read are usage errors.
func (f *inputFlags) load(ctx context.Context, b *bar) (*atlas.Dataset, error) {
	opt, err := f.options()
	if err != nil {
		return nil, err
	}
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
	opt.Progress = func(done, total int64) { b.report("reading", done, total) }
	d, err := ingest.Open(ctx, f.in, opt)
	if err != nil {
		return nil, usageError{withHint(err)}
	}
	b.finish()
	for _, n := range d.Notes {
		if strings.Contains(n, "on more than one row") || strings.Contains(n, "read as missing") {
			b.warn("%s", n) // rows or values left out
		} else {
			b.note("%s", n)
		}
	}
	if f.fs != nil {
		if err := f.fs.checkRead("the input file", d.Sources); err != nil {
			return nil, err
		}
	}
	return d, nil
}

// withHint adds to a reader's error the flags that settle it.
func withHint(err error) error {
	msg := err.Error()
	var hint string
	switch {
	case strings.HasSuffix(msg, "; name the label files"):
		hint = "give them with --cell-labels and --gene-labels"
	case errors.Is(err, ingest.ErrLabelCount) && strings.Contains(msg, "labels on"):
		hint = "--label-header says which label files start with a header line"
	case errors.Is(err, ingest.ErrLabelRole):
		hint = "--cell-labels and --gene-labels name the files of the cells and of the genes"
	case strings.HasSuffix(msg, "; name the label file"):
		hint = "give it with --cell-labels or --gene-labels"
	case strings.HasSuffix(msg, "; choose the annotation table"):
		hint = "give it with --meta"
	case strings.HasSuffix(msg, "; open one of them"):
		hint = "give it with --in"
	default:
		return err
	}
	return fmt.Errorf("%w (%s)", err, hint)
}

// prepFlags are the settings of the preparation shared by the commands that
// compute a map or its scores.
type prepFlags struct {
	fs                  *flags
	pcs, genes, threads int
	minGenes, minCells  int
	maxMito             float64
	perplexity          float64
	seed                int64
	metric              string
	init                pipeline.Init // set by the command; empty means the default
	neighbors           int           // set by a command whose graph has a fixed k (cluster's --k); 0: from the perplexity
	integ               integrateFlags
}

func (f *prepFlags) register(fs *flags) {
	f.fs = fs
	d := pipeline.Default()
	fs.IntVar(&f.pcs, "pcs", d.Prep.PCA.Components, "principal components to keep")
	fs.IntVar(&f.genes, "genes", d.Prep.Genes, "highly variable genes to select")
	fs.Float64Var(&f.perplexity, "perplexity", d.Perplexity, "perplexity: the effective number of neighbours of each cell")
	fs.Int64Var(&f.seed, "seed", d.Seed, "seed of every random choice")
	fs.IntVar(&f.threads, "threads", 0, fmt.Sprintf("goroutines to use (0: all processors; at most %d)", pipeline.MaxThreads))
	fs.StringVar(&f.metric, "metric", "euclidean", "distance between cells: euclidean or cosine")
	fs.IntVar(&f.minGenes, "min-genes", d.Prep.QC.MinGenes, "quality control: keep cells with at least this many detected genes")
	fs.IntVar(&f.minCells, "min-cells", d.Prep.QC.MinCells, "quality control: keep genes detected in at least this many cells")
	fs.Float64Var(&f.maxMito, "max-mito", 1, "quality control: keep cells with at most this fraction of mitochondrial counts (1: off)")
	f.integ.register(fs)
}

// given reports whether the flag name was given on the command line.
func (f *prepFlags) given(name string) bool { return f.fs != nil && f.fs.set[name] }

// settings returns the pipeline's settings. The flags' ranges were checked
// when they were parsed (see bounds).
func (f *prepFlags) settings() (pipeline.Settings, error) {
	s := pipeline.Default()
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
	s.Neighbors = f.neighbors
	switch strings.ToLower(f.metric) {
	case "euclidean":
		s.Metric = neighbors.Euclidean
	case "cosine":
		s.Metric = neighbors.Cosine
	default:
		return s, usagef("--metric %q: want euclidean or cosine", f.metric)
	}
	if err := f.integ.apply(&s); err != nil {
		return s, err
	}
	return s, s.Validate()
}

// fitAtlas refuses settings given on the command line that the atlas read
// cannot meet before quality control: more components than the cells and
// genes analysed allow. Defaults are lowered to fit, with a note, instead.
func (f *prepFlags) fitAtlas(d *atlas.Dataset) error {
	if !f.given("pcs") {
		return nil
	}
	n, g := d.Cells(), d.Features()
	what := fmt.Sprintf("%d cells and %d genes", n, g)
	if d.Counts != nil && f.genes < g {
		g = f.genes
		what = fmt.Sprintf("%d cells and %d highly variable genes (--genes)", n, g)
	}
	if d.Table != nil && d.Table.Cols <= atlas.MaxFeatureColumns {
		return nil // the table's columns are the features; --pcs is not used
	}
	if limit := min(n, g) - 1; f.pcs > limit {
		return usagef("--pcs %d: the atlas has %s, which allow at most %d components (one fewer than the smaller)", f.pcs, what, limit)
	}
	return nil
}

// fitCells refuses settings given on the command line that the n cells
// that passed quality control cannot meet: a perplexity of a third of them
// or more. A default perplexity is lowered instead, with a note.
func (f *prepFlags) fitCells(n int) error {
	if f.given("perplexity") && f.perplexity >= float64(n)/3 {
		return usagef("--perplexity %g: %d cells passed quality control, and the perplexity must be below a third of them (%.4g)", f.perplexity, n, float64(n)/3)
	}
	return nil
}

// features reads the atlas and runs the preparation up to the features,
// reporting on b: the reader's choices, what each quality filter removed
// (a warning when it removed more than half of the cells), and the notes of
// the preparation. Settings the atlas cannot meet and an atlas left with
// too few cells are usage errors.
func features(ctx context.Context, in *inputFlags, pf *prepFlags, b *bar) (*pipeline.Prepared, error) {
	if _, err := pf.settings(); err != nil {
		return nil, err
	}
	d, err := in.load(ctx, b)
	if err != nil {
		return nil, err
	}
	return featuresOf(ctx, d, pf, b)
}

// featuresOf is features for an atlas already read.
func featuresOf(ctx context.Context, d *atlas.Dataset, pf *prepFlags, b *bar) (*pipeline.Prepared, error) {
	s, err := pf.settings()
	if err != nil {
		return nil, err
	}
	if err := pf.fitAtlas(d); err != nil {
		return nil, err
	}
	p, err := pipeline.Features(ctx, d, s, stageReporter(b))
	if err != nil {
		return nil, err
	}
	b.finish()
	if qc := p.Prep.QC; qc != nil {
		b.note("quality control %s", qc.Summary())
		if removed := qc.Cells - qc.CellsKept; 2*removed > qc.Cells {
			b.warn("quality control removed %d of %d cells (%.0f%%); check --min-genes, --min-cells and --max-mito: %s",
				removed, qc.Cells, 100*float64(removed)/float64(qc.Cells), qc.Summary())
		}
	}
	for _, n := range p.Notes {
		b.note("%s", n)
	}
	return p, pf.fitCells(p.Cells())
}

// prepare reads the atlas and runs the pipeline, reporting on b.
func prepare(ctx context.Context, in *inputFlags, pf *prepFlags, b *bar) (*pipeline.Prepared, error) {
	p, err := features(ctx, in, pf, b)
	if err != nil {
		return nil, err
	}
	return p, graph(ctx, p, b)
}

// graph completes a prepared atlas (pipeline.Graph), reporting on b.
func graph(ctx context.Context, p *pipeline.Prepared, b *bar) error {
	seen := len(p.Notes)
	if err := pipeline.Graph(ctx, p, stageReporter(b)); err != nil {
		return err
	}
	b.finish()
	for _, n := range p.Notes[seen:] {
		b.note("%s", n)
	}
	return nil
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

// writeLayout writes a layout as CSV with header id,x,y to the path of the
// output flag --out (see writeOutput).
func writeLayout(b *bar, path string, ids []string, layout []float32) error {
	return writeOutput(b, "out", path, func(w io.Writer) error {
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
	opt, err := f.options()
	return restore.Origin{Path: f.in, Inputs: ins, Open: opt}, err
}

// atlasFlags name the atlas a command works on: the input and preparation
// flags (inputFlags, prepFlags), or a session (--session) whose inputs and
// stored settings are used instead, so that the command sees the cells,
// annotation columns and groups of the map the session holds.
type atlasFlags struct {
	in      inputFlags
	prep    prepFlags
	session string
}

func (f *atlasFlags) register(fs *flags, sessionUse string) {
	f.in.register(fs)
	f.prep.register(fs)
	fs.inputPath(&f.session, "session", sessionUse)
}

// atlasFlagNames returns the names of the flags of inputFlags and
// prepFlags, which a session replaces.
func atlasFlagNames() map[string]bool {
	fs := &flags{FlagSet: flag.NewFlagSet("", flag.ContinueOnError)}
	var in inputFlags
	var pf prepFlags
	in.register(fs)
	pf.register(fs)
	names := map[string]bool{}
	fs.VisitAll(func(fl *flag.Flag) { names[fl.Name] = true })
	return names
}

// loaded is the atlas a command works on.
type loaded struct {
	*pipeline.Prepared
	Session *session.Session // nil without --session
	// Columns are the annotation columns: the session's when there is one
	// (they include columns added on its map), else the prepared atlas's.
	Columns []atlas.Column
}

// load prepares the atlas up to the features (pipeline.Features), or to the
// initial layout when full is set (pipeline.Prepare), or does the same with
// restore's counterparts from the session. check, when not nil, is called
// before the preparation with the annotation columns read (of all cells)
// and the session (nil without one), so that a command can
// refuse a bad choice before the long computation. Input and preparation
// flags beside --session, an unreadable session and unreadable inputs are
// usage errors.
func (f *atlasFlags) load(ctx context.Context, fs *flags, b *bar, full bool, check func([]atlas.Column, *session.Session) error) (*loaded, error) {
	if check == nil {
		check = func([]atlas.Column, *session.Session) error { return nil }
	}
	if f.session == "" {
		if _, err := f.prep.settings(); err != nil {
			return nil, err
		}
		d, err := f.in.load(ctx, b)
		if err != nil {
			return nil, err
		}
		if err := check(d.Annotations, nil); err != nil {
			return nil, err
		}
		p, err := featuresOf(ctx, d, &f.prep, b)
		if err != nil {
			return nil, err
		}
		if full {
			if err := graph(ctx, p, b); err != nil {
				return nil, err
			}
		}
		return &loaded{Prepared: p, Columns: p.Annotations}, nil
	}
	names := atlasFlagNames()
	var clash []string
	fs.Visit(func(fl *flag.Flag) {
		if names[fl.Name] {
			clash = append(clash, "--"+fl.Name)
		}
	})
	if len(clash) > 0 {
		return nil, usagef("%s: --session takes the atlas and its settings from the session", strings.Join(clash, ", "))
	}
	s, err := session.Read(f.session)
	if err != nil {
		return nil, usageError{err}
	}
	if err := fs.checkSession(s); err != nil {
		return nil, err
	}
	cols := restore.Annotations(s)
	if err := check(cols, s); err != nil {
		return nil, err
	}
	run := restore.Features
	if full {
		run = restore.Prepare
	}
	p, _, err := run(ctx, s, stageReporter(b))
	if err != nil {
		return nil, fmt.Errorf("session %s: %w", f.session, err)
	}
	b.finish()
	if err := fs.checkRead("the session's input file", p.Sources); err != nil {
		return nil, err
	}
	return &loaded{Prepared: p, Session: s, Columns: cols}, nil
}
