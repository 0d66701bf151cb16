package cluster

import (
	"errors"
	"fmt"
)

// Errors wrapped by the errors this package returns; test for them with
// errors.Is.
var (
	ErrNotSquare  = errors.New("graph matrix is not square")
	ErrMalformed  = errors.New("graph matrix is malformed")
	ErrWeight     = errors.New("edge weight is negative or not finite")
	ErrAsymmetric = errors.New("edge weight differs from its mirror")
	ErrNoEdges    = errors.New("graph has no edges")
	ErrNeighbor   = errors.New("neighbour id out of range")
	ErrK          = errors.New("neighbour count out of range")
	ErrOption     = errors.New("option out of range")
)

// GraphError reports a fault in an input graph and where it was found, in the
// way encoding/csv's ParseError does for text.
type GraphError struct {
	What     string // the input: "graph" or "neighbour graph"
	Node     int    // row of the matrix or point of the neighbour graph; -1 when the fault concerns the whole input
	Neighbor int    // column of the matrix or slot in the neighbour list; -1 when not applicable
	Err      error  // the sentinel error, e.g. ErrAsymmetric
}

// Error returns a message such as
//
//	cluster: graph: node 3, neighbour 7: edge weight differs from its mirror
func (e *GraphError) Error() string {
	switch {
	case e.Node < 0:
		return fmt.Sprintf("cluster: %s: %v", e.What, e.Err)
	case e.Neighbor < 0:
		return fmt.Sprintf("cluster: %s: node %d: %v", e.What, e.Node, e.Err)
	}
	return fmt.Sprintf("cluster: %s: node %d, neighbour %d: %v", e.What, e.Node, e.Neighbor, e.Err)
}

// Unwrap returns the sentinel error.
func (e *GraphError) Unwrap() error { return e.Err }
