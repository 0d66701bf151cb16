// Package quality scores how faithfully a 2-D map keeps the structure of the
// high-dimensional data it was drawn from: neighbour preservation,
// trustworthiness, label agreement and distance correlation.
//
// Every score is computed on a sample of cells (Sample draws one), so that it
// takes well under a second for a million cells. A layout is a slice of
// interleaved coordinates x0, y0, x1, y1, …, two per cell.
package quality

import (
	"errors"
	"fmt"
	"math"
)

// Sentinel errors wrapped by the errors this package returns; test for them
// with errors.Is.
var (
	ErrShape     = errors.New("lengths do not match")
	ErrNotFinite = errors.New("value is NaN or infinite")
	ErrK         = errors.New("number of neighbours out of range")
	ErrSample    = errors.New("bad sample")
	ErrNoLabels  = errors.New("no sampled cell has a label")
)

// InputError reports a problem with one of the inputs of a score: which
// input, the row (cell) concerned when there is one (−1 otherwise), and one
// of the sentinel errors.
type InputError struct {
	Input string // "layout", "high", "labels", "sample", …
	Row   int    // row or position in the sample; −1 when none
	Err   error
}

func (e *InputError) Error() string {
	if e.Row >= 0 {
		return fmt.Sprintf("quality: %s row %d: %v", e.Input, e.Row, e.Err)
	}
	return fmt.Sprintf("quality: %s: %v", e.Input, e.Err)
}

// Unwrap returns the sentinel error.
func (e *InputError) Unwrap() error { return e.Err }

// checkLayout checks that layout holds 2·n finite coordinates.
func checkLayout(name string, layout []float32, n int) error {
	if len(layout) != 2*n {
		return &InputError{Input: name, Row: -1, Err: fmt.Errorf("%w: %d coordinates for %d cells (want %d)", ErrShape, len(layout), n, 2*n)}
	}
	for i, v := range layout {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			return &InputError{Input: name, Row: i / 2, Err: ErrNotFinite}
		}
	}
	return nil
}

// checkSample checks that sample holds distinct row indices in [0, n), and
// at least min of them.
func checkSample(sample []int, n, least int) error {
	if len(sample) < least {
		return &InputError{Input: "sample", Row: -1, Err: fmt.Errorf("%w: %d cells, need at least %d", ErrSample, len(sample), least)}
	}
	seen := make(map[int]bool, len(sample))
	for r, i := range sample {
		if i < 0 || i >= n {
			return &InputError{Input: "sample", Row: r, Err: fmt.Errorf("%w: index %d not in [0, %d)", ErrSample, i, n)}
		}
		if seen[i] {
			return &InputError{Input: "sample", Row: r, Err: fmt.Errorf("%w: index %d repeated", ErrSample, i)}
		}
		seen[i] = true
	}
	return nil
}
