// Package tables writes the tables a user takes away from a map: per-cell
// coordinates with group memberships and the current paint, the IDs of a
// selection, and marker genes. All are CSV (RFC 4180) or plain text.
package tables

import (
	"bufio"
	"encoding/csv"
	"io"
	"strconv"

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

// WriteMarkers writes marker genes as CSV with header
//
//	gene,symbol,log2_fold_change,z,p_value,q_value,fraction_in,fraction_out,mean_in,mean_out
//
// in the order given; geneIDs and symbols name the genes by index.
func WriteMarkers(w io.Writer, results []markers.Result, geneIDs, symbols []string) error {
	cw := csv.NewWriter(w)
	if err := cw.Write([]string{"gene", "symbol", "log2_fold_change", "z", "p_value", "q_value",
		"fraction_in", "fraction_out", "mean_in", "mean_out"}); err != nil {
		return err
	}
	f := func(x float64) string { return strconv.FormatFloat(x, 'g', 6, 64) }
	for _, r := range results {
		if err := cw.Write([]string{geneIDs[r.Gene], symbols[r.Gene], f(r.LogFoldChange), f(r.Z), f(r.P), f(r.Q),
			f(r.FractionIn), f(r.FractionOut), f(r.MeanIn), f(r.MeanOut)}); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
