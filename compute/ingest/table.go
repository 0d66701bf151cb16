package ingest

import (
	"context"
	"io"
	"math"

	"lodestone/compute/atlas"
	"lodestone/compute/progress"
)

// tableStart is a delimited table whose header and first data row have been
// read.
type tableStart struct {
	rr     *recordReader
	names  []string // the value columns' names
	fields int      // fields on every data row: the ID and one per name
}

// startTable reads the header and the first data row of a delimited table.
// The header either names every column (its first name, that of the ID
// column, is dropped) or only the value columns, with one field fewer than
// the data rows. On return rr holds the first data row.
func startTable(ctx context.Context, src io.Reader, name string) (*tableStart, error) {
	rr := &recordReader{s: newLineScanner(ctx, src), name: name}
	if !rr.next() {
		if rr.err != nil {
			return nil, rr.err
		}
		return nil, errorf(name, 1, 0, ErrEmpty, "no header row")
	}
	header := make([]string, len(rr.fields))
	for k, f := range rr.fields {
		header[k] = string(f)
	}
	headerLine := rr.line
	if !rr.next() {
		if rr.err != nil {
			return nil, rr.err
		}
		return nil, errorf(name, headerLine+1, 0, ErrEmpty, "header but no rows")
	}
	t := &tableStart{rr: rr, fields: len(rr.fields)}
	switch t.fields {
	case len(header):
		t.names = header[1:]
	case len(header) + 1:
		t.names = header
	default:
		return nil, errorf(name, rr.line, 0, ErrFieldCount, "first row has %d fields, header (line %d) has %d", t.fields, headerLine, len(header))
	}
	if len(t.names) == 0 {
		return nil, errorf(name, headerLine, 2, ErrHeader, "no columns after the ID column (separator %q)", rr.sep)
	}
	return t, nil
}

// checkFields reports a row whose field count differs from the first row's.
func (t *tableStart) checkFields() error {
	n := len(t.rr.fields)
	if n == t.fields {
		return nil
	}
	return errorf(t.rr.name, t.rr.line, min(n, t.fields)+1, ErrFieldCount, "row has %d fields, want %d", n, t.fields)
}

// ReadTable reads a dense numeric table from r, plain or gzip compressed:
// comma- or tab-separated (whichever the header line holds more of; RFC
// 4180 quoting in both), a header row, then one row per cell whose first
// field is the cell's ID and whose other fields are numbers:
//
//	cell,CD3E,MS4A1,PC1
//	c1,0,2.5,-0.3
//
// The header may also leave out the ID column's name (one field fewer than
// the rows). It returns the cell IDs, the names of the numeric columns and
// the values as a row-major float32 matrix (rows × len(header)). Every value
// must be a finite number within the float32 range (ErrNotNumber,
// ErrNotFinite); every row must have as many fields as the first
// (ErrFieldCount); IDs must be distinct (ErrDuplicateID) and not empty
// (ErrBlankLabel). Values beyond ±atlas.MaxMagnitude are refused
// (ErrMagnitude), and so are negative values in a table of more than
// atlas.MaxFeatureColumns columns, which holds expression (ErrNegative); a
// narrower table holds features and may hold any value within the bound.
// name is used in error messages; p, when not nil, receives the bytes read
// from r, as for ReadLabels.
func ReadTable(ctx context.Context, r io.Reader, name string, p progress.Func) (ids, header []string, m *atlas.Dense, err error) {
	r, done := track(r, p)
	defer done()
	src, closeSrc, _, err := decompress(r)
	if err != nil {
		return nil, nil, nil, readError(name, 1, err)
	}
	defer closeSrc()
	t, err := startTable(ctx, src, name)
	if err != nil {
		return nil, nil, nil, err
	}
	rr := t.rr
	expression := len(t.names) > atlas.MaxFeatureColumns
	seen := make(map[string]int) // ID → line
	var data []float32
	for {
		if err := t.checkFields(); err != nil {
			return nil, nil, nil, err
		}
		id := rr.fields[0]
		if len(id) == 0 {
			return nil, nil, nil, errorf(name, rr.line, 1, ErrBlankLabel, "empty cell ID")
		}
		if prev, dup := seen[string(id)]; dup {
			return nil, nil, nil, errorf(name, rr.line, 1, ErrDuplicateID, "cell ID %s already on line %d", quote(id), prev)
		}
		sid := string(id)
		seen[sid] = rr.line
		ids = append(ids, sid)
		for k, f := range rr.fields[1:] {
			x, ok := parseFloat(f)
			if !ok {
				return nil, nil, nil, errorf(name, rr.line, k+2, ErrNotNumber, "value %s in column %q is not a number", quote(f), t.names[k])
			}
			v, ok := toFloat32(x)
			if !ok {
				return nil, nil, nil, errorf(name, rr.line, k+2, ErrNotFinite, "value %s in column %q is not a finite float32", quote(f), t.names[k])
			}
			switch {
			case math.Abs(x) > atlas.MaxMagnitude:
				return nil, nil, nil, errorf(name, rr.line, k+2, ErrMagnitude, "value %s in column %q is beyond ±%g", quote(f), t.names[k], atlas.MaxMagnitude)
			case x < 0 && expression:
				return nil, nil, nil, errorf(name, rr.line, k+2, ErrNegative,
					"value %s in column %q: a table of more than %d columns holds expression (counts or normalised values), never negative values", quote(f), t.names[k], atlas.MaxFeatureColumns)
			}
			data = append(data, v)
		}
		if !rr.next() {
			break
		}
	}
	if rr.err != nil {
		return nil, nil, nil, rr.err
	}
	m = &atlas.Dense{Rows: len(ids), Cols: len(t.names), Data: data}
	return ids, t.names, m, nil
}
