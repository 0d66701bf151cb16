// Package tables writes the tables a user takes away from a map: per-cell
// coordinates with group memberships and the current paint, the IDs of a
// selection, and marker genes. All are CSV (RFC 4180) or plain text.
package tables

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"lodestone/compute/ingest"
	"lodestone/compute/markers"
)

// Group is a named set of cells, one flag per cell.
type Group struct {
	Name  string
	Cells []bool
}

// Cells is the per-cell table of a map.
type Cells struct {
	IDs    []string
	Layout []float32 // interleaved x, y
	Groups []Group
	// PaintName names the current paint's column ("" for none) and
	// PaintValue gives each cell's value as text.
	PaintName  string
	PaintValue func(i int) string
}

// Write writes the table as CSV with header
//
//	id,x,y[,group name…][,paint name]
//
// where each group column holds 1 for the cells in the group and 0 else.
func (t Cells) Write(w io.Writer) error {
	cw := csv.NewWriter(w)
	head := []string{"id", "x", "y"}
	for _, g := range t.Groups {
		head = append(head, g.Name)
	}
	if t.PaintName != "" {
		head = append(head, t.PaintName)
	}
	if err := cw.Write(head); err != nil {
		return err
	}
	row := make([]string, len(head))
	for i, id := range t.IDs {
		row[0] = id
		row[1] = strconv.FormatFloat(float64(t.Layout[2*i]), 'g', -1, 32)
		row[2] = strconv.FormatFloat(float64(t.Layout[2*i+1]), 'g', -1, 32)
		for k, g := range t.Groups {
			row[3+k] = "0"
			if g.Cells[i] {
				row[3+k] = "1"
			}
		}
		if t.PaintName != "" {
			row[len(row)-1] = t.PaintValue(i)
		}
		if err := cw.Write(row); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// WriteIDs writes the IDs of the selected cells, one per line.
func WriteIDs(w io.Writer, ids []string, selected []bool) error {
	bw := bufio.NewWriter(w)
	for i, id := range ids {
		if selected[i] {
			bw.WriteString(id)
			bw.WriteByte('\n')
		}
	}
	return bw.Flush()
}

// MarkerHeader is the header of a marker table, in order: the gene's ID
// (the first field of the gene label file) and symbol (the second, or
// empty), the log₂ fold change, the z of the Wilcoxon rank-sum test, its
// two-sided p-value, the Benjamini–Hochberg q-value, and the percentages of
// cells expressing the gene in the group and in the cells it is compared
// with.
var MarkerHeader = []string{"gene", "symbol", "log2_fold", "z", "p", "q", "pct_in", "pct_rest"}

// WriteMarkers writes marker genes as CSV with the columns of MarkerHeader,
// in the order given; geneIDs and symbols name the genes by index, a symbol
// equal to its ID (an input without symbols) written as empty. Numbers
// are written in full (the shortest text that reads back to the same
// float64), percentages to 12 significant digits.
func WriteMarkers(w io.Writer, results []markers.Result, geneIDs, symbols []string) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(MarkerHeader); err != nil {
		return err
	}
	f := func(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
	pct := func(x float64) string { return strconv.FormatFloat(100*x, 'g', 12, 64) }
	for _, r := range results {
		sym := symbols[r.Gene]
		if sym == geneIDs[r.Gene] {
			sym = ""
		}
		if err := cw.Write([]string{geneIDs[r.Gene], sym, f(r.LogFoldChange), f(r.Z), f(r.P), f(r.Q),
			pct(r.FractionIn), pct(r.FractionOut)}); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// Marker is one row of a marker table read back (see MarkerHeader).
type Marker struct {
	Gene, Symbol           string
	LogFoldChange, Z, P, Q float64
	PercentIn, PercentRest float64
}

// ReadMarkers reads a marker table written by WriteMarkers (CSV, RFC 4180,
// with the header MarkerHeader). Errors are *ingest.ParseError values
// naming the file (name), the line and the field, wrapping ingest.ErrEmpty,
// ErrHeader, ErrFieldCount, ErrQuote, ErrBlankLabel, ErrNotNumber or
// ErrNotFinite.
func ReadMarkers(r io.Reader, name string) ([]Marker, error) {
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1
	cr.ReuseRecord = true
	fail := func(line, col int, sentinel error, format string, args ...any) error {
		return &ingest.ParseError{File: name, Line: line, Column: col, Err: fmt.Errorf("%w: "+format, append([]any{sentinel}, args...)...)}
	}
	var out []Marker
	header := false
	for {
		rec, err := cr.Read()
		switch {
		case err == io.EOF && !header:
			return nil, fail(0, 0, ingest.ErrEmpty, "no header")
		case err == io.EOF:
			return out, nil
		case err != nil:
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				return nil, fail(pe.Line, pe.Column, ingest.ErrQuote, "%v", pe.Err)
			}
			return nil, &ingest.ParseError{File: name, Err: err}
		}
		line, _ := cr.FieldPos(0)
		if len(rec) != len(MarkerHeader) {
			return nil, fail(line, 0, ingest.ErrFieldCount, "%d fields, want %d (%s)", len(rec), len(MarkerHeader), strings.Join(MarkerHeader, ","))
		}
		if !header {
			header = true
			for k, h := range MarkerHeader {
				if strings.TrimSpace(rec[k]) != h {
					return nil, fail(line, k+1, ingest.ErrHeader, "%q where a marker table has %q", rec[k], h)
				}
			}
			continue
		}
		m := Marker{Gene: rec[0], Symbol: rec[1]}
		if strings.TrimSpace(m.Gene) == "" {
			return nil, fail(line, 1, ingest.ErrBlankLabel, "no gene")
		}
		for k, dst := range []*float64{&m.LogFoldChange, &m.Z, &m.P, &m.Q, &m.PercentIn, &m.PercentRest} {
			v, err := strconv.ParseFloat(strings.TrimSpace(rec[k+2]), 64)
			switch {
			case err != nil && !errors.Is(err, strconv.ErrRange):
				return nil, fail(line, k+3, ingest.ErrNotNumber, "%s = %q", MarkerHeader[k+2], rec[k+2])
			case math.IsNaN(v) || math.IsInf(v, 0): // an underflow reads as 0
				return nil, fail(line, k+3, ingest.ErrNotFinite, "%s = %q", MarkerHeader[k+2], rec[k+2])
			}
			*dst = v
		}
		out = append(out, m)
	}
}
