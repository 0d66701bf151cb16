package affinity

import (
	"errors"
	"fmt"
)

// Errors wrapped by GraphError and ParamError. Test for them with errors.Is.
var (
	// ErrShape means the graph's arrays do not have N·K entries, or N or K is
	// not positive.
	ErrShape = errors.New("graph arrays do not match its size")
	// ErrNeighbor means a neighbour id is outside [0, N) or names the point
	// itself.
	ErrNeighbor = errors.New("neighbour id out of range or equal to the point")
	// ErrRepeated means a point lists the same neighbour twice.
	ErrRepeated = errors.New("neighbour listed twice")
	// ErrDistance means a distance is negative, NaN or infinite.
	ErrDistance = errors.New("distance negative or not finite")
	// ErrPerplexity means the perplexity is not finite, below 1, or larger
	// than the number of neighbours available per point.
	ErrPerplexity = errors.New("perplexity out of range")
	// ErrNeighborCount means the number of neighbours asked for is below 1 or
	// above the graph's K.
	ErrNeighborCount = errors.New("neighbour count out of range")
)

// GraphError reports a malformed neighbour graph and where the fault lies.
type GraphError struct {
	Point    int   // row of the graph; -1 when the fault concerns the whole graph
	Neighbor int   // position within the row, nearest first; -1 when not about one entry
	Err      error // one of ErrShape, ErrNeighbor, ErrRepeated, ErrDistance
}

func (e *GraphError) Error() string {
	switch {
	case e.Point < 0:
		return "affinity: neighbour graph: " + e.Err.Error()
	case e.Neighbor < 0:
		return fmt.Sprintf("affinity: point %d: %v", e.Point, e.Err)
	}
	return fmt.Sprintf("affinity: point %d, neighbour %d: %v", e.Point, e.Neighbor, e.Err)
}

func (e *GraphError) Unwrap() error { return e.Err }

// ParamError reports a parameter outside its allowed range.
type ParamError struct {
	Name   string  // the parameter, e.g. "perplexity"
	Value  float64 // the value given
	Reason string  // what the value must satisfy
	Err    error   // ErrPerplexity or ErrNeighborCount
}

func (e *ParamError) Error() string {
	return fmt.Sprintf("affinity: %s %g: %s: %v", e.Name, e.Value, e.Reason, e.Err)
}

func (e *ParamError) Unwrap() error { return e.Err }
