package ingest

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"

	"lodestone/compute/sparse"
)

// maxExactInteger is 2^53: integers below it in magnitude are exact in
// float64, so every Matrix Market reader reads them back unchanged.
const maxExactInteger = 1 << 53

// WriteMatrixMarket writes m to w in the Matrix Market coordinate format
// (NISTIR 5935) with general symmetry, row by row, with 1-based indices:
//
//	%%MatrixMarket matrix coordinate integer general
//	rows cols entries
//	i j value
//
// The field is integer when every stored value is an integer below 2^53 in
// magnitude, else real, each value written as the shortest decimal that
// reads back as the same float32. All stored entries are written, zeros
// included. m must be valid (see sparse.CSR.Validate) and hold only finite
// values.
func WriteMatrixMarket(w io.Writer, m *sparse.CSR) error {
	if err := m.Validate(); err != nil {
		return fmt.Errorf("ingest: writing Matrix Market: %w", err)
	}
	integer := true
	for k, v := range m.Val {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			return fmt.Errorf("ingest: writing Matrix Market: entry %d holds %v: %w", k, v, ErrNotFinite)
		}
		integer = integer && v == float32(math.Trunc(float64(v))) && math.Abs(float64(v)) < maxExactInteger
	}
	field := "real"
	if integer {
		field = "integer"
	}
	bw := bufio.NewWriterSize(w, 256<<10)
	fmt.Fprintf(bw, "%%%%MatrixMarket matrix coordinate %s general\n%d %d %d\n", field, m.Rows, m.Cols, m.NNZ())
	buf := make([]byte, 0, 64)
	for i := 0; i < m.Rows; i++ {
		cols, vals := m.Row(i)
		for k, c := range cols {
			buf = strconv.AppendInt(buf[:0], int64(i)+1, 10)
			buf = append(buf, ' ')
			buf = strconv.AppendInt(buf, int64(c)+1, 10)
			buf = append(buf, ' ')
			if integer {
				buf = strconv.AppendInt(buf, int64(vals[k]), 10)
			} else {
				buf = strconv.AppendFloat(buf, float64(vals[k]), 'g', -1, 32)
			}
			buf = append(buf, '\n')
			if _, err := bw.Write(buf); err != nil {
				return err
			}
		}
	}
	return bw.Flush()
}
