package prep

import (
	"errors"
	"fmt"
	"strings"
)

// The kinds of bad input reported by this package. An *Error wraps one of
// them, so callers can test for a kind with errors.Is.
var (
	ErrNotFinite   = errors.New("value is NaN or infinite")
	ErrNegative    = errors.New("negative value")
	ErrTooFewCells = errors.New("too few cells")
	ErrTooFewGenes = errors.New("too few genes")
	ErrShape       = errors.New("inconsistent shape")
	ErrMalformed   = errors.New("malformed sparse matrix")
	ErrNoMatrix    = errors.New("dataset holds neither counts nor a table")
	ErrOption      = errors.New("invalid option")
)

// An Error reports bad input to one stage of the preparation: which stage,
// where in the matrix (row = cell, column = gene or feature) and what kind of
// problem it was.
type Error struct {
	Stage  string // "qc", "normalize", "genes", "pca" or "prepare"
	Row    int    // row (cell) index, or −1 when no single row is at fault
	Col    int    // column (gene or feature) index, or −1 when no single column is at fault
	Detail string // further context such as the offending value; may be empty
	Err    error  // the kind of problem: one of the Err values of this package
}

// Error returns a message such as
//
//	prep: normalize: row 12, column 7: value is NaN or infinite (NaN)
func (e *Error) Error() string {
	var b strings.Builder
	b.WriteString("prep: ")
	b.WriteString(e.Stage)
	sep := ": "
	if e.Row >= 0 {
		fmt.Fprintf(&b, "%srow %d", sep, e.Row)
		sep = ", "
	}
	if e.Col >= 0 {
		fmt.Fprintf(&b, "%scolumn %d", sep, e.Col)
	}
	b.WriteString(": ")
	b.WriteString(e.Err.Error())
	if e.Detail != "" {
		b.WriteString(" (")
		b.WriteString(e.Detail)
		b.WriteString(")")
	}
	return b.String()
}

// Unwrap returns the kind of problem, so that errors.Is(err, ErrNotFinite)
// and the like work.
func (e *Error) Unwrap() error { return e.Err }

// errAt returns an *Error for stage at (row, col).
func errAt(stage string, row, col int, kind error, format string, args ...any) *Error {
	return &Error{Stage: stage, Row: row, Col: col, Detail: fmt.Sprintf(format, args...), Err: kind}
}

// errOption returns an *Error about an option of stage.
func errOption(stage, format string, args ...any) *Error {
	return errAt(stage, -1, -1, ErrOption, format, args...)
}
