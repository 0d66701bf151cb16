package ingest

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"

	"lodestone/compute/sparse"
)

// WriteMatrixMarket writes m to w in the Matrix Market coordinate format
// (NISTIR 5935) with general symmetry, row by row, with 1-based indices:
//
//	%%MatrixMarket matrix coordinate integer general
//	rows cols entries
//	i j value
//
// The field is integer when every value is an integer below 2^53 in
// magnitude (always for counts), else real, each value written as the
// shortest decimal that reads back as the same float32. m must be valid (see
// sparse.Counts.Validate).
func WriteMatrixMarket(w io.Writer, m *sparse.Counts) error {
	if err := m.Validate(); err != nil {
		return fmt.Errorf("ingest: writing Matrix Market: %w", err)
	}
	integer := true
	for _, v := range m.Real {
		integer = integer && v == float32(math.Trunc(float64(v))) && math.Abs(float64(v)) < 1<<53
	}
	bw := bufio.NewWriterSize(w, 256<<10)
	if err := WriteMatrixMarketHeader(bw, m.Rows, m.Cols, m.NNZ(), integer); err != nil {
		return err
	}
	var cols []int32
	var vals []float32
	buf := make([]byte, 0, 64)
	for i := 0; i < m.Rows; i++ {
		cols, vals = m.Row(i, cols, vals)
		for k, c := range cols {
			buf = AppendEntry(buf[:0], i, int(c), vals[k])
			if _, err := bw.Write(buf); err != nil {
				return err
			}
		}
	}
	return bw.Flush()
}

// WriteMatrixMarketHeader writes the header and size line of a coordinate
// general matrix with the integer field (integer true) or the real one.
func WriteMatrixMarketHeader(w io.Writer, rows, cols int, entries int64, integer bool) error {
	field := "real"
	if integer {
		field = "integer"
	}
	_, err := fmt.Fprintf(w, "%%%%MatrixMarket matrix coordinate %s general\n%d %d %d\n", field, rows, cols, entries)
	return err
}

// AppendEntry appends the entry line of the value v at row i and column j
// (from 0): the indices from 1, v as an integer when it is one below 2^53,
// else as the shortest decimal that reads back as the same float32.
func AppendEntry(buf []byte, i, j int, v float32) []byte {
	buf = strconv.AppendInt(buf, int64(i)+1, 10)
	buf = append(buf, ' ')
	buf = strconv.AppendInt(buf, int64(j)+1, 10)
	buf = append(buf, ' ')
	if x := float64(v); x == math.Trunc(x) && math.Abs(x) < 1<<53 {
		buf = strconv.AppendInt(buf, int64(x), 10)
	} else {
		buf = strconv.AppendFloat(buf, x, 'g', -1, 32)
	}
	return append(buf, '\n')
}
