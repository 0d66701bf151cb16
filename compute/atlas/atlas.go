// Package atlas holds the in-memory form of a single-cell atlas: a matrix of
// cells by genes (sparse counts) or by features (a dense numeric table), the
// cell and gene identifiers, and per-cell annotation columns.
//
// Every stage after reading works on these types; none of them depends on a
// file format.
package atlas

import (
	"fmt"
	"lodestone/compute/sparse"
	"math"
)

// MaxFeatureColumns is the widest dense table whose columns are features
// used as they are (such as principal components); a wider table holds
// expression (counts or normalised values, never negative) and is reduced
// by principal component analysis.
const MaxFeatureColumns = 100

// MaxMagnitude bounds the values of a dense table: squared distances over
// MaxFeatureColumns columns of values up to it stay far inside the float32
// range (100 · (2·10¹⁵)² = 4·10³² < 3.4·10³⁸).
const MaxMagnitude = 1e15

// Dense is a row-major matrix of float32: element (i, j) is Data[i*Cols+j].
type Dense struct {
	Rows, Cols int
	Data       []float32
}

// NewDense returns a zeroed rows × cols matrix.
func NewDense(rows, cols int) *Dense {
	return &Dense{Rows: rows, Cols: cols, Data: make([]float32, rows*cols)}
}

// Row returns row i; the slice aliases m.
func (m *Dense) Row(i int) []float32 { return m.Data[i*m.Cols : (i+1)*m.Cols] }

// At returns element (i, j).
func (m *Dense) At(i, j int) float32 { return m.Data[i*m.Cols+j] }

// Kind says how the values of an annotation column are to be read.
type Kind uint8

const (
	// Categorical columns hold a small set of labels (sample, day, state).
	Categorical Kind = iota + 1
	// Continuous columns hold real numbers (a score, a count).
	Continuous
)

// String returns "categorical" or "continuous".
func (k Kind) String() string {
	switch k {
	case Categorical:
		return "categorical"
	case Continuous:
		return "continuous"
	}
	return fmt.Sprintf("Kind(%d)", uint8(k))
}

// Missing is the code of a missing value in a categorical column.
const Missing = -1

// Column is one per-cell annotation. A categorical column stores for each cell
// an index into Levels (Missing when absent); a continuous column stores a
// value per cell (NaN when absent).
type Column struct {
	Name   string
	Kind   Kind
	Levels []string  // categorical: the distinct labels
	Codes  []int32   // categorical: per cell, index into Levels or Missing
	Values []float64 // continuous: per cell, NaN when missing
}

// Len returns the number of cells the column describes.
func (c *Column) Len() int {
	if c.Kind == Categorical {
		return len(c.Codes)
	}
	return len(c.Values)
}

// MissingCount returns how many cells have no value.
func (c *Column) MissingCount() int {
	n := 0
	if c.Kind == Categorical {
		for _, v := range c.Codes {
			if v == Missing {
				n++
			}
		}
		return n
	}
	for _, v := range c.Values {
		if math.IsNaN(v) {
			n++
		}
	}
	return n
}

// Counts returns, for a categorical column, the number of cells in each level.
func (c *Column) Counts() []int {
	out := make([]int, len(c.Levels))
	for _, v := range c.Codes {
		if v >= 0 {
			out[v]++
		}
	}
	return out
}

// Label returns the text of cell i's value ("" when missing).
func (c *Column) Label(i int) string {
	if c.Kind == Categorical {
		if v := c.Codes[i]; v >= 0 {
			return c.Levels[v]
		}
		return ""
	}
	if v := c.Values[i]; !math.IsNaN(v) {
		return fmt.Sprintf("%.4g", v)
	}
	return ""
}

// Dataset is an atlas in memory. Exactly one of Counts and Table is set:
// Counts for a sparse counts matrix (cells × genes), Table for a dense numeric
// table (cells × features).
type Dataset struct {
	Name        string         // a short name for display, e.g. the file's base name
	Sources     []string       // the files it was read from
	CellIDs     []string       // one per row
	GeneIDs     []string       // one per column: gene identifiers or feature names
	GeneSymbols []string       // one per column; equal to GeneIDs when the input has no symbols
	Counts      *sparse.Counts // cells × genes, compact (see sparse.Counts)
	Table       *Dense         // cells × features
	Annotations []Column       // per-cell annotation columns
	Join        *JoinReport    // how the annotation table matched the cells; nil when none was read
	// Notes says, one sentence each, what the reader chose: which file gave
	// the cells and which the genes, how the matrix was oriented, which
	// first lines were taken for headers.
	Notes []string
	// Files says which file gave which part, whether it was named by the
	// user or found beside the matrix.
	Files Files
}

// Files says which file gave each part of a dataset read from files. A part
// without a file of its own is empty.
type Files struct {
	Cells       string // the label file of the cells (Matrix Market input)
	Genes       string // the label file of the genes (Matrix Market input)
	Annotations string // the annotation table joined to the cells
	// MatrixRows is "cells" when the Matrix Market file's rows are cells,
	// "genes" when they are genes, empty for other inputs.
	MatrixRows string
}

// JoinReport says how the rows of an annotation table matched the cells of a
// matrix.
type JoinReport struct {
	Matched         int      // cells that found a row
	Unmatched       int      // cells without a row (their annotations are missing)
	Extra           int      // annotation rows naming no cell
	Duplicated      []string // IDs that occur more than once in the annotation table (first kept), at most 20 listed
	DuplicatedCount int      // how many duplicated IDs in all
	// NotNumbers lists, one sentence per numeric column, the few values
	// that were not numbers and were read as missing.
	NotNumbers []string
}

// Cells returns the number of cells.
func (d *Dataset) Cells() int { return len(d.CellIDs) }

// Features returns the number of genes or feature columns.
func (d *Dataset) Features() int { return len(d.GeneIDs) }

// Column returns the annotation column with the given name, or nil.
func (d *Dataset) Column(name string) *Column {
	for i := range d.Annotations {
		if d.Annotations[i].Name == name {
			return &d.Annotations[i]
		}
	}
	return nil
}

// Bytes returns the approximate memory held by the dataset's arrays.
func (d *Dataset) Bytes() int64 {
	var b int64
	if d.Counts != nil {
		b += d.Counts.Bytes()
	}
	if d.Table != nil {
		b += int64(len(d.Table.Data)) * 4
	}
	for _, s := range [][]string{d.CellIDs, d.GeneIDs, d.GeneSymbols} {
		for _, x := range s {
			b += int64(len(x)) + 16
		}
	}
	for i := range d.Annotations {
		b += int64(len(d.Annotations[i].Codes))*4 + int64(len(d.Annotations[i].Values))*8
	}
	return b
}
