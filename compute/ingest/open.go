package ingest

import (
	"bytes"
	"context"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strings"

	"lodestone/compute/atlas"
	"lodestone/compute/progress"
)

// Options adjusts Open.
type Options struct {
	// Cells and Genes name label files listing the cells and the genes of
	// a Matrix Market file. Either may be empty; missing ones are looked
	// for beside the matrix. A file given must list exactly as many names
	// as the matrix has rows or columns.
	Cells, Genes string
	// CellsHeader and GenesHeader say whether the first lines of the
	// files given as Cells and Genes are headers; HeaderAuto (the zero
	// value) decides by the line's content (see Open).
	CellsHeader, GenesHeader Header
	// MatrixRows says what the Matrix Market file's rows list: RowsCells
	// or RowsGenes; RowsAuto (the zero value) decides from the label files
	// (see Open).
	MatrixRows string
	// Annotations names a table of per-cell annotations to join to the
	// cells. When empty, one is looked for beside the matrix or table.
	Annotations string
	// Progress receives the bytes read so far out of the total size on
	// disk (compressed size for gzip files) of all files Open reads.
	Progress progress.Func
	// Note, when not nil, receives one sentence for each choice Open makes:
	// which file gave the cells and which the genes, how it oriented the
	// matrix, which first lines it took for headers, which annotations it
	// joined. The same sentences are kept in the dataset's Notes.
	Note func(string)
}

// Header says whether a label file starts with a header line.
type Header int

// Header lines of label files.
const (
	HeaderAuto  Header = iota // decided by the first line's content (see Open)
	HeaderNone                // every line is a label
	HeaderFirst               // the first line is a header
)

// What a Matrix Market file's rows list (Options.MatrixRows).
const (
	RowsAuto  = ""      // decided from the label files
	RowsCells = "cells" // the rows are cells: the file is cells × genes
	RowsGenes = "genes" // the rows are genes: the file is genes × cells
)

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
// binary files (a NUL byte near the start) are ignored. The files Open reads
// must be regular files (ErrNotRegular), except an annotation table given in
// Options, which may be a pipe.
//
// Label files. A label file (see ReadLabels) lists one name per line. Its
// first line is a header, never counted as a name, when it starts with '#'
// or its first field is a column name: one of id, name, label, index, cell,
// cell_id, cell_name, barcode, cell_barcode, gene, gene_id, gene_name,
// gene_symbol, symbol, feature, feature_id, feature_name, or their plurals
// (any case, '-', '.' or ' ' for '_', quoted or not); for the files given in
// Options, CellsHeader and GenesHeader may say otherwise. The line count
// never decides it. A label file lists exactly as many names as the matrix
// has rows or columns; a file given in Options that does not is an error
// (ErrLabelCount) naming it, its count and the matrix's dimensions.
//
// Label files not given are looked for among the other text files beside
// the matrix. The candidates for a dimension of n are the files listing n
// names, none holding a space, that are not CSV tables (a first line with a
// comma and no tab). Candidates that list the same names count as one: a
// copy, or a table with a header row naming two or more columns (say, of
// annotations) listing them in any order beside a plain list, which is
// taken. Two candidates listing different names are an error
// (ErrAmbiguous) naming them; none is an error (ErrLabelCount) listing the
// files seen and their line counts.
//
// Orientation. The counts are stored as cells × genes. Which of the two
// label files lists the genes, and so which way the matrix is read, is
// decided by the first rule that tells:
//
//  1. Options: the files given as Cells and Genes, and MatrixRows (a file
//     whose name says "gene" or "feature" given as Cells, or "cell" or
//     "barcode" given as Genes, is an error, ErrLabelRole);
//  2. the file whose lines have a second tab-separated field (a symbol);
//  3. the file whose name holds "gene" or "feature" rather than "cell" or
//     "barcode";
//  4. the file whose first ID looks like a nucleotide barcode lists cells;
//  5. otherwise the matrix's rows are genes, as most exports write them.
//
// For a square matrix rules 2 to 4 tell only which file lists the genes
// (nothing telling is ErrAmbiguous), and the rows are genes unless
// MatrixRows says otherwise. Every choice is reported (Options.Note,
// Dataset.Notes): which file gave the cells and which the genes, and why.
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
	if !fi.IsDir() {
		if err := checkRegular(path, "matrix or table"); err != nil {
			return nil, err
		}
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
	ds.Notes = pl.notes
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
	cells       *probe // the label files and whether they have a header
	genes       *probe
	cellLabels  *Labels // read while planning (without the header), or nil
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
	given := func(path string, hd Header) (*probe, error) {
		if path == "" {
			return nil, nil
		}
		if err := checkRegular(path, "label file"); err != nil {
			return nil, err
		}
		p, err := sniff(ctx, path)
		if err != nil {
			return nil, err
		}
		p.header = hd == HeaderFirst || (hd == HeaderAuto && isLabelHeader(p.first))
		return p, p.count(ctx, limit)
	}
	if pl.cells, err = given(opt.Cells, opt.CellsHeader); err != nil {
		return err
	}
	if pl.genes, err = given(opt.Genes, opt.GenesHeader); err != nil {
		return err
	}
	var seen []*probe
	for _, p := range files {
		if p.matrix || (p.sep == ',' && bytes.IndexByte(p.first, '\t') < 0) {
			continue // CSV tables are never label files
		}
		p.header = isLabelHeader(p.first)
		if err := p.count(ctx, limit); err != nil {
			return err
		}
		seen = append(seen, p)
	}
	if err := pl.chooseLabels(seen, opt); err != nil {
		return err
	}
	// Read the cells now: the annotation tables are recognised by them.
	l, err := readLabelsFile(ctx, pl.cells.path, nil)
	if err != nil {
		return err
	}
	if pl.cells.header {
		l.dropFirst()
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

// checkRegular refuses a path that is not a regular file (a pipe, a
// device): the readers look at a file before reading it.
func checkRegular(path, what string) error {
	fi, err := os.Stat(path)
	if err != nil {
		return err
	}
	if !fi.Mode().IsRegular() {
		kind := "not a regular file"
		switch m := fi.Mode(); {
		case m.IsDir():
			kind = "a folder"
		case m&fs.ModeNamedPipe != 0:
			kind = "a pipe"
		case m&fs.ModeDevice != 0:
			kind = "a device"
		}
		return fmt.Errorf("ingest: %s: %w: it is %s, and a %s is read more than once; save it to a file first", path, ErrNotRegular, kind, what)
	}
	return nil
}

// describe says what was found of a possible label file, for messages.
func describe(p *probe) string {
	s := fmt.Sprintf("%s (%d lines", p.name(), p.lines)
	if p.header {
		s += fmt.Sprintf(", the first a header %s", quote(p.first))
	}
	if p.spaced {
		s += ", IDs with spaces"
	}
	return s + ")"
}

// labelTable reports whether p, a possible label file, is rather a table:
// a header line naming two or more columns.
func labelTable(p *probe) bool { return p.header && p.fields >= 2 }

// pick returns the label files for a dimension of n among seen, other than
// those listing the same IDs as skip: want is 1, or 2 for a square matrix.
//
// The candidates are the files whose labels number n and whose IDs hold no
// space. Candidates listing the same IDs count as one: a file in the same
// order, or a table with a header row (say, of annotations) listing them in
// any order beside a plain list. Fewer than want candidates is
// ErrLabelCount, more is ErrAmbiguous; both name the files.
func (pl *plan) pick(seen []*probe, n int, skip *probe, want int) ([]*probe, error) {
	var groups [][]*probe // candidates by the set of their IDs
	for _, p := range seen {
		if p.labels() != n || p.spaced || (skip != nil && p.set == skip.set) {
			continue
		}
		k := 0
		for k < len(groups) && groups[k][0].set != p.set {
			k++
		}
		if k == len(groups) {
			groups = append(groups, nil)
		}
		groups[k] = append(groups[k], p)
	}
	h := pl.header
	if len(groups) < want {
		var found []string
		for _, p := range seen {
			if skip == nil || p != skip {
				found = append(found, describe(p))
			}
		}
		what := "no other text files"
		if len(found) > 0 {
			what = strings.Join(found, ", ")
		}
		return nil, fmt.Errorf("ingest: %s: %w: want %d label file(s) listing %d names without spaces, one per line (the matrix is %d × %d); found %s; name the label files",
			pl.matrix, ErrLabelCount, want, n, h.Rows, h.Cols, what)
	}
	var out []*probe
	for _, g := range groups {
		// A plain list labels; a table listing the same IDs annotates.
		var lists []*probe
		for _, p := range g {
			if !labelTable(p) {
				lists = append(lists, p)
			}
		}
		if len(lists) == 0 {
			lists = g
		}
		best := lists[0]
		for _, p := range lists[1:] {
			if p.order != best.order {
				return nil, fmt.Errorf("ingest: %s: %w: %s and %s list the same %d names in different orders; name the label file", pl.matrix, ErrAmbiguous, best.name(), p.name(), n)
			}
			if p.fields > best.fields { // the one with symbols
				best = p
			}
		}
		out = append(out, best)
	}
	if len(out) > want {
		var all []*probe
		for _, g := range groups {
			all = append(all, g...)
		}
		return nil, fmt.Errorf("ingest: %s: %w: %d files list %d different names each (%s), and the matrix has %d × %d; name the label files",
			pl.matrix, ErrAmbiguous, len(all), n, names(all), h.Rows, h.Cols)
	}
	return out, nil
}

// chooseLabels decides the cells and genes files (those given, the others
// picked among seen) and the orientation.
func (pl *plan) chooseLabels(seen []*probe, opt Options) error {
	h := pl.header
	r, c := h.Rows, h.Cols
	mname := filepath.Base(pl.matrix)
	square := r == c
	for _, x := range []struct {
		p    *probe
		what string
		hint int
	}{{pl.cells, "cells", -1}, {pl.genes, "genes", 1}} {
		if x.p == nil {
			continue
		}
		if n := x.p.labels(); n != r && n != c {
			return pl.misfit(x.p, x.what)
		}
		if hint := nameHint(x.p.path); hint == -x.hint {
			other := map[int]string{1: "gene", -1: "cell"}[hint]
			return fmt.Errorf("ingest: %s: %w: given as the %s labels, but its name says it lists %ss; give it as the %s labels, or rename it", x.p.path, ErrLabelRole, x.what[:len(x.what)-1], other, other)
		}
	}
	// rowsAre: what the matrix's rows list, when the option or the files
	// decide it; why says how.
	rowsAre, why := opt.MatrixRows, "as asked"
	switch rowsAre {
	case RowsAuto, RowsCells, RowsGenes:
	default:
		return fmt.Errorf("ingest: MatrixRows = %q: want %q or %q", rowsAre, RowsCells, RowsGenes)
	}
	fix := func(are, reason string) error {
		if rowsAre != RowsAuto && rowsAre != are {
			return fmt.Errorf("ingest: %s: %w: its rows cannot be %s: %s", pl.matrix, ErrLabelCount, rowsAre, reason)
		}
		if rowsAre == RowsAuto {
			rowsAre, why = are, reason
		}
		return nil
	}
	switch {
	case pl.cells != nil && pl.genes != nil:
		nc, ng := pl.cells.labels(), pl.genes.labels()
		cellsRows, genesRows := nc == r && ng == c, nc == c && ng == r
		switch {
		case !cellsRows && !genesRows:
			return fmt.Errorf("ingest: %s: %w: the cell labels %s list %d names and the gene labels %s %d; the matrix is %d × %d, so one of them must list %d and the other %d",
				pl.matrix, ErrLabelCount, pl.cells.path, nc, pl.genes.path, ng, r, c, r, c)
		case !square && cellsRows:
			if err := fix(RowsCells, fmt.Sprintf("it has %d rows, as many as the cells", r)); err != nil {
				return err
			}
		case !square:
			if err := fix(RowsGenes, fmt.Sprintf("it has %d rows, as many as the genes", r)); err != nil {
				return err
			}
		}
	case pl.cells != nil || pl.genes != nil:
		known, isCells := pl.cells, true
		if known == nil {
			known, isCells = pl.genes, false
		}
		n := known.labels()
		what := map[bool]string{true: RowsCells, false: RowsGenes}
		if !square {
			if n == r {
				if err := fix(what[isCells], fmt.Sprintf("%s lists %d names, as many as the rows", known.name(), n)); err != nil {
					return err
				}
			} else if err := fix(what[!isCells], fmt.Sprintf("%s lists %d names, as many as the columns", known.name(), n)); err != nil {
				return err
			}
		}
		m := r
		if n == r {
			m = c
		}
		found, err := pl.pick(seen, m, known, 1)
		if err != nil {
			return err
		}
		if isCells {
			pl.genes = found[0]
		} else {
			pl.cells = found[0]
		}
	default:
		var a, b *probe // a labels the rows
		if square {
			two, err := pl.pick(seen, r, nil, 2)
			if err != nil {
				return err
			}
			a, b = two[0], two[1]
		} else {
			rows, err := pl.pick(seen, r, nil, 1)
			if err != nil {
				return err
			}
			cols, err := pl.pick(seen, c, rows[0], 1)
			if err != nil {
				return err
			}
			a, b = rows[0], cols[0]
		}
		aGenes, reason, told := whichGenes(a, b)
		switch {
		case square && !told:
			return fmt.Errorf("ingest: %s: %w: %s and %s both list %d names and nothing tells which lists the genes; name the label files", pl.matrix, ErrAmbiguous, a.name(), b.name(), r)
		case square:
			// The rules told which file lists the genes; the orientation
			// of a square matrix is MatrixRows's or the default below.
		case rowsAre != RowsAuto:
			aGenes, reason = rowsAre == RowsGenes, "as asked"
		default:
			rowsAre, why = map[bool]string{true: RowsGenes, false: RowsCells}[aGenes], reason
		}
		pl.genes, pl.cells = a, b
		if !aGenes {
			pl.genes, pl.cells = b, a
		}
		if square {
			pl.note("Took %s for the genes and %s for the cells: %s.", pl.genes.name(), pl.cells.name(), reason)
		}
	}
	if rowsAre == RowsAuto {
		// Square, and nothing tells: rows are genes, as most exports write them.
		rowsAre, why = RowsGenes, "it is square; its rows are taken to be genes, as most exports write them"
	}
	pl.transpose = rowsAre == RowsGenes
	for _, x := range []*probe{pl.cells, pl.genes} {
		if x.header {
			pl.note("Took the first line of %s, %s, for a header.", x.name(), quote(x.first))
		}
	}
	orient := "cells × genes"
	if pl.transpose {
		orient = "genes × cells"
	}
	from := func(p *probe, given string) string {
		how := "given"
		if given == "" {
			how = "found beside it"
		}
		return fmt.Sprintf("%s (%d, %s)", p.name(), p.labels(), how)
	}
	pl.note("Read %s as %s (%s): cells from %s, genes from %s.", mname, orient, why, from(pl.cells, opt.Cells), from(pl.genes, opt.Genes))
	return nil
}

// misfit is the error for a given label file whose labels number neither
// dimension of the matrix.
func (pl *plan) misfit(p *probe, what string) error {
	h := pl.header
	head := fmt.Sprintf("its first line %s is not a column name, so no header was taken", quote(p.first))
	if p.header {
		head = fmt.Sprintf("its first line %s was taken for a header", quote(p.first))
	}
	return fmt.Errorf("ingest: %s: %w: %d %s labels on %d lines (%s), but the matrix %s has %d rows and %d columns; a label file lists exactly one name per row or per column",
		p.path, ErrLabelCount, p.labels(), what[:len(what)-1], p.lines, head, filepath.Base(pl.matrix), h.Rows, h.Cols)
}

// whichGenes applies rules 2 to 5 of Open to two label files, a labelling
// the matrix's rows: it reports whether a (rather than b) lists the genes,
// why, and whether the files told (rules 2 to 4) rather than the default.
func whichGenes(a, b *probe) (bool, string, bool) {
	switch {
	case (a.fields >= 2) != (b.fields >= 2):
		return a.fields >= 2, "the genes file's lines have a second field", true
	case nameHint(a.path) != nameHint(b.path):
		return nameHint(a.path) > nameHint(b.path), "their names say so", true
	case looksLikeBarcode(firstID(a)) != looksLikeBarcode(firstID(b)):
		return looksLikeBarcode(firstID(b)), "the cells file's IDs look like barcodes", true
	}
	return true, "nothing tells them apart, so the matrix's rows are taken to be genes, as most exports write them", false
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
	ds := &atlas.Dataset{Name: pl.name, Sources: files, Files: atlas.Files{Annotations: pl.annotations}}
	if pl.cells != nil {
		ds.Files.Cells, ds.Files.Genes, ds.Files.MatrixRows = pl.cells.path, pl.genes.path, RowsCells
		if pl.transpose {
			ds.Files.MatrixRows = RowsGenes
		}
	}
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
		name, j := filepath.Base(pl.annotations), ds.Join
		if j.Unmatched > 0 || j.Extra > 0 {
			pl.note("%s: %d cells found a row, %d have none (their annotations are missing), %d rows name no cell.", name, j.Matched, j.Unmatched, j.Extra)
		}
		if j.DuplicatedCount > 0 {
			pl.note("%s names %s on more than one row (%s); the first row of each was used.", name, plural(j.DuplicatedCount, "cell"), strings.Join(j.Duplicated, ", "))
		}
		for _, n := range j.NotNumbers {
			pl.note("%s: %s.", name, n)
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
		if pl.cells.header {
			cells.dropFirst()
		}
	} else {
		c.skip(sizes[pl.cells.path])
	}
	genes, err := readLabelsFile(ctx, pl.genes.path, c)
	if err != nil {
		return err
	}
	if pl.genes.header {
		genes.dropFirst()
	}
	first := 1
	if pl.cells.header {
		first = 2
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

// plural returns "1 cell", "2 cells".
func plural(n int, what string) string {
	if n == 1 {
		return "1 " + what
	}
	return fmt.Sprintf("%d %ss", n, what)
}
