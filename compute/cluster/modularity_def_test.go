package cluster

import (
	"context"
	"errors"
	"fmt"

	"lodestone/compute/sparse"
)

// ErrLabels is wrapped by the errors of Modularity and AdjustedRandIndex
// when the labels do not match the graph or each other.
var ErrLabels = errors.New("labels do not match the graph")

// Modularity returns the modularity of the partition of the graph a into the
// communities given by labels (Newman & Girvan 2004), with the resolution γ
// of Reichardt & Bornholdt (2006):
//
//	Q = 1/(2m) Σ_ij [A_ij − γ k_i k_j / (2m)] δ(c_i, c_j)
//
// where k_i = Σ_j A_ij and 2m = Σ_i k_i. A diagonal entry A_ii enters both
// sums as stored, so it counts as a self loop of weight A_ii/2 in the
// edge-list convention (a loop adds twice its weight to a degree).
//
// a must be square, symmetric, with finite non-negative weights and at least
// one non-zero; labels holds one non-negative community label per node (any
// values, they need not be consecutive). Otherwise Modularity returns an
// error: a *GraphError wrapping ErrNotSquare, ErrMalformed, ErrWeight,
// ErrAsymmetric, ErrNoEdges or ErrLabels.
func Modularity(a *sparse.CSR, labels []int32, resolution float64) (float64, error) {
	g, err := newGraph(context.Background(), a)
	if err != nil {
		return 0, err
	}
	comm, k, err := compactLabels(labels, g.n)
	if err != nil {
		return 0, err
	}
	return g.modularity(comm, k, resolution), nil
}

// compactLabels checks that labels has one non-negative entry for each of n
// nodes and renumbers the labels 0…k−1 in order of first appearance.
func compactLabels(labels []int32, n int) ([]int32, int, error) {
	if len(labels) != n {
		return nil, 0, &GraphError{What: "labels", Node: -1, Neighbor: -1,
			Err: fmt.Errorf("%w: %d labels for %d nodes", ErrLabels, len(labels), n)}
	}
	comm := make([]int32, n)
	seen := make(map[int32]int32)
	for i, c := range labels {
		if c < 0 {
			return nil, 0, &GraphError{What: "labels", Node: i, Neighbor: -1,
				Err: fmt.Errorf("%w: negative label %d", ErrLabels, c)}
		}
		id, ok := seen[c]
		if !ok {
			id = int32(len(seen))
			seen[c] = id
		}
		comm[i] = id
	}
	return comm, len(seen), nil
}
