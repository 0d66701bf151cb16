package ingest

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"lodestone/compute/sparse"
)

// nistExample is the 5×5 coordinate real general example printed in
// Boisvert, Pozo & Remington (1996), "The Matrix Market Exchange Formats:
// Initial Design", NISTIR 5935, copied by hand with its comment lines.
const nistExample = `%%MatrixMarket matrix coordinate real general
%=================================================================================
%
% This ASCII file represents a sparse MxN matrix with L 
% nonzeros in the following Matrix Market format:
%
% +----------------------------------------------+
% |%%MatrixMarket matrix coordinate real general | <--- header line
% |%                                             | <--+
% |% comments                                    |    |-- 0 or more comment lines
% |%                                             | <--+         
% |    M  N  L                                   | <--- rows, columns, entries
% |    I1  J1  A(I1, J1)                         | <--+
% |    I2  J2  A(I2, J2)                         |    |
% |    I3  J3  A(I3, J3)                         |    |-- L lines
% |        . . .                                 |    |
% |    IL JL  A(IL, JL)                          | <--+
% +----------------------------------------------+   
%
% Indices are 1-based, i.e. A(1,1) is the first element.
%
%=================================================================================
  5  5  8
    1     1   1.000e+00
    2     2   1.050e+01
    3     3   1.500e-02
    1     4   6.000e+00
    4     2   2.505e+02
    4     4  -2.800e+02
    4     5   3.332e+01
    5     5   1.200e+01
`

// nistCounts is nistExample with its one negative value made positive:
// Lodestone reads counts, which are never negative.
var nistCounts = strings.Replace(nistExample, "-2.800e+02", " 2.800e+02", 1)

// nistMatrix is the matrix the same document prints beside the file, with
// the sign of its negative value changed as in nistCounts.
var nistMatrix = [][]float64{
	{1, 0, 0, 6, 0},
	{0, 10.5, 0, 0, 0},
	{0, 0, .015, 0, 0},
	{0, 250.5, 0, 280, 33.32},
	{0, 0, 0, 0, 12},
}

func float32Equal(t *testing.T, got [][]float64, want [][]float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%d rows, want %d", len(got), len(want))
	}
	for i := range want {
		if len(got[i]) != len(want[i]) {
			t.Fatalf("row %d: %d columns, want %d", i, len(got[i]), len(want[i]))
		}
		for j := range want[i] {
			if got[i][j] != float64(float32(want[i][j])) {
				t.Errorf("(%d,%d) = %v, want float32(%v)", i, j, got[i][j], want[i][j])
			}
		}
	}
}

func transposeDense(a [][]float64) [][]float64 {
	out := make([][]float64, len(a[0]))
	for j := range out {
		out[j] = make([]float64, len(a))
		for i := range a {
			out[j][i] = a[i][j]
		}
	}
	return out
}

func TestReadMatrixMarketPublishedExample(t *testing.T) {
	// Reference: the matrix printed in NISTIR 5935 beside its file.
	for _, compress := range []bool{false, true} {
		for _, tr := range []bool{false, true} {
			t.Run(fmt.Sprintf("gzip=%v,transpose=%v", compress, tr), func(t *testing.T) {
				data := []byte(nistCounts)
				if compress {
					data = gz(t, data)
				}
				var seen MatrixHeader
				m, err := ReadMatrixMarket(bg, bytes.NewReader(data), "nist.mtx", MatrixOptions{
					Transpose: func(h MatrixHeader) (bool, error) { seen = h; return tr, nil },
				})
				if err != nil {
					t.Fatal(err)
				}
				if err := m.Validate(); err != nil {
					t.Fatal(err)
				}
				want := nistMatrix
				if tr {
					want = transposeDense(nistMatrix)
				}
				float32Equal(t, dense(m), want)
				if m.NNZ() != 8 {
					t.Errorf("%d entries, want 8", m.NNZ())
				}
				if seen != (MatrixHeader{Rows: 5, Cols: 5, Entries: 8, SizeLine: 23}) {
					t.Errorf("header %+v", seen)
				}
			})
		}
	}
}

func TestReadMatrixMarketRefusesNegativeValues(t *testing.T) {
	// The published example holds one negative value, on line 29: counts
	// are never negative, so it is refused there, field 3, plain or gzip,
	// either way round.
	for _, compress := range []bool{false, true} {
		for _, tr := range []bool{false, true} {
			data := []byte(nistExample)
			if compress {
				data = gz(t, data)
			}
			_, err := ReadMatrixMarket(bg, bytes.NewReader(data), "nist.mtx", MatrixOptions{
				Transpose: func(MatrixHeader) (bool, error) { return tr, nil }})
			wantParseError(t, err, "nist.mtx", 29, 3, ErrNegative)
		}
	}
	head := "%%MatrixMarket matrix coordinate integer general\n3 3 3\n1 1 2\n"
	_, err := ReadMatrixMarket(bg, strings.NewReader(head+"2 2 5\n3 1 -3\n"), "neg.mtx", MatrixOptions{})
	wantParseError(t, err, "neg.mtx", 5, 3, ErrNegative)
	if want := "neg.mtx:5:3: negative value: \"-3\""; !strings.HasPrefix(err.Error(), want) {
		t.Errorf("message %q, want it to start %q", err, want)
	}
	// A negative zero is a zero.
	for _, text := range []string{head + "2 2 -0\n3 1 -0\n", strings.Replace(head, "integer", "real", 1) + "2 2 -0\n3 1 -0.0e1\n"} {
		m, err := ReadMatrixMarket(bg, strings.NewReader(text), "z.mtx", MatrixOptions{})
		if err != nil || m.NNZ() != 1 {
			t.Errorf("negative zeros: %v", err)
		}
	}
}

func TestReadMatrixMarketHeaderCase(t *testing.T) {
	// NISTIR 5935: the header's keywords are not case-sensitive.
	text := "%%matrixmarket MATRIX Coordinate INTEGER General\n2 3 2\n1 3 7\n2 1 4\n"
	m, err := ReadMatrixMarket(bg, strings.NewReader(text), "case.mtx", MatrixOptions{})
	if err != nil {
		t.Fatal(err)
	}
	float32Equal(t, dense(m), [][]float64{{0, 0, 7}, {4, 0, 0}})
}

func TestReadMatrixMarketDropsZerosAndBlankLines(t *testing.T) {
	text := "%%MatrixMarket matrix coordinate real general\n% c\n\n3 2 4\n3 1 0\n\n1 2 2.5\r\n% note\n2 2 0.0\n3 2 1e-3\n\n"
	m, err := ReadMatrixMarket(bg, strings.NewReader(text), "z.mtx", MatrixOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if err := m.Validate(); err != nil {
		t.Fatal(err)
	}
	float32Equal(t, dense(m), [][]float64{{0, 2.5}, {0, 0}, {0, 1e-3}})
	if m.NNZ() != 2 {
		t.Errorf("%d stored entries, want 2 (zeros dropped)", m.NNZ())
	}
}

// randomEntries returns the entries of a random rows×cols matrix with about
// density·rows·cols distinct positions, in random order.
func randomEntries(rng *rand.Rand, rows, cols int, density float64, integer bool) (text string, want [][]float64) {
	want = make([][]float64, rows)
	for i := range want {
		want[i] = make([]float64, cols)
	}
	type entry struct {
		i, j int
		v    string
	}
	var es []entry
	for i := 0; i < rows; i++ {
		for j := 0; j < cols; j++ {
			if rng.Float64() >= density {
				continue
			}
			var v string
			var x float64
			if integer {
				n := rng.IntN(1000)
				v, x = fmt.Sprint(n), float64(n)
			} else {
				x = math.Abs(rng.NormFloat64() * float64(rng.IntN(1000)+1))
				v = fmt.Sprintf("%.6g", x)
				fmt.Sscan(v, &x)
			}
			want[i][j] = x
			es = append(es, entry{i + 1, j + 1, v})
		}
	}
	rng.Shuffle(len(es), func(a, b int) { es[a], es[b] = es[b], es[a] })
	field := "real"
	if integer {
		field = "integer"
	}
	var b strings.Builder
	fmt.Fprintf(&b, "%%%%MatrixMarket matrix coordinate %s general\n%d %d %d\n", field, rows, cols, len(es))
	for _, e := range es {
		fmt.Fprintf(&b, "%d %d %s\n", e.i, e.j, e.v)
	}
	return b.String(), want
}

// messy rewrites the entry lines of a Matrix Market text with runs of
// spaces and tabs between and around the fields and some "\r\n" ends.
func messy(rng *rand.Rand, text string) string {
	blanks := []string{"", " ", "\t", "  ", " \t ", "    "}
	lines := strings.Split(text, "\n")
	for k := 2; k < len(lines); k++ {
		f := strings.Fields(lines[k])
		if len(f) != 3 {
			continue
		}
		sep := func() string { return blanks[1+rng.IntN(len(blanks)-1)] }
		end := blanks[rng.IntN(len(blanks))]
		if rng.IntN(3) == 0 {
			end += "\r"
		}
		lines[k] = blanks[rng.IntN(len(blanks))] + f[0] + sep() + f[1] + sep() + f[2] + end
	}
	return strings.Join(lines, "\n")
}

func TestReadMatrixMarketRandomOrder(t *testing.T) {
	// Reference: an exact slow computation, the dense matrix built entry by
	// entry while writing the file.
	rng := rand.New(rand.NewPCG(1, 2))
	for trial := 0; trial < 20; trial++ {
		rows, cols := 1+rng.IntN(60), 1+rng.IntN(60)
		integer := trial%2 == 0
		text, want := randomEntries(rng, rows, cols, rng.Float64()*0.5, integer)
		if trial%4 >= 2 {
			text = messy(rng, text)
		}
		for _, tr := range []bool{false, true} {
			for _, known := range []bool{false, true} {
				var r io.Reader = strings.NewReader(text)
				if !known {
					r = struct{ io.Reader }{r} // hides Len: storage grows
				}
				m, err := ReadMatrixMarket(bg, r, "r.mtx", MatrixOptions{Transpose: func(MatrixHeader) (bool, error) { return tr, nil }})
				if err != nil {
					t.Fatal(err)
				}
				// Validate also checks the tally, gathered for counts,
				// against the entries.
				if err := m.Validate(); err != nil {
					t.Fatal(err)
				}
				if (m.Tally != nil) != !m.IsReal() {
					t.Fatalf("real values %v, tally %v", m.IsReal(), m.Tally != nil)
				}
				w := want
				if tr {
					w = transposeDense(want)
				}
				float32Equal(t, dense(m), w)
			}
		}
	}
}

func TestReadMatrixMarketErrors(t *testing.T) {
	head := "%%MatrixMarket matrix coordinate integer general\n"
	cases := []struct {
		name, text   string
		line, column int
		err          error
	}{
		{"empty", "", 1, 0, ErrEmpty},
		{"no banner", "3 3 1\n1 1 1\n", 1, 1, ErrHeader},
		{"missing keyword", "%%MatrixMarket matrix coordinate\n", 1, 4, ErrHeader},
		{"unknown field", "%%MatrixMarket matrix coordinate quaternion general\n", 1, 4, ErrHeader},
		{"array", "%%MatrixMarket matrix array real general\n2 2\n1\n2\n3\n4\n", 1, 3, ErrUnsupported},
		{"pattern", "%%MatrixMarket matrix coordinate pattern general\n2 2 1\n1 1\n", 1, 4, ErrUnsupported},
		{"complex", "%%MatrixMarket matrix coordinate complex general\n2 2 1\n1 1 1 0\n", 1, 4, ErrUnsupported},
		{"symmetric", "%%MatrixMarket matrix coordinate real symmetric\n2 2 1\n1 1 1\n", 1, 5, ErrUnsupported},
		{"skew", "%%MatrixMarket matrix coordinate real Skew-Symmetric\n2 2 1\n1 1 1\n", 1, 5, ErrUnsupported},
		{"vector", "%%MatrixMarket vector coordinate real general\n", 1, 2, ErrUnsupported},
		{"no size line", head + "% only comments\n", 3, 0, ErrSizeLine},
		{"short size line", head + "% c\n3 3\n", 3, 3, ErrSizeLine},
		{"bad size", head + "3 x 1\n", 2, 2, ErrSizeLine},
		{"too many for shape", head + "2 2 5\n", 2, 3, ErrSizeLine},
		{"row out of range", head + "2 3 2\n1 1 1\n3 1 1\n", 4, 1, ErrIndexRange},
		{"column out of range", head + "2 3 2\n1 1 1\n1 4 1\n", 4, 2, ErrIndexRange},
		{"zero index", head + "2 3 1\n0 1 1\n", 3, 1, ErrIndexRange},
		{"index not a number", head + "2 3 1\n1 b 1\n", 3, 2, ErrNotNumber},
		{"value not a number", head + "2 3 1\n1 1 x\n", 3, 3, ErrNotNumber},
		{"integer field with a real", head + "2 3 1\n1 1 2.5\n", 3, 3, ErrNotNumber},
		{"nan", "%%MatrixMarket matrix coordinate real general\n2 3 1\n1 1 NaN\n", 3, 3, ErrNotFinite},
		{"inf", "%%MatrixMarket matrix coordinate real general\n2 3 1\n1 1 -Inf\n", 3, 3, ErrNotFinite},
		{"beyond float32", "%%MatrixMarket matrix coordinate real general\n2 3 1\n1 1 1e39\n", 3, 3, ErrNotFinite},
		{"two fields", head + "2 3 1\n1 1\n", 3, 3, ErrFieldCount},
		{"four fields", head + "2 3 1\n1 1 1 1\n", 3, 4, ErrFieldCount},
		// Too few: the error names the line where the file ended.
		{"too few", head + "% c\n2 3 3\n1 1 1\n2 2 2\n", 6, 0, ErrEntryCount},
		{"too few, no final newline", head + "2 3 3\n1 1 1\n2 2 2", 5, 0, ErrEntryCount},
		// Too many: the error names the first extra line.
		{"too many", head + "2 3 1\n1 1 1\n\n2 2 2\n", 5, 0, ErrEntryCount},
		{"duplicate, ordered", head + "2 3 3\n1 1 1\n1 3 2\n1 1 3\n", 5, 0, ErrDuplicateEntry},
		{"duplicate, unordered", head + "3 3 4\n3 1 1\n1 2 2\n% c\n3 3 4\n1 2 5\n", 7, 0, ErrDuplicateEntry},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ReadMatrixMarket(bg, strings.NewReader(c.text), "m.mtx", MatrixOptions{})
			wantParseError(t, err, "m.mtx", c.line, c.column, c.err)
		})
	}
}

func TestReadMatrixMarketDuplicateNamesBothLines(t *testing.T) {
	head := "%%MatrixMarket matrix coordinate integer general\n"
	cases := []struct {
		text      string
		transpose bool
		want      string
	}{
		{head + "2 3 3\n1 1 1\n1 3 2\n1 1 3\n", false, "m.mtx:5: duplicate entry: row 1, column 1 already given on line 3"},
		{head + "3 3 4\n3 1 1\n1 2 2\n% c\n3 3 4\n1 2 5\n", false, "m.mtx:7: duplicate entry: row 1, column 2 already given on line 4"},
		{head + "3 3 4\n3 1 1\n1 2 2\n% c\n3 3 4\n1 2 5\n", true, "m.mtx:7: duplicate entry: row 1, column 2 already given on line 4"},
	}
	for _, c := range cases {
		_, err := ReadMatrixMarket(bg, strings.NewReader(c.text), "m.mtx", MatrixOptions{Transpose: func(MatrixHeader) (bool, error) { return c.transpose, nil }})
		if err == nil || err.Error() != c.want {
			t.Errorf("error %v, want %s", err, c.want)
		}
	}
	// A reader that cannot seek: the entries were moved, so the lines are
	// not known and the error names the position only.
	r := struct{ io.Reader }{strings.NewReader(cases[1].text)}
	_, err := ReadMatrixMarket(bg, r, "m.mtx", MatrixOptions{})
	wantParseError(t, err, "m.mtx", 0, 0, ErrDuplicateEntry)
	if want := "row 1, column 2 is given twice"; !strings.Contains(err.Error(), want) {
		t.Errorf("message %q does not say %q", err, want)
	}
}

func TestReadMatrixMarketTruncatedGzip(t *testing.T) {
	text, _ := randomEntries(rand.New(rand.NewPCG(3, 4)), 200, 200, 0.2, true)
	data := gz(t, []byte(text))
	for _, cut := range []int{len(data) - 4, len(data) / 2, 12} {
		_, err := ReadMatrixMarket(bg, bytes.NewReader(data[:cut]), "t.mtx.gz", MatrixOptions{})
		var pe *ParseError
		if !errors.As(err, &pe) || !errors.Is(err, ErrTruncated) || pe.File != "t.mtx.gz" || pe.Line < 1 {
			t.Errorf("cut at %d of %d: error %v, want a ParseError wrapping ErrTruncated", cut, len(data), err)
		}
	}
	// A damaged byte in the middle fails the CRC or the inflater.
	bad := append([]byte(nil), data...)
	bad[len(bad)/2] ^= 0xff
	// Inflated garbage may also read as a bad line.
	if _, err := ReadMatrixMarket(bg, bytes.NewReader(bad), "t.mtx.gz", MatrixOptions{}); !errors.Is(err, ErrCorrupt) && !errors.Is(err, ErrNotNumber) &&
		!errors.Is(err, ErrFieldCount) && !errors.Is(err, ErrIndexRange) && !errors.Is(err, ErrNegative) {
		t.Errorf("damaged data: error %v", err)
	}
}

func TestReadMatrixMarketTransposeError(t *testing.T) {
	stop := errors.New("stop")
	_, err := ReadMatrixMarket(bg, strings.NewReader(nistExample), "n.mtx", MatrixOptions{Transpose: func(MatrixHeader) (bool, error) { return false, stop }})
	if err != stop {
		t.Errorf("error %v, want the callback's", err)
	}
}

func TestReadMatrixMarketCancel(t *testing.T) {
	text, _ := randomEntries(rand.New(rand.NewPCG(5, 6)), 300, 300, 0.5, true)
	ctx, cancel := context.WithCancel(bg)
	cancel()
	if _, err := ReadMatrixMarket(ctx, strings.NewReader(text), "c.mtx", MatrixOptions{}); !errors.Is(err, context.Canceled) {
		t.Errorf("error %v, want context.Canceled", err)
	}
}

func TestReadMatrixMarketSizeLineBeyondInput(t *testing.T) {
	// A size line announcing more entries than the file can hold does not
	// allocate for them and ends in ErrEntryCount where the file ends.
	text := "%%MatrixMarket matrix coordinate integer general\n100000 100000 2000000000\n1 1 1\n"
	_, err := ReadMatrixMarket(bg, strings.NewReader(text), "big.mtx", MatrixOptions{})
	wantParseError(t, err, "big.mtx", 4, 0, ErrEntryCount)
}

func TestWriteMatrixMarketRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	for trial := 0; trial < 10; trial++ {
		text, _ := randomEntries(rng, 1+rng.IntN(40), 1+rng.IntN(40), 0.3, trial%2 == 0)
		m, err := ReadMatrixMarket(bg, strings.NewReader(text), "a.mtx", MatrixOptions{})
		if err != nil {
			t.Fatal(err)
		}
		var b bytes.Buffer
		if err := WriteMatrixMarket(&b, m); err != nil {
			t.Fatal(err)
		}
		wantField := "real"
		if trial%2 == 0 {
			wantField = "integer"
		}
		if !strings.HasPrefix(b.String(), "%%MatrixMarket matrix coordinate "+wantField+" general\n") {
			t.Errorf("header %q, want field %s", strings.SplitN(b.String(), "\n", 2)[0], wantField)
		}
		back, err := ReadMatrixMarket(bg, &b, "b.mtx", MatrixOptions{})
		if err != nil {
			t.Fatal(err)
		}
		sameCounts(t, back, m)
	}
}

// sameCounts checks that two matrices hold the same entries in the same
// form.
func sameCounts(t *testing.T, gotC, wantC *sparse.Counts) {
	t.Helper()
	if gotC.IsReal() != wantC.IsReal() {
		t.Fatalf("real values %v, want %v", gotC.IsReal(), wantC.IsReal())
	}
	got, want := gotC.ToCSR(), wantC.ToCSR()
	if got.Rows != want.Rows || got.Cols != want.Cols || got.NNZ() != want.NNZ() {
		t.Fatalf("%d×%d with %d entries, want %d×%d with %d", got.Rows, got.Cols, got.NNZ(), want.Rows, want.Cols, want.NNZ())
	}
	for i := range want.RowPtr {
		if got.RowPtr[i] != want.RowPtr[i] {
			t.Fatalf("RowPtr[%d] = %d, want %d", i, got.RowPtr[i], want.RowPtr[i])
		}
	}
	for k := range want.ColIdx {
		if got.ColIdx[k] != want.ColIdx[k] || got.Val[k] != want.Val[k] {
			t.Fatalf("entry %d: (%d, %v), want (%d, %v)", k, got.ColIdx[k], got.Val[k], want.ColIdx[k], want.Val[k])
		}
	}
}

func TestReadMatrixMarketProgress(t *testing.T) {
	text, _ := randomEntries(rand.New(rand.NewPCG(15, 16)), 1000, 1000, 0.25, true)
	for _, data := range [][]byte{[]byte(text), gz(t, []byte(text))} {
		var last, total int64
		calls := 0
		_, err := ReadMatrixMarket(bg, bytes.NewReader(data), "p.mtx", MatrixOptions{Progress: func(done, tot int64) {
			if done < last || tot != int64(len(data)) {
				t.Errorf("progress %d of %d after %d", done, tot, last)
			}
			last, total = done, tot
			calls++
		}})
		if err != nil {
			t.Fatal(err)
		}
		if last != int64(len(data)) || total != int64(len(data)) || (len(data) > 2*reportEvery && calls < 2) {
			t.Errorf("progress ended at %d of %d after %d calls; want %d", last, total, calls, len(data))
		}
	}
}

// cancelAfter cancels a context once more than n bytes have been read.
type cancelAfter struct {
	r      io.Reader
	n      int
	cancel context.CancelFunc
}

func (c *cancelAfter) Read(p []byte) (int, error) {
	k, err := c.r.Read(p)
	if c.n -= k; c.n < 0 {
		c.cancel()
	}
	return k, err
}

func TestReadMatrixMarketCancelWhileReading(t *testing.T) {
	// The context is checked each time the buffer is refilled, so a read
	// stops about a buffer after the cancellation.
	text, _ := randomEntries(rand.New(rand.NewPCG(17, 18)), 600, 600, 0.5, true)
	for _, data := range [][]byte{[]byte(text), gz(t, []byte(text))} {
		ctx, cancel := context.WithCancel(bg)
		r := &cancelAfter{r: bytes.NewReader(data), n: len(data) / 4, cancel: cancel}
		_, err := ReadMatrixMarket(ctx, r, "c.mtx", MatrixOptions{})
		if !errors.Is(err, context.Canceled) {
			t.Errorf("error %v, want context.Canceled", err)
		}
		cancel()
	}
}

func TestGzipTrailingDataIsNamedAsSuch(t *testing.T) {
	text := []byte(mtxText(cellsByGenes, false))
	two := append(gz(t, text[:40]), gz(t, text[40:])...) // two members: one file (RFC 1952, 2.2)
	cases := []struct {
		name  string
		data  []byte
		err   error
		bytes string
	}{
		{"garbage", append(gz(t, text), "garbage\n"...), ErrTrailingData, "8 bytes"},
		{"random", append(gz(t, text), 0x55, 0x1f, 0x00, 0x10, 0x20, 0x30, 0x40, 0x50, 0x60, 0x70, 0x80, 0x90), ErrTrailingData, "12 bytes"},
		{"zero padding", append(gz(t, text), make([]byte, 512)...), nil, ""},
		{"two members", two, nil, ""},
		{"cut", gz(t, text)[:30], ErrTruncated, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			m, err := ReadMatrixMarket(bg, bytes.NewReader(c.data), "m.mtx.gz", MatrixOptions{})
			if c.err == nil {
				if err != nil {
					t.Fatal(err)
				}
				float32Equal(t, dense(m), cellsByGenes)
				return
			}
			if !errors.Is(err, c.err) || !strings.Contains(err.Error(), "m.mtx.gz") || !strings.Contains(err.Error(), c.bytes) {
				t.Fatalf("error %v, want %v naming the file and %q", err, c.err, c.bytes)
			}
			if c.err == ErrTrailingData && (!strings.Contains(err.Error(), "follow the end of the compressed stream") || !strings.Contains(err.Error(), "m.mtx.gz: data after the compressed stream")) {
				t.Fatalf("message %q", err)
			}
		})
	}
}
