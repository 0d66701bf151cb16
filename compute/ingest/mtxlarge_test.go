package ingest

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"slices"
	"strings"
	"testing"

	"lodestone/compute/sparse"
)

// lineStream is an io.Reader that generates a Matrix Market text without
// holding it: a head, then the line repeated count times, then a tail.
type lineStream struct {
	head, line, tail []byte
	count            int64
	block            []byte // many copies of line
	left             int64  // copies of line still to give
	pending          []byte // the unread rest of the current piece
	stage            int
}

func newLineStream(head, line, tail string, count int64) *lineStream {
	s := &lineStream{head: []byte(head), line: []byte(line), tail: []byte(tail), count: count, left: count}
	s.block = bytes.Repeat(s.line, (256<<10)/len(line))
	s.pending = s.head
	return s
}

func (s *lineStream) Read(p []byte) (int, error) {
	for len(s.pending) == 0 {
		switch {
		case s.stage == 0 && s.left > 0:
			k := min(s.left, int64(len(s.block)/len(s.line)))
			s.left -= k
			s.pending = s.block[:k*int64(len(s.line))]
		case s.stage == 0:
			s.stage, s.pending = 1, s.tail
		default:
			return 0, io.EOF
		}
	}
	n := copy(p, s.pending)
	s.pending = s.pending[n:]
	return n, nil
}

func TestLineStream(t *testing.T) {
	got, err := io.ReadAll(newLineStream("h\n", "1 1 0\n", "t\n", 100000))
	if err != nil {
		t.Fatal(err)
	}
	want := "h\n" + string(bytes.Repeat([]byte("1 1 0\n"), 100000)) + "t\n"
	if string(got) != want {
		t.Fatal("the stream differs from its text")
	}
}

func TestReadMatrixMarketBeyond2To31Entries(t *testing.T) {
	// A matrix announcing and holding 2^31 + 3 entries (more than an int32
	// counts), generated as it is read: 2^31 explicit zeros, checked and
	// dropped, then three counts, the last out of row order. The entry
	// count is 64-bit all the way: the size line, the count of entries
	// read, and the check that the file holds as many as it announces.
	if os.Getenv("LODESTONE_BIG_TESTS") == "" {
		t.Skip("reads 13 GB of generated text (about 30 s); set LODESTONE_BIG_TESTS=1 to run")
	}
	const zeros = 1 << 31
	entries := int64(zeros + 3)
	if entries <= math.MaxInt32 {
		t.Fatal("the test matrix is too small")
	}
	head := fmt.Sprintf("%%%%MatrixMarket matrix coordinate integer general\n65536 65536 %d\n", entries)
	tail := "2 5 7\n65536 65536 300\n1 3 2\n"
	var seen MatrixHeader
	m, err := ReadMatrixMarket(bg, newLineStream(head, "1 1 0\n", tail, zeros), "big.mtx", MatrixOptions{
		Transpose: func(h MatrixHeader) (bool, error) { seen = h; return false, nil }})
	if err != nil {
		t.Fatal(err)
	}
	if seen.Entries != entries || seen.Rows != 65536 || seen.Cols != 65536 {
		t.Fatalf("header %+v", seen)
	}
	if err := m.Validate(); err != nil {
		t.Fatal(err)
	}
	if m.NNZ() != 3 || m.At(1, 4) != 7 || m.At(65535, 65535) != 300 || m.At(0, 2) != 2 {
		t.Fatalf("%d entries: %v %v %v", m.NNZ(), m.At(1, 4), m.At(65535, 65535), m.At(0, 2))
	}
}

func TestReadMatrixMarketEntryCountBeyondInt32(t *testing.T) {
	// The size line may announce more than 2^31 − 1 entries; a file that
	// ends early says how many it held of how many.
	text := "%%MatrixMarket matrix coordinate integer general\n65536 65536 2147483651\n1 1 1\n"
	_, err := ReadMatrixMarket(bg, strings.NewReader(text), "m.mtx", MatrixOptions{})
	wantParseError(t, err, "m.mtx", 4, 0, ErrEntryCount)
	if want := "file ends after 1 of the 2147483651 entries announced on line 2"; !strings.Contains(err.Error(), want) {
		t.Errorf("message %q does not say %q", err, want)
	}
	text = "%%MatrixMarket matrix coordinate integer general\n4294967296 1 1\n"
	_, err = ReadMatrixMarket(bg, strings.NewReader(text), "m.mtx", MatrixOptions{})
	wantParseError(t, err, "m.mtx", 2, 1, ErrSizeLine)
}

func TestReadMatrixMarketCountsAboveOneByte(t *testing.T) {
	// Counts of 255 and more are held aside, exactly up to 2^24 and
	// rounded to float32 above (as float32 values always were); the
	// matrix stays in counts, 3 bytes per entry plus 12 per large count.
	text := "%%MatrixMarket matrix coordinate integer general\n2 4 7\n" +
		"1 1 254\n1 2 255\n1 4 65536\n2 1 16777217\n2 2 1\n2 3 10000000000\n2 4 3\n"
	m, err := ReadMatrixMarket(bg, strings.NewReader(text), "big.mtx", MatrixOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if err := m.Validate(); err != nil {
		t.Fatal(err)
	}
	want := [][]float64{{254, 255, 0, 65536}, {float64(float32(16777217)), 1, float64(float32(1e10)), 3}}
	float32Equal(t, dense(m), want)
	// The tally gathered while reading: row totals and rows per column.
	checkTally(t, m, []float64{254 + 255 + 65536, 1 + 3 + 16777216 + 1e10}, []int64{2, 2, 1, 2})
	if m.IsReal() || len(m.LargeAt) != 4 || m.Bytes() != 3*8+7*3+4*12 {
		t.Errorf("real %v, %d large counts, %d bytes", m.IsReal(), len(m.LargeAt), m.Bytes())
	}
	// The same entries in reverse order (grouped by row again in place),
	// and transposed.
	lines := strings.Split(strings.TrimSpace(text), "\n")
	slices.Reverse(lines[2:])
	back, err := ReadMatrixMarket(bg, strings.NewReader(strings.Join(lines, "\n")), "rev.mtx", MatrixOptions{
		Transpose: func(MatrixHeader) (bool, error) { return true, nil }})
	if err != nil {
		t.Fatal(err)
	}
	if err := back.Validate(); err != nil {
		t.Fatal(err)
	}
	float32Equal(t, dense(back), transposeDense(want))
	checkTally(t, back, []float64{254 + 16777216, 255 + 1, 1e10, 65536 + 3}, []int64{3, 4})
}

// checkTally fails t unless m's tally holds the given row totals and rows per
// column.
func checkTally(t *testing.T, m *sparse.Counts, rowTotal []float64, colRows []int64) {
	t.Helper()
	if m.Tally == nil || !slices.Equal(m.Tally.RowTotal, rowTotal) || !slices.Equal(m.Tally.ColRows, colRows) {
		t.Errorf("tally %+v, want row totals %v and column rows %v", m.Tally, rowTotal, colRows)
	}
}

func TestReadMatrixMarketRealValues(t *testing.T) {
	// A real field of whole numbers is read as counts; one value that is
	// not a whole number makes all of them float32 (6 bytes per entry),
	// whenever it comes, with the large counts read before it kept.
	head := "%%MatrixMarket matrix coordinate real general\n3 3 4\n"
	m, err := ReadMatrixMarket(bg, strings.NewReader(head+"1 1 3.0\n2 2 1e3\n3 3 7\n3 1 2\n"), "r.mtx", MatrixOptions{})
	if err != nil || m.IsReal() || m.At(1, 1) != 1000 {
		t.Fatalf("whole numbers: %v, real %v", err, m != nil && m.IsReal())
	}
	for _, order := range []string{
		"1 1 3.0\n2 2 1e3\n3 3 0.25\n3 1 2\n",
		"3 3 0.25\n2 2 1e3\n1 1 3.0\n3 1 2\n",
	} {
		m, err := ReadMatrixMarket(bg, strings.NewReader(head+order), "r.mtx", MatrixOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if err := m.Validate(); err != nil {
			t.Fatal(err)
		}
		if !m.IsReal() || m.Tally != nil || m.Bytes() != 4*8+4*6 {
			t.Errorf("real %v, %d bytes", m.IsReal(), m.Bytes())
		}
		float32Equal(t, dense(m), [][]float64{{3, 0, 0}, {0, 1000, 0}, {2, 0, 0.25}})
	}
}

func TestReadMatrixMarketManyGenes(t *testing.T) {
	// Beyond 65,536 genes, column indices take 32 bits.
	text := "%%MatrixMarket matrix coordinate integer general\n70000 2 3\n69999 1 4\n70000 2 5\n1 2 300\n"
	m, err := ReadMatrixMarket(bg, strings.NewReader(text), "wide.mtx", MatrixOptions{
		Transpose: func(MatrixHeader) (bool, error) { return true, nil }})
	if err != nil {
		t.Fatal(err)
	}
	if err := m.Validate(); err != nil {
		t.Fatal(err)
	}
	if m.Col32 == nil || m.At(0, 69998) != 4 || m.At(1, 69999) != 5 || m.At(1, 0) != 300 || m.NNZ() != 3 {
		t.Errorf("32-bit columns %v, values %v %v %v", m.Col32 != nil, m.At(0, 69998), m.At(1, 69999), m.At(1, 0))
	}
}

// countingReader counts the bytes read through it.
type readCounter struct {
	r io.Reader
	n int64
}

func (c *readCounter) Read(p []byte) (int, error) {
	k, err := c.r.Read(p)
	c.n += int64(k)
	return k, err
}

func TestReadMatrixMarketRepeatedEntryStopsEarly(t *testing.T) {
	// One entry repeated, compressed: the second line is a duplicate, found
	// while reading, so only the first buffers of the input are read
	// (before, the whole input was stored, then checked).
	// 1.2 GB of text as 200 gzip members of a million lines each
	// (RFC 1952, 2.2: a gzip file is a series of members).
	const members, lines = 200, 1_000_000
	head := fmt.Sprintf("%%%%MatrixMarket matrix coordinate integer general\n100000 100000 %d\n", members*lines)
	data := append(gz(t, []byte(head)), bytes.Repeat(gz(t, bytes.Repeat([]byte("1 1 1\n"), lines)), members)...)
	r := &readCounter{r: bytes.NewReader(data)}
	_, err := ReadMatrixMarket(bg, r, "rep.mtx.gz", MatrixOptions{Size: int64(len(data))})
	wantParseError(t, err, "rep.mtx.gz", 4, 0, ErrDuplicateEntry)
	if !strings.Contains(err.Error(), "row 1, column 1 already given on line 3") {
		t.Errorf("message %q", err)
	}
	if r.n > int64(len(data))/4 {
		t.Errorf("%d of %d compressed bytes read before the duplicate was found", r.n, len(data))
	}
}

func TestReadMatrixMarketUnorderedDuplicatesBounded(t *testing.T) {
	// Two entries repeated in turn are not grouped by row, so duplicates
	// are looked for whenever the entries read double: the error comes
	// after about firstCheck entries, not at the end of 10^8.
	head := "%%MatrixMarket matrix coordinate integer general\n100000 100000 100000000\n"
	r := &readCounter{r: newLineStream(head, "2 1 1\n1 1 1\n", "", 50_000_000)}
	_, err := ReadMatrixMarket(bg, r, "alt.mtx", MatrixOptions{})
	var pe *ParseError
	if !errors.As(err, &pe) || !errors.Is(err, ErrDuplicateEntry) {
		t.Fatalf("error %v, want a duplicate", err)
	}
	if limit := int64(6 * 4 * firstCheck); r.n > limit {
		t.Errorf("%d bytes read before the duplicate was found, want at most %d", r.n, limit)
	}
}
