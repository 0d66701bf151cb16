package ingest

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"lodestone/compute/atlas"
	"lodestone/compute/progress"
)

// Options adjusts Open.
type Options struct {
	// Cells and Genes name label files listing the cells and the genes of
	// a Matrix Market file. Either may be empty; missing ones are looked
	// for beside the matrix.
	Cells, Genes string
	// Annotations names a table of per-cell annotations to join to the
	// cells. When empty, one is looked for beside the matrix or table.
	Annotations string
	// Progress receives the bytes read so far out of the total size on
	// disk (compressed size for gzip files) of all files Open reads.
	Progress progress.Func
	// Note, when not nil, receives one sentence for each choice Open makes
	// on its own: which file it took for what, how it oriented the
	// matrix, which first lines it took for headers.
	Note func(string)
}

// Open reads the atlas at path into memory. path may be
//
//   - a Matrix Market file (see ReadMatrixMarket), plain or gzip
//     compressed whatever its name; its cell and gene label files and
//     an annotation table are looked for beside it;
//   - a dense table (see ReadTable), plain or gzip compressed;
//   - a folder holding exactly one Matrix Market file with its two label
//     files, or exactly one dense table, and optionally one annotation
//     table, whatever the files are called.
//
// Files are recognised by their contents. Hidden files, empty files and
// binary files (a NUL byte near the start) are ignored.
//
// Label files. A label file (see ReadLabels) fits a dimension of the matrix
// when its count of non-blank lines equals it, or exceeds it by one; in
// that case its first line is taken as a header and left out. Among the
// files that fit a dimension, those that fit exactly come first; among
// those with a header line, those with fewer tab-separated fields; then
// those whose first line holds no comma; then those whose name shares the
// longest start with the matrix file's name. A tie for first place is an
// error (ErrAmbiguous) naming the files. No file fitting a dimension is an
// error (ErrLabelCount) listing the line counts found.
//
// Orientation. The counts are stored as cells × genes. Which of the two
// label files lists the genes is decided by the first rule that tells
// them apart:
//
//  1. the files given in Options;
//  2. the file whose lines have a second tab-separated field (a symbol);
//  3. the file whose name holds "gene" or "feature" rather than "cell" or
//     "barcode";
//  4. the file whose first ID looks like a nucleotide barcode lists cells;
//  5. otherwise the matrix's rows are genes, as most exports write them.
//
// Gene symbols are the genes file's second field where present, else the
// IDs. Cell IDs must be distinct (ErrDuplicateID).
//
// Annotation tables. Options.Annotations names one; otherwise the
// candidates are the other delimited files beside the matrix or table in
// which one of the first rows starts with a cell ID (for a dense table,
// one of the IDs in its first 4 MiB). One candidate is joined; several
// are an error (ErrAmbiguous) when path is a folder and are left out, with
// a note, when path is a file.
//
// Progress is the bytes read from disk of the files loaded, out of their
// total size; the quick looks at files made to choose them are not
// counted. The context is checked about every megabyte. On error, no
// dataset is returned.
func Open(ctx context.Context, path string, opt Options) (*atlas.Dataset, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	var pl *plan
	if fi.IsDir() {
		pl, err = planFolder(ctx, path, opt)
	} else {
		pl, err = planFile(ctx, path, opt)
	}
	if err != nil {
		return nil, err
	}
	ds, err := pl.load(ctx, opt)
	if err != nil {
		return nil, err
	}
	if opt.Note != nil {
		for _, n := range pl.notes {
			opt.Note(n)
		}
	}
	return ds, nil
}

// plan says which files Open reads and how.
type plan struct {
	name        string
	where       string // the folder or file opened, for messages
	folder      bool
	matrix      string
	table       string
	header      MatrixHeader
	cells       *probe
	genes       *probe
	cellsHeader bool
	genesHeader bool
	cellLabels  *Labels // read while planning, or nil
	transpose   bool    // the matrix file is genes × cells
	annotations string
	notes       []string
}

func (pl *plan) note(format string, args ...any) {
	pl.notes = append(pl.notes, fmt.Sprintf(format, args...))
}

// planFolder chooses the files of a folder.
func planFolder(ctx context.Context, dir string, opt Options) (*plan, error) {
	files, err := listFiles(ctx, dir, opt.Cells, opt.Genes, opt.Annotations)
	if err != nil {
		return nil, err
	}
	pl := &plan{name: filepath.Base(filepath.Clean(dir)), where: dir, folder: true}
	var matrices []*probe
	for _, p := range files {
		if p.matrix {
			matrices = append(matrices, p)
		}
	}
	switch len(matrices) {
	case 0:
		return pl, pl.planTable(ctx, files, nil, opt)
	case 1:
		pl.matrix = matrices[0].path
		return pl, pl.planMatrix(ctx, files, opt)
	}
	return nil, fmt.Errorf("ingest: %s: %w: %d Matrix Market files (%s); open one of them", dir, ErrAmbiguous, len(matrices), names(matrices))
}

// planFile chooses the files to read with the file at path.
func planFile(ctx context.Context, path string, opt Options) (*plan, error) {
	p, err := sniff(ctx, path)
	if err != nil {
		return nil, err
	}
	if p.size == 0 {
		return nil, errorf(path, 1, 0, ErrEmpty, "nothing to read")
	}
	pl := &plan{name: baseName(path), where: path}
	files, err := listFiles(ctx, filepath.Dir(path), path, opt.Cells, opt.Genes, opt.Annotations)
	if err != nil {
		return nil, err
	}
	if p.matrix {
		pl.matrix = path
		return pl, pl.planMatrix(ctx, files, opt)
	}
	return pl, pl.planTable(ctx, files, p, opt)
}

// baseName returns the file's name without directory and without the
// extensions .gz, .mtx, .csv, .tsv and .txt.
func baseName(path string) string {
	n := filepath.Base(path)
	for _, ext := range []string{".gz", ".mtx", ".csv", ".tsv", ".txt"} {
		if m := strings.TrimSuffix(n, ext); m != "" {
			n = m
		}
	}
	return n
}

func names(ps []*probe) string {
	s := make([]string, len(ps))
	for k, p := range ps {
		s[k] = p.name()
	}
	return strings.Join(s, ", ")
}

// planTable chooses a dense table (the given one, or the only one among
// files) and its annotation table.
func (pl *plan) planTable(ctx context.Context, files []*probe, table *probe, opt Options) error {
	var rest []*probe
	if table == nil {
		var dense []*probe
		for _, p := range files {
			if p.sep != 0 && denseRow(ctx, p.path) {
				dense = append(dense, p)
			} else {
				rest = append(rest, p)
			}
		}
		if err := ctx.Err(); err != nil {
			return err
		}
		switch len(dense) {
		case 0:
			return fmt.Errorf("ingest: %s: %w: no Matrix Market file and no numeric table among %d files (%s)", pl.where, ErrNothingToRead, len(files), names(files))
		case 1:
			table = dense[0]
		default:
			return fmt.Errorf("ingest: %s: %w: no Matrix Market file and %d numeric tables (%s); open one of them", pl.where, ErrAmbiguous, len(dense), names(dense))
		}
	} else {
		rest = files
	}
	pl.table = table.path
	if pl.folder {
		pl.note("Read %s as a numeric table.", table.name())
	}
	return pl.planAnnotations(ctx, rest, func() map[string]int32 { return sampleIDs(ctx, table.path) }, opt)
}

// planAnnotations chooses the annotation table among files.
func (pl *plan) planAnnotations(ctx context.Context, files []*probe, cells func() map[string]int32, opt Options) error {
	if opt.Annotations != "" {
		pl.annotations = opt.Annotations
		return nil
	}
	var index map[string]int32
	var found []*probe
	for _, p := range files {
		if p.sep == 0 || p.matrix {
			continue
		}
		if index == nil {
			if index = cells(); index == nil {
				return nil
			}
		}
		if matchesCells(ctx, p.path, index) {
			found = append(found, p)
		}
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	switch {
	case len(found) == 1:
		pl.annotations = found[0].path
		pl.note("Joined the annotations of %s.", found[0].name())
	case len(found) > 1 && pl.folder:
		return fmt.Errorf("ingest: %s: %w: %d tables name cells (%s); choose the annotation table", pl.where, ErrAmbiguous, len(found), names(found))
	case len(found) > 1:
		pl.note("Joined no annotations: %d tables name cells (%s); choose one.", len(found), names(found))
	}
	return nil
}

// planMatrix finds the label files of pl.matrix among files and decides the
// orientation.
func (pl *plan) planMatrix(ctx context.Context, files []*probe, opt Options) error {
	f, size, err := openFile(pl.matrix)
	if err != nil {
		return err
	}
	h, err := ReadMatrixHeader(ctx, f, pl.matrix)
	f.Close()
	if err != nil {
		return err
	}
	if size == 0 {
		return errorf(pl.matrix, 1, 0, ErrEmpty, "nothing to read")
	}
	pl.header = h
	limit := max(h.Rows, h.Cols) + 1
	given := func(path string) (*probe, error) {
		if path == "" {
			return nil, nil
		}
		p, err := sniff(ctx, path)
		if err != nil {
			return nil, err
		}
		return p, p.count(ctx, limit)
	}
	if pl.cells, err = given(opt.Cells); err != nil {
		return err
	}
	if pl.genes, err = given(opt.Genes); err != nil {
		return err
	}
	var cands []*probe
	for _, p := range files {
		if p.matrix {
			continue
		}
		if err := p.count(ctx, limit); err != nil {
			return err
		}
		if fits(p.lines, h.Rows) || fits(p.lines, h.Cols) {
			cands = append(cands, p)
		}
	}
	if err := pl.chooseLabels(cands); err != nil {
		return err
	}
	// Read the cells now: the annotation tables are recognised by them.
	l, err := readLabelsFile(ctx, pl.cells.path, nil)
	if err != nil {
		return err
	}
	pl.cellLabels = l
	var rest []*probe
	for _, p := range files {
		if p != pl.cells && p != pl.genes && !p.matrix {
			rest = append(rest, p)
		}
	}
	return pl.planAnnotations(ctx, rest, func() map[string]int32 {
		index := make(map[string]int32, len(l.IDs))
		for i, id := range l.IDs {
			index[id] = int32(i)
		}
		return index
	}, opt)
}

// fits reports whether a file of lines non-blank lines can label a
// dimension of n: exactly, or with one header line.
func fits(lines, n int) bool { return lines == n || lines == n+1 }

// ranker orders candidate label files for a dimension.
type ranker struct {
	cands []*probe
	path  string // the matrix file
	mname string // its name
	h     MatrixHeader
}

// key is the sort key of p as a label file for n: exact fits first; among
// files with a header line, those with fewer tab-separated fields (a table
// of annotations has a header line too); then files without commas on
// their first line; then those sharing the longest start with the matrix's
// name.
func (r *ranker) key(p *probe, n int) [4]int {
	k := [4]int{0, 0, 0, -commonPrefix(p.name(), r.mname)}
	if p.lines != n {
		k[0] = 1
		k[1] = min(p.fields, 3)
	}
	if p.sep == ',' {
		k[2] = 1
	}
	return k
}

// rank returns the candidates other than skip that fit n, best first.
func (r *ranker) rank(n int, skip *probe) []*probe {
	var out []*probe
	for _, p := range r.cands {
		if p != skip && fits(p.lines, n) {
			out = append(out, p)
		}
	}
	sort.SliceStable(out, func(a, b int) bool {
		ka, kb := r.key(out[a], n), r.key(out[b], n)
		for i := range ka {
			if ka[i] != kb[i] {
				return ka[i] < kb[i]
			}
		}
		return false
	})
	return out
}

// pick returns the best file for n, other than skip; want is 1 or 2 (two
// files for a square matrix).
func (r *ranker) pick(n int, skip *probe, want int) ([]*probe, error) {
	out := r.rank(n, skip)
	if len(out) < want {
		var seen []string
		for _, p := range r.cands {
			seen = append(seen, fmt.Sprintf("%s (%d lines)", p.name(), p.lines))
		}
		what := "no other text files"
		if len(seen) > 0 {
			what = strings.Join(seen, ", ")
		}
		return nil, fmt.Errorf("ingest: %s: %w: want %d label file(s) of %d lines (the matrix is %d × %d); found %s", r.path, ErrLabelCount, want, n, r.h.Rows, r.h.Cols, what)
	}
	if len(out) > want && r.key(out[want-1], n) == r.key(out[want], n) {
		tied := want + 1
		for tied < len(out) && r.key(out[tied], n) == r.key(out[want], n) {
			tied++
		}
		return nil, fmt.Errorf("ingest: %s: %w: %d files could label a dimension of %d (%s); name the label files", r.path, ErrAmbiguous, tied, n, names(out[:tied]))
	}
	return out[:want], nil
}

// chooseLabels picks the cells and genes files not given among cands and
// decides the orientation.
func (pl *plan) chooseLabels(cands []*probe) error {
	h := pl.header
	r := &ranker{cands: cands, path: pl.matrix, mname: filepath.Base(pl.matrix), h: h}
	for _, g := range []*probe{pl.cells, pl.genes} {
		if g != nil && !fits(g.lines, h.Rows) && !fits(g.lines, h.Cols) {
			return fmt.Errorf("ingest: %s: %w: %d lines, the matrix is %d × %d", g.path, ErrLabelCount, g.lines, h.Rows, h.Cols)
		}
	}
	switch {
	case pl.cells != nil && pl.genes != nil:
	case pl.cells != nil || pl.genes != nil:
		known := pl.cells
		if known == nil {
			known = pl.genes
		}
		n := h.Cols // the dimension the known file leaves
		if !fits(known.lines, h.Rows) || (fits(known.lines, h.Cols) && known.lines != h.Rows) {
			n = h.Rows
		}
		other, err := r.pick(n, known, 1)
		if err != nil {
			return err
		}
		if pl.cells == nil {
			pl.cells = other[0]
		} else {
			pl.genes = other[0]
		}
	default:
		var a, b *probe // a labels the rows when the matrix is not square
		if h.Rows == h.Cols {
			two, err := r.pick(h.Rows, nil, 2)
			if err != nil {
				return err
			}
			a, b = two[0], two[1]
		} else {
			rows, err := r.pick(h.Rows, nil, 1)
			if err != nil {
				return err
			}
			cols, err := r.pick(h.Cols, rows[0], 1)
			if err != nil {
				return err
			}
			a, b = rows[0], cols[0]
		}
		aGenes, why := whichGenes(a, b)
		if !aGenes {
			a, b = b, a
		}
		pl.genes, pl.cells = a, b
		pl.note("Took %s for the genes and %s for the cells: %s.", a.name(), b.name(), why)
	}
	nc, ng := pl.cells.lines, pl.genes.lines
	genesRows := fits(ng, h.Rows) && fits(nc, h.Cols)
	cellsRows := fits(nc, h.Rows) && fits(ng, h.Cols)
	switch {
	case !genesRows && !cellsRows:
		return fmt.Errorf("ingest: %s: %w: %s has %d lines and %s %d, the matrix is %d × %d", r.path, ErrLabelCount, pl.cells.name(), nc, pl.genes.name(), ng, h.Rows, h.Cols)
	case genesRows && cellsRows:
		// Square, or a header line makes both fit: prefer exact fits,
		// else rows are genes.
		genesExact := ng == h.Rows && nc == h.Cols
		cellsExact := nc == h.Rows && ng == h.Cols
		pl.transpose = genesExact || !cellsExact
		if genesExact == cellsExact {
			pl.note("Both orientations fit %s: its rows are taken to be genes.", r.mname)
		}
	default:
		pl.transpose = genesRows
	}
	pl.cellsHeader = nc == pl.dim(false)+1
	pl.genesHeader = ng == pl.dim(true)+1
	if pl.transpose {
		pl.note("Read %s as genes × cells.", r.mname)
	} else {
		pl.note("Read %s as cells × genes.", r.mname)
	}
	for _, x := range []struct {
		p  *probe
		on bool
	}{{pl.cells, pl.cellsHeader}, {pl.genes, pl.genesHeader}} {
		if x.on {
			pl.note("Took the first line of %s, %s, for a header.", x.p.name(), quote(x.p.first))
		}
	}
	return nil
}

// whichGenes applies rules 2 to 5 of Open to two label files, a labelling
// the matrix's rows when it is not square: it reports whether a (rather
// than b) lists the genes, and why.
func whichGenes(a, b *probe) (bool, string) {
	switch {
	case (a.fields >= 2) != (b.fields >= 2):
		return a.fields >= 2, "the genes file's lines have a second field"
	case nameHint(a.path) != nameHint(b.path):
		return nameHint(a.path) > nameHint(b.path), "their names say so"
	case looksLikeBarcode(firstID(a)) != looksLikeBarcode(firstID(b)):
		return looksLikeBarcode(firstID(b)), "the cells file's IDs look like barcodes"
	}
	return true, "nothing tells them apart, so the matrix's rows are taken to be genes, as most exports write them"
}

// dim returns the number of genes (genes true) or cells the matrix holds.
func (pl *plan) dim(genes bool) int {
	if genes == pl.transpose {
		return pl.header.Rows
	}
	return pl.header.Cols
}

// firstID returns the first field of a file's first line.
func firstID(p *probe) string {
	id, _, _ := strings.Cut(string(p.first), "\t")
	return id
}

// load reads the files the plan chose.
func (pl *plan) load(ctx context.Context, opt Options) (*atlas.Dataset, error) {
	var files []string
	for _, f := range []string{pl.table, pl.matrix} {
		if f != "" {
			files = append(files, f)
		}
	}
	if pl.cells != nil {
		files = append(files, pl.cells.path, pl.genes.path)
	}
	if pl.annotations != "" {
		files = append(files, pl.annotations)
	}
	sizes := make(map[string]int64, len(files))
	var total int64
	for _, f := range files {
		fi, err := os.Stat(f)
		if err != nil {
			return nil, err
		}
		sizes[f] = fi.Size()
		total += fi.Size()
	}
	c := newByteCounter(opt.Progress, total)
	ds := &atlas.Dataset{Name: pl.name, Sources: files}
	if pl.table != "" {
		if err := pl.loadTable(ctx, ds, c); err != nil {
			return nil, err
		}
	} else if err := pl.loadMatrix(ctx, ds, c, sizes); err != nil {
		return nil, err
	}
	if pl.annotations != "" {
		f, err := os.Open(pl.annotations)
		if err != nil {
			return nil, err
		}
		ds.Annotations, ds.Join, err = ReadAnnotations(ctx, c.reader(f), pl.annotations, ds.CellIDs, nil)
		f.Close()
		if err != nil {
			return nil, err
		}
	}
	c.finish()
	return ds, nil
}

func (pl *plan) loadTable(ctx context.Context, ds *atlas.Dataset, c *byteCounter) error {
	f, err := os.Open(pl.table)
	if err != nil {
		return err
	}
	defer f.Close()
	ids, header, m, err := ReadTable(ctx, c.reader(f), pl.table, nil)
	if err != nil {
		return err
	}
	ds.CellIDs, ds.GeneIDs, ds.Table = ids, header, m
	ds.GeneSymbols = append([]string(nil), header...)
	return nil
}

func (pl *plan) loadMatrix(ctx context.Context, ds *atlas.Dataset, c *byteCounter, sizes map[string]int64) error {
	cells := pl.cellLabels
	if cells == nil {
		var err error
		if cells, err = readLabelsFile(ctx, pl.cells.path, c); err != nil {
			return err
		}
	} else {
		c.skip(sizes[pl.cells.path])
	}
	genes, err := readLabelsFile(ctx, pl.genes.path, c)
	if err != nil {
		return err
	}
	first := 1
	if pl.cellsHeader {
		cells.dropFirst()
		first = 2
	}
	if pl.genesHeader {
		genes.dropFirst()
	}
	if err := checkUnique(cells.IDs, pl.cells.path, first); err != nil {
		return err
	}
	nc, ng := cells.Len(), genes.Len()
	f, err := os.Open(pl.matrix)
	if err != nil {
		return err
	}
	defer f.Close()
	m, err := ReadMatrixMarket(ctx, c.reader(f), pl.matrix, MatrixOptions{
		Size: sizes[pl.matrix],
		Transpose: func(h MatrixHeader) (bool, error) {
			rows, cols := nc, ng
			if pl.transpose {
				rows, cols = ng, nc
			}
			if h.Rows != rows || h.Cols != cols {
				return false, fmt.Errorf("ingest: %s: %w: the matrix is %d × %d, the label files list %d cells and %d genes", pl.matrix, ErrLabelCount, h.Rows, h.Cols, nc, ng)
			}
			return pl.transpose, nil
		},
	})
	if err != nil {
		return err
	}
	ds.CellIDs, ds.GeneIDs, ds.GeneSymbols, ds.Counts = cells.IDs, genes.IDs, genes.Symbols, m
	return nil
}

// readLabelsFile reads the label file at path, counting bytes in c when c is
// not nil.
func readLabelsFile(ctx context.Context, path string, c *byteCounter) (*Labels, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	if c == nil {
		return ReadLabels(ctx, f, path, nil)
	}
	return ReadLabels(ctx, c.reader(f), path, nil)
}

// checkUnique reports the first ID that repeats an earlier one; IDs are on
// lines first, first+1, … of file.
func checkUnique(ids []string, file string, first int) error {
	seen := make(map[string]int, len(ids))
	for i, id := range ids {
		if prev, ok := seen[id]; ok {
			return errorf(file, first+i, 1, ErrDuplicateID, "cell ID %q already on line %d", id, first+prev)
		}
		seen[id] = i
	}
	return nil
}
