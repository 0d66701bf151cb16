package sampledata

import (
	"errors"
	"fmt"
)

// ErrOption is wrapped by an OptionError: an Options field is out of range.
var ErrOption = errors.New("option out of range")

// OptionError reports an Options field outside its allowed range.
type OptionError struct {
	Field    string // name of the Options field
	Value    int64  // the value given
	Min, Max int64  // the allowed range, inclusive
	Err      error  // ErrOption
}

// Error returns a message naming the field, its value and the allowed range.
func (e *OptionError) Error() string {
	return fmt.Sprintf("sampledata: Options.%s = %d: %v (allowed %d … %d)", e.Field, e.Value, e.Err, e.Min, e.Max)
}

// Unwrap returns the sentinel error.
func (e *OptionError) Unwrap() error { return e.Err }
