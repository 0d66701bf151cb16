package ingest

import (
	"bytes"
	"context"
	"io"
	"io/fs"
	"math"
	"slices"

	"lodestone/compute/parallel"
	"lodestone/compute/progress"
	"lodestone/compute/sparse"
)

// MatrixHeader describes a Matrix Market file as its first lines announce it.
type MatrixHeader struct {
	Rows, Cols int   // the shape of the matrix in the file
	Entries    int64 // the number of entries the size line announces
	Integer    bool  // the field is integer (otherwise real)
	SizeLine   int   // the line number of the size line
}

// MatrixOptions adjusts ReadMatrixMarket.
type MatrixOptions struct {
	// Transpose is called once the size line has been read, before any
	// entry. It returns true to store the file's rows as the result's
	// columns (a genes × cells file read as cells × genes), or an error to
	// stop reading. When nil, the file is read as it stands.
	Transpose func(h MatrixHeader) (bool, error)

	// Size is the number of bytes of r (compressed bytes for gzip data)
	// when known. The reader then preallocates for the entries the size
	// line announces, but never for more than the input can hold. When
	// zero, it is taken from r's Len or Stat method if r has one; when
	// still unknown, storage grows as entries arrive.
	Size int64

	// Progress, when not nil, receives the bytes read from r so far, out
	// of Size.
	Progress progress.Func
}

const (
	// minEntryBytes is the length of the shortest entry line, "1 1 1\n".
	minEntryBytes = 6
	// maxDeflateRatio bounds how far deflate can expand data: about
	// 1032:1 (zlib's technical notes on the deflate format, RFC 1951).
	maxDeflateRatio = 1032
)

// ReadMatrixMarket reads a matrix in the Matrix Market exchange format
// (Boisvert, Pozo & Remington 1996, NISTIR 5935) from r, plain or gzip
// compressed, and returns it in compressed sparse row form. name is used in
// error messages.
//
// Only the coordinate format with integer or real values and general
// symmetry is accepted:
//
//	%%MatrixMarket matrix coordinate integer general
//	% any number of comment lines
//	rows cols entries
//	i j value        (entries lines, 1-based indices, any order)
//
// Keywords are matched without regard to case. Blank lines and lines
// starting with % may appear anywhere after the header. Values become
// float32 (integers above 2^24 and reals are rounded to the nearest
// float32); NaN, infinities and values beyond the float32 range are errors.
// Explicit zeros are checked like any entry and then dropped. Two entries at
// the same position are an error naming both lines.
//
// Memory: the result's ColIdx and Val are filled in place as entries
// arrive, with one more 4-byte array of row numbers, so loading needs about
// 1.5 times the final size. Entries that arrive grouped by row are not
// moved; otherwise they are moved to their rows in place by a radix sort.
// Rows are then sorted by column on all cores.
//
// To name both lines of a duplicate entry in a file whose entries are not
// grouped by row, the input is read a second time; this needs r to be an
// io.ReadSeeker (a file, a bytes.Reader), else the error names the
// position but not the lines.
//
// r is read to its end or to the first error. The context is checked about
// every megabyte.
func ReadMatrixMarket(ctx context.Context, r io.Reader, name string, opt MatrixOptions) (*sparse.CSR, error) {
	size := opt.Size
	if size <= 0 {
		size = sizeOf(r)
	}
	in := r
	if opt.Progress != nil {
		c := newByteCounter(opt.Progress, size)
		in = c.reader(r)
		defer func() { c.f.Report(c.done, max(c.done, c.total)) }()
	}
	src, closeSrc, gz, err := decompress(in)
	if err != nil {
		return nil, readError(name, 1, err)
	}
	defer closeSrc()
	s := newLineScanner(ctx, src)
	h, err := readMatrixHeader(s, name)
	if err != nil {
		return nil, err
	}
	transpose := false
	if opt.Transpose != nil {
		if transpose, err = opt.Transpose(h); err != nil {
			return nil, err
		}
	}
	p := &mtxParser{s: s, name: name, h: h, transpose: transpose}
	p.allocate(size, gz)
	if err := p.readEntries(); err != nil {
		return nil, err
	}
	m, dup, err := p.assemble(ctx)
	if dup != nil && dup.lines[1] == 0 {
		if rs, ok := r.(io.ReadSeeker); ok {
			findLines(ctx, rs, name, dup)
		}
	}
	if dup != nil {
		return nil, dup.error(name)
	}
	return m, err
}

// ReadMatrixHeader reads the header and size line of a Matrix Market file
// (plain or gzip) and stops there.
func ReadMatrixHeader(ctx context.Context, r io.Reader, name string) (MatrixHeader, error) {
	src, closeSrc, _, err := decompress(r)
	if err != nil {
		return MatrixHeader{}, readError(name, 1, err)
	}
	defer closeSrc()
	return readMatrixHeader(newLineScanner(ctx, src), name)
}

// sizeOf returns the length of r when r can tell it, else 0.
func sizeOf(r io.Reader) int64 {
	switch v := r.(type) {
	case interface{ Len() int }:
		return int64(v.Len())
	case interface{ Stat() (fs.FileInfo, error) }:
		if fi, err := v.Stat(); err == nil && fi.Mode().IsRegular() {
			return fi.Size()
		}
	}
	return 0
}

// readMatrixHeader reads the header line, comments and size line.
func readMatrixHeader(s *lineScanner, name string) (MatrixHeader, error) {
	var h MatrixHeader
	if !s.next() {
		if err := s.failure(name); err != nil {
			return h, err
		}
		return h, errorf(name, 1, 0, ErrEmpty, "no Matrix Market header")
	}
	f := bytes.Fields(s.text)
	if len(f) == 0 || !bytes.EqualFold(f[0], []byte("%%MatrixMarket")) {
		return h, errorf(name, 1, 1, ErrHeader, "first line %s does not start with %%%%MatrixMarket", quote(s.text))
	}
	want := [...]struct {
		what string
		ok   []string
	}{
		{"object", []string{"matrix"}},
		{"format", []string{"coordinate"}},
		{"field", []string{"integer", "real", "double"}},
		{"symmetry", []string{"general"}},
	}
	known := map[string]bool{"vector": true, "array": true, "complex": true, "pattern": true,
		"symmetric": true, "skew-symmetric": true, "hermitian": true}
	for k, w := range want {
		if len(f) <= k+1 {
			return h, errorf(name, 1, k+2, ErrHeader, "missing %s keyword", w.what)
		}
		tok := f[k+1]
		found := false
		for _, ok := range w.ok {
			found = found || bytes.EqualFold(tok, []byte(ok))
		}
		if !found {
			if known[string(bytes.ToLower(tok))] {
				return h, errorf(name, 1, k+2, ErrUnsupported, "%s %q: only matrix coordinate integer|real general is read", w.what, tok)
			}
			return h, errorf(name, 1, k+2, ErrHeader, "unknown %s %q", w.what, tok)
		}
	}
	if len(f) > 5 {
		return h, errorf(name, 1, 6, ErrHeader, "unexpected %q after the symmetry keyword", f[5])
	}
	h.Integer = bytes.EqualFold(f[3], []byte("integer"))
	for {
		if !s.next() {
			if err := s.failure(name); err != nil {
				return h, err
			}
			return h, errorf(name, s.line+1, 0, ErrSizeLine, "file ends before the size line")
		}
		t := bytes.TrimLeft(s.text, " \t")
		if len(t) > 0 && t[0] != '%' {
			break
		}
	}
	h.SizeLine = s.line
	f = bytes.Fields(s.text)
	what := [3]string{"row count", "column count", "entry count"}
	var v [3]uint64
	for k := range v {
		if k >= len(f) {
			return h, errorf(name, s.line, k+1, ErrSizeLine, "missing %s (want rows, columns, entries)", what[k])
		}
		var ok bool
		if v[k], ok = parseUint(f[k], math.MaxInt32); !ok {
			return h, errorf(name, s.line, k+1, ErrSizeLine, "%s %s is not an integer in 0…%d", what[k], quote(f[k]), math.MaxInt32)
		}
	}
	if len(f) > 3 {
		return h, errorf(name, s.line, 4, ErrSizeLine, "unexpected %s after the entry count", quote(f[3]))
	}
	if v[2] > v[0]*v[1] {
		return h, errorf(name, s.line, 3, ErrSizeLine, "%d entries do not fit in %d×%d", v[2], v[0], v[1])
	}
	h.Rows, h.Cols, h.Entries = int(v[0]), int(v[1]), int64(v[2])
	return h, nil
}

// mtxParser holds the state of reading the entries of one file.
type mtxParser struct {
	s         *lineScanner
	name      string
	h         MatrixHeader
	transpose bool
	outRows   int
	outCols   int

	rowOf []uint32 // output row of each entry; later its destination
	col   []int32
	val   []float32
	n     int // entries read

	// gaps lists, for each blank or comment line after the size line, the
	// number of entries read before it, so that an entry's line can be
	// recovered from its position in the file.
	gaps []int
}

// allocate sizes the entry arrays: exactly the announced count, unless the
// input cannot hold that many (then as many as it can hold) or its size is
// unknown (then a first share that grows).
func (p *mtxParser) allocate(size int64, gz bool) {
	p.outRows, p.outCols = p.h.Rows, p.h.Cols
	if p.transpose {
		p.outRows, p.outCols = p.h.Cols, p.h.Rows
	}
	c := p.h.Entries
	if size > 0 {
		room := (size + 1) / minEntryBytes
		if gz {
			room = size * maxDeflateRatio / minEntryBytes
		}
		c = min(c, room+1)
	} else {
		c = min(c, 1<<16)
	}
	p.rowOf = make([]uint32, c)
	p.col = make([]int32, c)
	p.val = make([]float32, c)
}

// grow enlarges the entry arrays when the input's size was not known.
func (p *mtxParser) grow() {
	c := min(p.h.Entries, 2*int64(len(p.col))+1)
	rowOf := make([]uint32, c)
	copy(rowOf, p.rowOf)
	p.rowOf = rowOf
	col := make([]int32, c)
	copy(col, p.col)
	p.col = col
	val := make([]float32, c)
	copy(val, p.val)
	p.val = val
}

// field returns the next space- or tab-separated token of line at or after
// position i, and the position just past it; tok is empty at the end.
func field(line []byte, i int) (tok []byte, next int) {
	for i < len(line) && (line[i] == ' ' || line[i] == '\t') {
		i++
	}
	j := i
	for j < len(line) && line[j] != ' ' && line[j] != '\t' {
		j++
	}
	return line[i:j], j
}

// readEntries parses the entry lines into p's arrays.
func (p *mtxParser) readEntries() error {
	s, h := p.s, p.h
	for {
		// Parse what is buffered as far as it goes; the line it stops
		// at (a comment, a blank line, an error, a line the buffer
		// holds only part of) takes the general path below.
		s.r += p.fastBlock(s.buf[s.r:s.w])
		if !s.next() {
			break
		}
		i, j, v, blank, err := p.slowEntry(s.text)
		if err != nil {
			return err
		}
		if blank {
			p.gaps = append(p.gaps, p.n)
			continue
		}
		if int64(p.n) == h.Entries {
			return errorf(p.name, s.line, 0, ErrEntryCount, "more entries than the %d announced on line %d", h.Entries, h.SizeLine)
		}
		if p.n == len(p.col) {
			p.grow()
		}
		if p.transpose {
			i, j = j, i
		}
		p.rowOf[p.n] = uint32(i - 1)
		p.col[p.n] = int32(j - 1)
		p.val[p.n] = v
		p.n++
	}
	if err := s.failure(p.name); err != nil {
		return err
	}
	if int64(p.n) < h.Entries {
		return errorf(p.name, s.line+1, 0, ErrEntryCount, "file ends after %d of the %d entries announced on line %d", p.n, h.Entries, h.SizeLine)
	}
	return nil
}

// fastBlock parses, from the start of buf, the entry lines of the common
// form: three fields separated by spaces or tabs, with spaces or tabs also
// allowed before the first and after the last, ending in "\n" or "\r\n";
// indices in range; for the integer field an optionally negative integer
// of at most 18 digits, for the real field a value fastFloat reads. It
// stops at any other line, at the end of buf, when the entry arrays are
// full, or when the size line's count is reached, and returns the bytes
// used, which end at a line's end. It allocates nothing.
func (p *mtxParser) fastBlock(buf []byte) int {
	rows, cols := uint64(p.h.Rows), uint64(p.h.Cols)
	limit := min(int64(len(p.col)), p.h.Entries)
	integer, transpose := p.h.Integer, p.transpose
	n := len(buf)
	k := 0
	for int64(p.n) < limit {
		start := k
		for k < n && (buf[k] == ' ' || buf[k] == '\t') {
			k++
		}
		var i, j uint64
		is := k
		for ; k < n && k-is < 10; k++ {
			d := buf[k] - '0'
			if d > 9 {
				break
			}
			i = i*10 + uint64(d)
		}
		if k == is || i-1 >= rows || !isBlank(buf, k) {
			return start
		}
		for k++; k < n && (buf[k] == ' ' || buf[k] == '\t'); k++ {
		}
		js := k
		for ; k < n && k-js < 10; k++ {
			d := buf[k] - '0'
			if d > 9 {
				break
			}
			j = j*10 + uint64(d)
		}
		if k == js || j-1 >= cols || !isBlank(buf, k) {
			return start
		}
		for k++; k < n && (buf[k] == ' ' || buf[k] == '\t'); k++ {
		}
		vs := k
		var v float32
		if integer {
			neg := k < n && buf[k] == '-'
			if neg {
				k++
			}
			ds := k
			var x uint64
			for ; k < n && k-ds < 18; k++ {
				d := buf[k] - '0'
				if d > 9 {
					break
				}
				x = x*10 + uint64(d)
			}
			if k == ds {
				return start
			}
			v = float32(x)
			if neg {
				v = -v
			}
		} else {
			for k < n && buf[k] != '\n' && buf[k] != ' ' && buf[k] != '\t' && buf[k] != '\r' {
				k++
			}
			x, ok := fastFloat(buf[vs:k])
			if !ok {
				return start
			}
			if v, ok = toFloat32(x); !ok {
				return start
			}
		}
		if k < n && buf[k] != '\n' {
			for k < n && (buf[k] == ' ' || buf[k] == '\t' || buf[k] == '\r') {
				k++
			}
			if k >= n || buf[k] != '\n' {
				return start
			}
		}
		if k >= n {
			return start
		}
		k++ // past the line's end
		if transpose {
			i, j = j, i
		}
		p.rowOf[p.n] = uint32(i - 1)
		p.col[p.n] = int32(j - 1)
		p.val[p.n] = v
		p.n++
		p.s.line++
	}
	return k
}

// isBlank reports whether buf[k] is a space or a tab.
func isBlank(buf []byte, k int) bool {
	return k < len(buf) && (buf[k] == ' ' || buf[k] == '\t')
}

// slowEntry parses any entry line, or reports blank for a blank or comment
// line, or an error saying what is wrong with the line.
func (p *mtxParser) slowEntry(line []byte) (i, j uint64, v float32, blank bool, err error) {
	h, s := p.h, p.s
	ti, q := field(line, 0)
	if len(ti) == 0 || ti[0] == '%' {
		return 0, 0, 0, true, nil
	}
	tj, q := field(line, q)
	tv, q := field(line, q)
	if len(tv) == 0 {
		n := 1
		if len(tj) > 0 {
			n = 2
		}
		return 0, 0, 0, false, errorf(p.name, s.line, n+1, ErrFieldCount, "entry has %d fields, want row, column and value", n)
	}
	if extra, _ := field(line, q); len(extra) > 0 && extra[0] != '%' {
		return 0, 0, 0, false, errorf(p.name, s.line, 4, ErrFieldCount, "unexpected %s after the value", quote(extra))
	}
	var ok bool
	if i, ok = parseUint(ti, uint64(h.Rows)); !ok || i == 0 {
		return 0, 0, 0, false, p.indexError(ti, 1, "row", uint64(h.Rows))
	}
	if j, ok = parseUint(tj, uint64(h.Cols)); !ok || j == 0 {
		return 0, 0, 0, false, p.indexError(tj, 2, "column", uint64(h.Cols))
	}
	if h.Integer {
		x, ok := parseInt(tv)
		if !ok {
			return 0, 0, 0, false, errorf(p.name, s.line, 3, ErrNotNumber, "value %s is not an integer", quote(tv))
		}
		return i, j, float32(x), false, nil
	}
	x, ok := parseFloat(tv)
	if !ok {
		return 0, 0, 0, false, errorf(p.name, s.line, 3, ErrNotNumber, "value %s is not a number", quote(tv))
	}
	if v, ok = toFloat32(x); !ok {
		return 0, 0, 0, false, errorf(p.name, s.line, 3, ErrNotFinite, "value %s is not a finite float32", quote(tv))
	}
	return i, j, v, false, nil
}

// indexError reports a row or column index that is not an integer in
// 1…max.
func (p *mtxParser) indexError(tok []byte, col int, what string, max uint64) error {
	if _, ok := parseUint(tok, math.MaxUint64>>1); ok {
		return errorf(p.name, p.s.line, col, ErrIndexRange, "%s index %s outside 1…%d", what, tok, max)
	}
	return errorf(p.name, p.s.line, col, ErrNotNumber, "%s index %s is not a positive integer", what, quote(tok))
}

// assemble turns the entries read into a CSR matrix: it groups them by row,
// checks for duplicates, sorts each row by column and drops zeros.
func (p *mtxParser) assemble(ctx context.Context) (*sparse.CSR, *duplicate, error) {
	n := p.n
	rowOf, col, val := p.rowOf[:n], p.col[:n], p.val[:n]
	rowPtr := make([]int64, p.outRows+1)
	ordered := true
	var prev uint32
	for _, r := range rowOf {
		rowPtr[r+1]++
		ordered = ordered && r >= prev
		prev = r
	}
	for r := 0; r < p.outRows; r++ {
		rowPtr[r+1] += rowPtr[r]
	}
	if !ordered {
		if err := groupByRow(ctx, rowOf, col, val, rowPtr); err != nil {
			return nil, nil, err
		}
	}
	p.rowOf = nil
	m := &sparse.CSR{Rows: p.outRows, Cols: p.outCols, RowPtr: rowPtr, ColIdx: col, Val: val}
	d, err := sortRows(ctx, m)
	if err != nil {
		return nil, nil, err
	}
	if d != nil {
		i, j := d.row+1, int(d.col)+1
		if p.transpose {
			i, j = j, i
		}
		d.i, d.j = i, j
		if ordered {
			// Entries were not moved: positions count entries in file order.
			d.lines = [2]int{p.entryLine(d.first), p.entryLine(d.second)}
		}
		return nil, d, nil
	}
	dropZeros(m)
	if c, nnz := cap(p.col), m.NNZ(); c-nnz > nnz/4 {
		m.ColIdx = append([]int32(nil), m.ColIdx...)
		m.Val = append([]float32(nil), m.Val...)
	}
	return m, nil, nil
}

// A duplicate is a position given twice.
type duplicate struct {
	row           int   // in the result
	col           int32 // in the result
	first, second int64 // positions in the row-grouped arrays
	i, j          int   // 1-based row and column in the file
	lines         [2]int
}

// error names the duplicate's lines, when known.
func (d *duplicate) error(name string) error {
	if d.lines[1] == 0 {
		return errorf(name, 0, 0, ErrDuplicateEntry, "row %d, column %d is given twice (the input cannot be read again to find the lines)", d.i, d.j)
	}
	return errorf(name, d.lines[1], 0, ErrDuplicateEntry, "row %d, column %d already given on line %d", d.i, d.j, d.lines[0])
}

// findLines reads the input again to find the lines of the first two
// entries at d's position.
func findLines(ctx context.Context, r io.ReadSeeker, name string, d *duplicate) {
	if _, err := r.Seek(0, io.SeekStart); err != nil {
		return
	}
	src, closeSrc, _, err := decompress(r)
	if err != nil {
		return
	}
	defer closeSrc()
	s := newLineScanner(ctx, src)
	if _, err := readMatrixHeader(s, name); err != nil {
		return
	}
	found := 0
	for found < 2 && s.next() {
		ti, q := field(s.text, 0)
		tj, _ := field(s.text, q)
		i, ok1 := parseUint(ti, math.MaxInt32)
		j, ok2 := parseUint(tj, math.MaxInt32)
		if ok1 && ok2 && int(i) == d.i && int(j) == d.j {
			d.lines[found] = s.line
			found++
		}
	}
	if found < 2 {
		d.lines = [2]int{}
	}
}

// flagBuckets bounds the buckets of one pass of groupByRow. Each bucket
// is a place where the pass writes; with few of them the places stay in
// the cache and the page tables' cache (measured: 64 buckets make a pass
// over 10^7 entries 3–5 times faster than 1,024).
const flagBuckets = 64

// groupByRow moves the entries to their rows' ranges of rowPtr in place:
// a most-significant-digit radix sort on the row, each pass an American
// flag sort (McIlroy, Bostic & McIlroy, "Engineering radix sort",
// Computing Systems 6, 1993). The order within a row is not kept.
func groupByRow(ctx context.Context, rowOf []uint32, col []int32, val []float32, rowPtr []int64) error {
	rows := len(rowPtr) - 1
	shift := bucketShift(rows)
	if err := flagPass(ctx, rowOf, col, val, rowPtr, 0, rows, shift); err != nil {
		return err
	}
	if shift == 0 {
		return nil
	}
	// The buckets of the first pass are independent: finish them on all
	// cores.
	nb := (rows-1)>>shift + 1
	errs := make([]error, len(parallel.Blocks(nb, parallel.Threads(0))))
	parallel.For(nb, 0, func(lo, hi, b int) {
		for k := lo; k < hi && errs[b] == nil; k++ {
			r0 := k << shift
			errs[b] = groupRange(ctx, rowOf, col, val, rowPtr, r0, min(rows, r0+1<<shift))
		}
	})
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}

// bucketShift returns the smallest shift that splits n rows into at most
// flagBuckets buckets of 1<<shift rows.
func bucketShift(n int) uint {
	shift := uint(0)
	for n > 0 && (n-1)>>shift >= flagBuckets {
		shift++
	}
	return shift
}

// groupRange groups by row the entries of rows [r0, r1), which lie in
// rowPtr[r0]…rowPtr[r1].
func groupRange(ctx context.Context, rowOf []uint32, col []int32, val []float32, rowPtr []int64, r0, r1 int) error {
	if r1-r0 <= 1 {
		return nil
	}
	shift := bucketShift(r1 - r0)
	if err := flagPass(ctx, rowOf, col, val, rowPtr, r0, r1, shift); err != nil {
		return err
	}
	if shift == 0 {
		return nil
	}
	for b := r0; b < r1; b += 1 << shift {
		if err := groupRange(ctx, rowOf, col, val, rowPtr, b, min(r1, b+1<<shift)); err != nil {
			return err
		}
	}
	return nil
}

// flagPass moves the entries of rows [r0, r1) into buckets of 1<<shift
// consecutive rows, in place.
func flagPass(ctx context.Context, rowOf []uint32, col []int32, val []float32, rowPtr []int64, r0, r1 int, shift uint) error {
	nb := (r1-r0-1)>>shift + 1
	var next, end [flagBuckets]int64
	for b := 0; b < nb; b++ {
		next[b] = rowPtr[r0+b<<shift]
		end[b] = rowPtr[min(r1, r0+(b+1)<<shift)]
	}
	base := uint32(r0)
	moves := 0
	for b := 0; b < nb; b++ {
		for next[b] < end[b] {
			k := next[b]
			r, c, v := rowOf[k], col[k], val[k]
			for d := int((r - base) >> shift); d != b; d = int((r - base) >> shift) {
				t := next[d]
				next[d]++
				r, rowOf[t] = rowOf[t], r
				c, col[t] = col[t], c
				v, val[t] = val[t], v
				if moves++; moves&(1<<20-1) == 0 {
					if err := ctx.Err(); err != nil {
						return err
					}
				}
			}
			rowOf[k], col[k], val[k] = r, c, v
			next[b]++
		}
	}
	return nil
}

// sortRows sorts each row of m by column, on all cores. It returns the
// first row (lowest number) holding a column twice, or nil.
func sortRows(ctx context.Context, m *sparse.CSR) (*duplicate, error) {
	blocks := len(parallel.Blocks(m.Rows, parallel.Threads(0)))
	found := make([]*duplicate, blocks)
	errs := make([]error, blocks)
	parallel.For(m.Rows, 0, func(lo, hi, b int) {
		var seen []int32 // per column: the last row that held it
		var at []int64   // per column: where in that row
		var packed []uint64
		for r := lo; r < hi; r++ {
			if (r-lo)&4095 == 0 {
				if errs[b] = ctx.Err(); errs[b] != nil {
					return
				}
			}
			start, end := m.RowPtr[r], m.RowPtr[r+1]
			cols, vals := m.ColIdx[start:end], m.Val[start:end]
			if increasing(cols) {
				continue
			}
			if seen == nil {
				seen = make([]int32, m.Cols)
				for c := range seen {
					seen[c] = -1
				}
				at = make([]int64, m.Cols)
			}
			for k, c := range cols {
				if seen[c] == int32(r) {
					found[b] = &duplicate{row: r, col: c, first: at[c], second: start + int64(k)}
					return
				}
				seen[c], at[c] = int32(r), start+int64(k)
			}
			// Sort (column, value) pairs packed in one word each.
			packed = packed[:0]
			for k, c := range cols {
				packed = append(packed, uint64(c)<<32|uint64(math.Float32bits(vals[k])))
			}
			slices.Sort(packed)
			for k, x := range packed {
				cols[k], vals[k] = int32(x>>32), math.Float32frombits(uint32(x))
			}
		}
	})
	for b := range found {
		if errs[b] != nil {
			return nil, errs[b]
		}
		if found[b] != nil {
			return found[b], nil
		}
	}
	return nil, nil
}

// increasing reports whether cols is strictly increasing.
func increasing(cols []int32) bool {
	for k := 1; k < len(cols); k++ {
		if cols[k] <= cols[k-1] {
			return false
		}
	}
	return true
}

// dropZeros removes stored zeros from m in place.
func dropZeros(m *sparse.CSR) {
	w := int64(0)
	start := int64(0)
	for r := 0; r < m.Rows; r++ {
		end := m.RowPtr[r+1]
		for k := start; k < end; k++ {
			if m.Val[k] != 0 {
				m.ColIdx[w], m.Val[w] = m.ColIdx[k], m.Val[k]
				w++
			}
		}
		start = end
		m.RowPtr[r+1] = w
	}
	m.ColIdx, m.Val = m.ColIdx[:w], m.Val[:w]
}

// entryLine returns the line of the entry read k-th (from 0).
func (p *mtxParser) entryLine(k int64) int {
	line := p.h.SizeLine + 1 + int(k)
	for _, g := range p.gaps {
		if int64(g) <= k {
			line++
		}
	}
	return line
}
