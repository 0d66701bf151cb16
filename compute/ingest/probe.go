package ingest

import (
	"bytes"
	"context"
	"io"
	"os"
	"path/filepath"
	"strings"
)

const (
	// sniffBytes bounds what is read of a file to classify it.
	sniffBytes = 64 << 10
	// firstRowBytes bounds what is read of a table to see its first row.
	firstRowBytes = 16 << 20
	// sampleBytes bounds what is read of a dense table to sample its IDs.
	sampleBytes = 4 << 20
	// probeRows bounds the rows of a possible annotation table whose first
	// field is compared with the cell IDs.
	probeRows = 100000
)

// probe is what a quick look at a file tells about it.
type probe struct {
	path   string
	size   int64 // on disk
	matrix bool  // starts with the Matrix Market banner
	binary bool  // holds a NUL byte near its start
	first  []byte
	fields int  // tab-separated fields on the first line
	sep    byte // ',' or '\t' when the first line holds one, else 0

	// Set by count, for a possible label file:
	header bool   // the first line is a header (decided before counting)
	lines  int    // non-blank lines, counted up to a limit+1
	spaced bool   // an ID (first field of a line after the header) holds a space
	order  uint64 // hash of the IDs in their order
	set    uint64 // hash of the IDs whatever their order
}

func (p *probe) name() string { return filepath.Base(p.path) }

// labels returns the number of labels count found: the non-blank lines
// without the header.
func (p *probe) labels() int {
	if p.header {
		return p.lines - 1
	}
	return p.lines
}

// openText opens path and returns its text, inflated when gzip compressed,
// limited to limit bytes when limit > 0. close releases everything.
func openText(path string, limit int64) (text io.Reader, size int64, close func(), err error) {
	f, size, err := openFile(path)
	if err != nil {
		return nil, 0, nil, err
	}
	src, closeSrc, _, err := decompress(f)
	if err != nil {
		f.Close()
		return nil, 0, nil, readError(path, 1, err)
	}
	if limit > 0 {
		src = io.LimitReader(src, limit)
	}
	return src, size, func() { closeSrc(); f.Close() }, nil
}

// sniff reads the start of the file at path.
func sniff(ctx context.Context, path string) (*probe, error) {
	src, size, closeText, err := openText(path, sniffBytes)
	if err != nil {
		return nil, err
	}
	defer closeText()
	p := &probe{path: path, size: size}
	s := newLineScanner(ctx, src)
	for s.next() {
		if len(bytes.TrimSpace(s.text)) > 0 {
			break
		}
	}
	if err := s.failure(path); err != nil {
		return nil, err
	}
	p.binary = bytes.IndexByte(s.buf[:s.w], 0) >= 0
	p.first = append([]byte(nil), s.text...)
	p.matrix = len(p.first) >= 14 && strings.EqualFold(string(p.first[:14]), "%%MatrixMarket")
	p.fields = 1 + bytes.Count(p.first, []byte{'\t'})
	if bytes.IndexByte(p.first, '\t') >= 0 || bytes.IndexByte(p.first, ',') >= 0 {
		p.sep = detectSeparator(p.first)
	}
	return p, nil
}

// count counts the file's non-blank lines, stopping after limit+1, and
// hashes the IDs of the lines after the header (p.header) to compare
// label files: order changes when the IDs or their order differ, set only
// when the IDs differ.
func (p *probe) count(ctx context.Context, limit int) error {
	src, _, closeText, err := openText(p.path, 0)
	if err != nil {
		return err
	}
	defer closeText()
	s := newLineScanner(ctx, src)
	p.lines, p.spaced, p.order, p.set = 0, false, fnvOffset, 0
	for p.lines <= limit && s.next() {
		if len(bytes.TrimSpace(s.text)) == 0 {
			continue
		}
		p.lines++
		if p.header && p.lines == 1 {
			continue
		}
		id, _, _ := bytes.Cut(s.text, []byte{'\t'})
		if bytes.IndexByte(id, ' ') >= 0 {
			p.spaced = true
		}
		h := fnv64(id)
		p.order = (p.order ^ h) * fnvPrime
		p.set += mix64(h)
	}
	if p.lines > limit {
		return nil
	}
	return s.failure(p.path)
}

// FNV-1a (64 bits) and the finaliser of SplitMix64: hashes to compare
// label files, not for security.
const (
	fnvOffset = 14695981039346656037
	fnvPrime  = 1099511628211
)

func fnv64(b []byte) uint64 {
	h := uint64(fnvOffset)
	for _, c := range b {
		h = (h ^ uint64(c)) * fnvPrime
	}
	return h
}

func mix64(z uint64) uint64 {
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}

// labelHeaderWords are the column names a label file's header line may
// start with (compared in lower case, with '-', '.' and ' ' read as '_').
var labelHeaderWords = map[string]bool{}

func init() {
	for _, w := range strings.Fields(`id ids name names label labels index
		cell cells cell_id cell_ids cellid cell_name cell_names barcode barcodes cell_barcode cell_barcodes
		gene genes gene_id gene_ids geneid gene_name gene_names gene_symbol gene_symbols symbol symbols
		feature features feature_id feature_ids feature_name feature_names`) {
		labelHeaderWords[w] = true
	}
}

// isLabelHeader reports whether the first line of a label file is a header
// by its content: it starts with '#', or its first field is a column name
// such as "barcode", "cell_id", "gene" or "feature_name" (see
// labelHeaderWords), with or without quotes.
func isLabelHeader(first []byte) bool {
	first = bytes.TrimPrefix(first, utf8BOM)
	if bytes.HasPrefix(first, []byte{'#'}) {
		return true
	}
	f, _, _ := bytes.Cut(first, []byte{'\t'})
	w := strings.ToLower(strings.Trim(strings.TrimSpace(string(f)), `"'`))
	w = strings.NewReplacer("-", "_", ".", "_", " ", "_").Replace(w)
	return labelHeaderWords[w]
}

// denseRow reports whether the table at path has a first data row whose
// fields after the first are all numbers.
func denseRow(ctx context.Context, path string) bool {
	src, _, closeText, err := openText(path, firstRowBytes)
	if err != nil {
		return false
	}
	defer closeText()
	t, err := startTable(ctx, src, path)
	if err != nil {
		return false
	}
	for _, f := range t.rr.fields[1:] {
		if _, ok := parseFloat(f); !ok {
			return false
		}
	}
	return true
}

// sampleIDs returns the first fields of the data rows in the first
// sampleBytes of the table at path.
func sampleIDs(ctx context.Context, path string) map[string]int32 {
	src, _, closeText, err := openText(path, sampleBytes)
	if err != nil {
		return nil
	}
	defer closeText()
	t, err := startTable(ctx, src, path)
	if err != nil {
		return nil
	}
	ids := map[string]int32{}
	for {
		ids[string(t.rr.fields[0])] = int32(len(ids))
		if !t.rr.next() {
			return ids
		}
	}
}

// matchesCells reports whether any of the first probeRows data rows of the
// table at path starts with a cell ID.
func matchesCells(ctx context.Context, path string, cells map[string]int32) bool {
	src, _, closeText, err := openText(path, 0)
	if err != nil {
		return false
	}
	defer closeText()
	rr := &recordReader{s: newLineScanner(ctx, src), name: path}
	if !rr.next() { // the header
		return false
	}
	for k := 0; k < probeRows && rr.next(); k++ {
		if _, ok := cells[string(rr.fields[0])]; ok {
			return true
		}
	}
	return false
}

// listFiles sniffs the visible regular files of dir, leaving out those in
// skip, empty files and binary ones.
func listFiles(ctx context.Context, dir string, skip ...string) ([]*probe, error) {
	entries, err := os.ReadDir(dir)
	if err != nil {
		return nil, err
	}
	leave := map[string]bool{}
	for _, s := range skip {
		if s != "" {
			leave[sameFileKey(s)] = true
		}
	}
	var out []*probe
	for _, e := range entries {
		if strings.HasPrefix(e.Name(), ".") {
			continue
		}
		path := filepath.Join(dir, e.Name())
		fi, err := os.Stat(path)
		if err != nil || !fi.Mode().IsRegular() || fi.Size() == 0 || leave[sameFileKey(path)] {
			continue
		}
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		p, err := sniff(ctx, path)
		if err != nil {
			return nil, err
		}
		if !p.binary {
			out = append(out, p)
		}
	}
	return out, nil
}

// sameFileKey returns a key under which two spellings of one path agree.
func sameFileKey(path string) string {
	if abs, err := filepath.Abs(path); err == nil {
		return abs
	}
	return filepath.Clean(path)
}

// looksLikeBarcode reports whether id looks like a nucleotide cell barcode:
// at least six of A, C, G, T, N, optionally followed by "-" and digits.
func looksLikeBarcode(id string) bool {
	if i := strings.LastIndexByte(id, '-'); i > 0 && strings.Trim(id[i+1:], "0123456789") == "" {
		id = id[:i]
	}
	return len(id) >= 6 && strings.Trim(id, "ACGTN") == ""
}

// nameHint says what a file's name suggests it lists: +1 genes, −1 cells,
// 0 nothing or both.
func nameHint(path string) int {
	n := strings.ToLower(filepath.Base(path))
	g := strings.Contains(n, "gene") || strings.Contains(n, "feature")
	c := strings.Contains(n, "cell") || strings.Contains(n, "barcode")
	switch {
	case g && !c:
		return 1
	case c && !g:
		return -1
	}
	return 0
}

// commonPrefix returns the length of the common prefix of a and b.
func commonPrefix(a, b string) int {
	n := 0
	for n < len(a) && n < len(b) && a[n] == b[n] {
		n++
	}
	return n
}

// openFile opens path for reading and returns its size on disk.
func openFile(path string) (*os.File, int64, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, 0, err
	}
	fi, err := f.Stat()
	if err != nil {
		f.Close()
		return nil, 0, err
	}
	return f, fi.Size(), nil
}
