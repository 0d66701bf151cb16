// Package spatial answers geometric questions about the points of a map:
// which point is nearest the pointer (Grid), which points a lasso encloses
// (Inside), and how a new lasso combines with the current selection
// (Mode).
package spatial

import (
	"errors"
	"fmt"
)

// Errors wrapped by InputError.
var (
	ErrOddLength = errors.New("odd number of coordinates")
	ErrLength    = errors.New("length does not match")
	ErrPolygon   = errors.New("not a polygon")
)

// InputError describes a bad argument: which one, at which element (Index is
// −1 when the whole argument is wrong), and the sentinel error that says
// what was wrong, which errors.Is can test.
type InputError struct {
	Arg   string // the argument, e.g. "polygon" or "layout"
	Index int    // the element, or −1
	Err   error  // the reason, wrapping one of the Err… sentinels
}

// Error returns "spatial: ARG[INDEX]: REASON" or "spatial: ARG: REASON".
func (e *InputError) Error() string {
	if e.Index < 0 {
		return fmt.Sprintf("spatial: %s: %v", e.Arg, e.Err)
	}
	return fmt.Sprintf("spatial: %s[%d]: %v", e.Arg, e.Index, e.Err)
}

// Unwrap returns the reason.
func (e *InputError) Unwrap() error { return e.Err }
