package ingest

import (
	"bytes"
	"context"
	"io"
	"io/fs"
	"math"
	"slices"

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

// ReadMatrixMarket reads a counts matrix in the Matrix Market exchange
// format (Boisvert, Pozo & Remington 1996, NISTIR 5935) from r, plain or
// gzip compressed, into a compact sparse.Counts. name is used in error
// messages.
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
// starting with % may appear anywhere after the header. The entry count
// may exceed 2^31 − 1; row and column counts may not.
//
// Values are counts: a negative value is an error naming its line and field
// (ErrNegative); NaN, infinities and values beyond the float32 range are
// errors too. Integers (in either field) are held as counts, exact up to
// 2^24 and rounded to float32 above (see sparse.Counts); a real field whose
// values are not all integers is held as float32. Explicit zeros are checked
// like any entry and then dropped. Two entries at the same position are an
// error naming both lines.
//
// Memory: the result's arrays are filled in place as entries arrive: 3 bytes
// per entry for counts with fewer than 65,536 columns (5 with more), 6 (8)
// for real values. Duplicates are found as entries stream in while they
// arrive grouped by row, so a file that repeats one entry fails at its
// second line. Entries that are not grouped by row (a genes × cells file
// sorted by gene, say) need 4 more bytes per entry while reading; they are
// moved to their rows in place by a radix sort, and checked for duplicates
// whenever their number has grown fourfold, so memory stays within about
// four times what the distinct entries need. Rows are then sorted by column on all cores.
//
// While counts stream in, the reader tallies each cell's total and each
// gene's number of cells (sparse.Tally, 8 bytes per row and per column), so
// that quality control and the normalisation need no pass over the entries
// for them. Real values get no tally.
//
// To name both lines of a duplicate entry in a file whose entries are not
// grouped by row, the input is read a second time; this needs r to be an
// io.ReadSeeker (a file, a bytes.Reader), else the error names the
// position but not the lines.
//
// r is read to its end or to the first error. The context is checked about
// every megabyte.
func ReadMatrixMarket(ctx context.Context, r io.Reader, name string, opt MatrixOptions) (*sparse.Counts, error) {
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
	p := newParser(ctx, s, name, h, transpose)
	p.allocate(size, gz)
	err = p.readEntries()
	counts := (*sparse.Counts)(nil)
	if err == nil {
		counts, err = p.assemble()
	}
	if dup := p.dup; dup != nil {
		if dup.lines[1] == 0 {
			if rs, ok := r.(io.ReadSeeker); ok {
				findLines(ctx, rs, name, dup)
			}
		}
		return nil, dup.error(name)
	}
	if err != nil {
		return nil, err
	}
	return counts, nil
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
	limit := [3]uint64{math.MaxInt32, math.MaxInt32, math.MaxInt64}
	var v [3]uint64
	for k := range v {
		if k >= len(f) {
			return h, errorf(name, s.line, k+1, ErrSizeLine, "missing %s (want rows, columns, entries)", what[k])
		}
		var ok bool
		if v[k], ok = parseUint(f[k], limit[k]); !ok {
			return h, errorf(name, s.line, k+1, ErrSizeLine, "%s %s is not an integer in 0…%d", what[k], quote(f[k]), limit[k])
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
	ctx       context.Context
	s         *lineScanner
	name      string
	h         MatrixHeader
	transpose bool
	outRows   int
	outCols   int
	wide      bool // column indices need 32 bits

	// The entries stored so far, in the final arrays: col16 or col32, and
	// small (counts, with large ones listed in large) or real.
	col16 []uint16
	col32 []int32
	small []uint8
	real  []float32
	large []largeEntry
	n     int64 // entries stored
	read  int64 // entry lines read, zeros included

	perRow []int64 // perRow[r+1] counts the entries of output row r

	// The tally of counts as they arrive (nil once a value is not a
	// count): per output row the sum of its counts below
	// sparse.LargeMark, per output column the rows holding it.
	rowSmall []int64
	colRows  []int64

	// While entries arrive grouped by row, each column remembers the last
	// row that held it (plus one) and which entry that was, so that a
	// duplicate is found at once.
	ordered bool
	lastRow int
	seenRow []uint32
	seenAt  []int64

	rowOf   []uint32 // output row of each entry, once they are not grouped
	checkAt int64    // then: the entry count at which to look for duplicates

	// gaps lists, for each blank or comment line after the size line, the
	// number of entries read before it, so that an entry's line can be
	// recovered from its position in the file.
	gaps []int64

	dup *duplicate // the first duplicate found
}

// largeEntry is a count of sparse.LargeMark or more, at output (row, col),
// stored at position k (kept up to date when entries move).
type largeEntry struct {
	row uint32
	col int32
	k   int64
	v   float32
}

// firstCheck is the number of entries at which duplicates are first looked
// for in a file whose entries are not grouped by row; they are looked for
// again each time the entries have grown checkGrowth-fold, which costs at
// most 1/(checkGrowth−1) of the final grouping in all.
const (
	firstCheck  = 1 << 20
	checkGrowth = 4
)

func newParser(ctx context.Context, s *lineScanner, name string, h MatrixHeader, transpose bool) *mtxParser {
	p := &mtxParser{ctx: ctx, s: s, name: name, h: h, transpose: transpose, ordered: true, lastRow: -1}
	p.outRows, p.outCols = h.Rows, h.Cols
	if transpose {
		p.outRows, p.outCols = h.Cols, h.Rows
	}
	p.wide = p.outCols > sparse.MaxCols16
	p.perRow = make([]int64, p.outRows+1)
	p.rowSmall = make([]int64, p.outRows)
	p.colRows = make([]int64, p.outCols)
	p.seenRow = make([]uint32, p.outCols)
	p.seenAt = make([]int64, p.outCols)
	return p
}

// allocate sizes the entry arrays: exactly the announced count, unless the
// input cannot hold that many (then as many as it can hold) or its size is
// unknown (then a first share that grows). Memory the arrays do not use is
// never touched, so a generous size costs address space, not memory.
func (p *mtxParser) allocate(size int64, gz bool) {
	c := p.h.Entries
	if size > 0 {
		room := (size + 1) / minEntryBytes
		if gz {
			room = size / minEntryBytes * maxDeflateRatio
		}
		c = min(c, room+1)
	} else {
		c = min(c, 1<<16)
	}
	p.resize(c)
}

// capacity returns the number of entries the arrays hold.
func (p *mtxParser) capacity() int64 {
	if p.wide {
		return int64(len(p.col32))
	}
	return int64(len(p.col16))
}

// resize sets the capacity of the entry arrays to c ≥ p.n, keeping the
// entries stored.
func (p *mtxParser) resize(c int64) {
	n := p.n
	if p.wide {
		p.col32 = resized(p.col32, n, c)
	} else {
		p.col16 = resized(p.col16, n, c)
	}
	if p.real != nil {
		p.real = resized(p.real, n, c)
	} else {
		p.small = resized(p.small, n, c)
	}
	if p.rowOf != nil {
		p.rowOf = resized(p.rowOf, n, c)
	}
}

// resized returns a slice of length c holding x[:n].
func resized[T any](x []T, n, c int64) []T {
	if int64(len(x)) == c {
		return x
	}
	y := make([]T, c)
	copy(y, x[:n])
	return y
}

// grow doubles the capacity of the entry arrays, up to the announced count.
func (p *mtxParser) grow() { p.resize(min(p.h.Entries, 2*p.capacity()+1)) }

// entryLine returns the line of the entry read k-th (from 0).
func (p *mtxParser) entryLine(k int64) int {
	g, _ := slices.BinarySearch(p.gaps, k+1) // gaps at or before entry k
	return p.h.SizeLine + 1 + int(k) + g
}

// store adds the entry read as line line at output (r, c) with the value
// v, finite and above zero. It returns false when the entry repeats one
// already read; p.dup then says which.
func (p *mtxParser) store(r, c int, v float32, line int) bool {
	if p.ordered {
		if r != p.lastRow {
			if r < p.lastRow {
				p.unorder()
			} else {
				p.lastRow = r
			}
		}
		if p.ordered {
			if p.seenRow[c] == uint32(r)+1 {
				p.dup = &duplicate{row: r, col: c, lines: [2]int{p.entryLine(p.seenAt[c]), line}}
				p.dup.file(p.transpose)
				return false
			}
			p.seenRow[c], p.seenAt[c] = uint32(r)+1, p.read
		}
	}
	if p.n == p.capacity() {
		p.grow()
	}
	k := p.n
	if p.rowOf != nil {
		p.rowOf[k] = uint32(r)
	}
	p.perRow[r+1]++
	if p.wide {
		p.col32[k] = int32(c)
	} else {
		p.col16[k] = uint16(c)
	}
	switch {
	case p.real != nil:
		p.real[k] = v
	case v < sparse.LargeMark && v == float32(int(v)):
		p.small[k] = uint8(v)
		p.rowSmall[r] += int64(v)
		p.colRows[c]++
	case sparse.IsCount(v):
		p.colRows[c]++
		p.small[k] = sparse.LargeMark
		p.large = append(p.large, largeEntry{row: uint32(r), col: int32(c), k: k, v: v})
	default:
		p.toReal()
		p.real[k] = v
	}
	p.n++
	if p.rowOf != nil && p.n >= p.checkAt {
		p.checkAt *= checkGrowth
		p.checkDuplicates()
		return p.dup == nil
	}
	return true
}

// toReal moves the values stored so far from counts to float32.
func (p *mtxParser) toReal() {
	real := make([]float32, len(p.small))
	for k, s := range p.small[:p.n] {
		real[k] = float32(s)
	}
	for _, e := range p.large {
		real[e.k] = e.v
	}
	p.real, p.small, p.large = real, nil, nil
	p.rowSmall, p.colRows = nil, nil
}

// unorder notes that the entries are not grouped by row: from now on each
// entry's row is kept beside it.
func (p *mtxParser) unorder() {
	p.ordered = false
	p.seenRow, p.seenAt = nil, nil
	p.rowOf = make([]uint32, p.capacity())
	k := 0
	for r := 0; r < p.outRows && int64(k) < p.n; r++ {
		for range p.perRow[r+1] {
			p.rowOf[k] = uint32(r)
			k++
		}
	}
	p.checkAt = max(checkGrowth*p.n, firstCheck)
}

// readEntries parses the entry lines into p's arrays.
func (p *mtxParser) readEntries() error {
	s, h := p.s, p.h
	for p.dup == nil {
		// Parse what is buffered as far as it goes; the line it stops
		// at (a comment, a blank line, an error, a line the buffer
		// holds only part of) takes the general path below.
		s.r += p.fastBlock(s.buf[s.r:s.w])
		if p.dup != nil || !s.next() {
			break
		}
		i, j, v, blank, err := p.slowEntry(s.text)
		if err != nil {
			return err
		}
		if blank {
			p.gaps = append(p.gaps, p.read)
			continue
		}
		if p.read == h.Entries {
			return errorf(p.name, s.line, 0, ErrEntryCount, "more entries than the %d announced on line %d", h.Entries, h.SizeLine)
		}
		if p.transpose {
			i, j = j, i
		}
		if v != 0 && !p.store(int(i-1), int(j-1), v, s.line) {
			break
		}
		p.read++
	}
	if p.dup != nil {
		return nil
	}
	if err := s.failure(p.name); err != nil {
		return err
	}
	if p.read < h.Entries {
		return errorf(p.name, s.line+1, 0, ErrEntryCount, "file ends after %d of the %d entries announced on line %d", p.read, h.Entries, h.SizeLine)
	}
	return nil
}

// fastBlock parses, from the start of buf, the entry lines of the common
// form: three fields separated by spaces or tabs, with spaces or tabs also
// allowed before the first and after the last, ending in "\n" or "\r\n";
// indices in range; for the integer field a non-negative integer of at
// most 18 digits, for the real field a non-negative value fastFloat reads.
// It stops at any other line, at the end of buf, at a duplicate, or when
// the size line's count is reached, and returns the bytes used, which end
// at a line's end. It allocates nothing but the arrays' growth.
func (p *mtxParser) fastBlock(buf []byte) int {
	rows, cols := uint64(p.h.Rows), uint64(p.h.Cols)
	integer, transpose := p.h.Integer, p.transpose
	n := len(buf)
	k := 0
	for p.read < p.h.Entries {
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
			var x uint64
			for ; k < n && k-vs < 18; k++ {
				d := buf[k] - '0'
				if d > 9 {
					break
				}
				x = x*10 + uint64(d)
			}
			if k == vs {
				return start // a sign, or no digit: the general path
			}
			v = float32(x)
		} else {
			for k < n && buf[k] != '\n' && buf[k] != ' ' && buf[k] != '\t' && buf[k] != '\r' {
				k++
			}
			x, ok := fastFloat(buf[vs:k])
			if !ok || x < 0 {
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
		if v != 0 && !p.store(int(i-1), int(j-1), v, p.s.line+1) {
			return start
		}
		p.read++
		p.s.line++
	}
	return k
}

// isBlank reports whether buf[k] is a space or a tab.
func isBlank(buf []byte, k int) bool {
	return k < len(buf) && (buf[k] == ' ' || buf[k] == '\t')
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
		n, ok := parseInt(tv)
		if !ok {
			return 0, 0, 0, false, errorf(p.name, s.line, 3, ErrNotNumber, "value %s is not an integer", quote(tv))
		}
		if n < 0 {
			return 0, 0, 0, false, p.negativeError(tv)
		}
		return i, j, float32(n), false, nil
	}
	x, ok := parseFloat(tv)
	if !ok {
		return 0, 0, 0, false, errorf(p.name, s.line, 3, ErrNotNumber, "value %s is not a number", quote(tv))
	}
	if v, ok = toFloat32(x); !ok {
		return 0, 0, 0, false, errorf(p.name, s.line, 3, ErrNotFinite, "value %s is not a finite float32", quote(tv))
	}
	if x < 0 {
		return 0, 0, 0, false, p.negativeError(tv)
	}
	return i, j, v, false, nil
}

// negativeError reports a negative value.
func (p *mtxParser) negativeError(tok []byte) error {
	return errorf(p.name, p.s.line, 3, ErrNegative, "%s (counts are never below zero)", quote(tok))
}

// indexError reports a row or column index that is not an integer in
// 1…max.
func (p *mtxParser) indexError(tok []byte, col int, what string, max uint64) error {
	if _, ok := parseUint(tok, math.MaxUint64>>1); ok {
		return errorf(p.name, p.s.line, col, ErrIndexRange, "%s index %s outside 1…%d", what, tok, max)
	}
	return errorf(p.name, p.s.line, col, ErrNotNumber, "%s index %s is not a positive integer", what, quote(tok))
}
