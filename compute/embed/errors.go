package embed

import (
	"errors"
	"fmt"
)

// Errors wrapped by AffinityError, LayoutError and ParamError. Test for them
// with errors.Is.
var (
	// ErrShape means sizes disagree: P is not square, its arrays do not match
	// its size, or a layout does not hold two coordinates per row of P.
	ErrShape = errors.New("sizes do not match")
	// ErrColumn means a column index is out of range or not strictly
	// increasing within its row.
	ErrColumn = errors.New("column index out of range or out of order")
	// ErrNotFinite means a value is NaN or infinite.
	ErrNotFinite = errors.New("value not finite")
	// ErrNegative means an affinity is negative.
	ErrNegative = errors.New("negative affinity")
	// ErrEmpty means P has no positive entry, or there are fewer than two
	// points.
	ErrEmpty = errors.New("nothing to embed")
	// ErrParam means a parameter is outside its allowed range.
	ErrParam = errors.New("parameter out of range")
)

// AffinityError reports a malformed affinity matrix and where the fault lies.
type AffinityError struct {
	Row   int   // row of P; -1 when the fault concerns the whole matrix
	Entry int   // position of the entry within the row; -1 when not about one entry
	Err   error // ErrShape, ErrColumn, ErrNotFinite, ErrNegative or ErrEmpty
}

func (e *AffinityError) Error() string {
	switch {
	case e.Row < 0:
		return "embed: affinity matrix: " + e.Err.Error()
	case e.Entry < 0:
		return fmt.Sprintf("embed: affinity row %d: %v", e.Row, e.Err)
	}
	return fmt.Sprintf("embed: affinity row %d, entry %d: %v", e.Row, e.Entry, e.Err)
}

func (e *AffinityError) Unwrap() error { return e.Err }

// LayoutError reports a malformed layout or feature matrix and where the
// fault lies.
type LayoutError struct {
	What  string // "initial layout", "reference layout", "features", …
	Point int    // the point (row); -1 when the fault concerns the whole layout
	Err   error  // ErrShape, ErrNotFinite or ErrEmpty
}

func (e *LayoutError) Error() string {
	if e.Point < 0 {
		return fmt.Sprintf("embed: %s: %v", e.What, e.Err)
	}
	return fmt.Sprintf("embed: %s, point %d: %v", e.What, e.Point, e.Err)
}

func (e *LayoutError) Unwrap() error { return e.Err }

// ParamError reports a parameter outside its allowed range.
type ParamError struct {
	Name   string  // the field of Params, e.g. "Attraction"
	Value  float64 // the value given
	Reason string  // what the value must satisfy
}

func (e *ParamError) Error() string {
	return fmt.Sprintf("embed: %s %g: %s: %v", e.Name, e.Value, e.Reason, ErrParam)
}

func (e *ParamError) Unwrap() error { return ErrParam }
