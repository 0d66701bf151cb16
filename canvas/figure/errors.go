package figure

import (
	"errors"
	"fmt"
)

// Errors wrapped by InputError; test for them with errors.Is.
var (
	ErrSize         = errors.New("size out of range")
	ErrPreset       = errors.New("unknown size preset")
	ErrOddLength    = errors.New("odd number of coordinates")
	ErrLength       = errors.New("length does not match")
	ErrIndex        = errors.New("index out of range")
	ErrPaletteIndex = errors.New("colour index outside the palette")
	ErrStyle        = errors.New("point style out of range")
	ErrView         = errors.New("view out of range")
	ErrCoordinate   = errors.New("coordinate not finite")
	ErrValue        = errors.New("value out of range")
	ErrMatrix       = errors.New("expression matrix is malformed")
	ErrNoRoom       = errors.New("figure too small for its contents")
)

// InputError describes a bad argument: which one, at which element (Index
// is −1 when the whole argument is wrong), and the sentinel error that says
// what was wrong, which errors.Is can test.
type InputError struct {
	Arg   string // the argument, e.g. "Colours" or "Fraction[3]"
	Index int    // the element, or −1
	Err   error  // the reason: one of the Err… sentinels
}

// Error returns "figure: ARG[INDEX]: REASON" or "figure: ARG: REASON".
func (e *InputError) Error() string {
	if e.Index < 0 {
		return fmt.Sprintf("figure: %s: %v", e.Arg, e.Err)
	}
	return fmt.Sprintf("figure: %s[%d]: %v", e.Arg, e.Index, e.Err)
}

// Unwrap returns the reason.
func (e *InputError) Unwrap() error { return e.Err }

// inputError returns an *InputError.
func inputError(arg string, index int, err error) error {
	return &InputError{Arg: arg, Index: index, Err: err}
}
