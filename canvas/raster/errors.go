package raster

import (
	"errors"
	"fmt"
)

// Errors wrapped by InputError.
var (
	ErrOddLength    = errors.New("odd number of coordinates")
	ErrLength       = errors.New("length does not match the layout")
	ErrIndex        = errors.New("point index out of range")
	ErrPaletteIndex = errors.New("colour index outside the palette")
	ErrPaletteSize  = errors.New("palette too large")
	ErrView         = errors.New("view does not fit the image")
	ErrStyle        = errors.New("style out of range")
	ErrNoFrame      = errors.New("no frame drawn to draw again")
)

// InputError describes a bad argument: which one, at which element (Index is
// −1 when the whole argument is wrong), and the sentinel error that says
// what was wrong, which errors.Is can test.
type InputError struct {
	Arg   string // the argument, e.g. "order" or "colours"
	Index int    // the element, or −1
	Err   error  // the reason, wrapping one of the Err… sentinels
}

// Error returns "raster: ARG[INDEX]: REASON" or "raster: ARG: REASON".
func (e *InputError) Error() string {
	if e.Index < 0 {
		return fmt.Sprintf("raster: %s: %v", e.Arg, e.Err)
	}
	return fmt.Sprintf("raster: %s[%d]: %v", e.Arg, e.Index, e.Err)
}

// Unwrap returns the reason.
func (e *InputError) Unwrap() error { return e.Err }
