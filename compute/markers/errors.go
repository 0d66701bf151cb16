package markers

import (
	"errors"
	"fmt"
)

// Errors wrapped by the errors this package returns; test for them with
// errors.Is.
var (
	ErrMatrix         = errors.New("expression matrix is malformed")
	ErrValue          = errors.New("expression value is negative or not finite")
	ErrMaskLength     = errors.New("mask length differs from the number of cells")
	ErrEmptyGroup     = errors.New("group holds no cells")
	ErrEmptyReference = errors.New("reference holds no cells")
	ErrOverlap        = errors.New("cell is in both the group and the reference")
	ErrOption         = errors.New("option out of range")
)

// InputError reports a fault in the input of Rank and where it was found, in
// the way encoding/csv's ParseError does for text.
type InputError struct {
	What string // the input: "expression", "group" or "reference"
	Cell int    // the cell (row of the matrix, index into a mask); -1 when not applicable
	Gene int    // the gene (column of the matrix); -1 when not applicable
	Err  error  // the sentinel error, e.g. ErrValue
}

// Error returns a message such as
//
//	markers: expression: cell 12, gene 7: expression value is negative or not finite
func (e *InputError) Error() string {
	switch {
	case e.Cell >= 0 && e.Gene >= 0:
		return fmt.Sprintf("markers: %s: cell %d, gene %d: %v", e.What, e.Cell, e.Gene, e.Err)
	case e.Cell >= 0:
		return fmt.Sprintf("markers: %s: cell %d: %v", e.What, e.Cell, e.Err)
	case e.Gene >= 0:
		return fmt.Sprintf("markers: %s: gene %d: %v", e.What, e.Gene, e.Err)
	}
	return fmt.Sprintf("markers: %s: %v", e.What, e.Err)
}

// Unwrap returns the sentinel error.
func (e *InputError) Unwrap() error { return e.Err }
