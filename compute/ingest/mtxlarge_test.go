package ingest

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"os"
	"strings"
	"testing"
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
