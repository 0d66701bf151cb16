package neighbors

import "fmt"

// Recall returns the share of exact neighbours that an approximate graph
// finds, averaged over a sample of points:
//
//	recall = (1/|R|) Σ_{r ∈ R} |A_k(rows[r]) ∩ E_k(r)| / k
//
// where A_k(i) is row i of approx and E_k(r) is row r of exact, as returned
// by ExactFor(x, rows, …) with the same k. When rows is nil, exact must cover
// every point (as from Exact) and all rows are compared. k is exact.K, and
// approx must have at least k neighbours per point (extra ones are ignored).
// It returns an error wrapping ErrMismatch when the shapes disagree.
func Recall(approx, exact *Graph, rows []int) (float64, error) {
	if approx == nil || exact == nil {
		return 0, fmt.Errorf("neighbors: recall of a nil graph: %w", ErrMismatch)
	}
	k := exact.K
	if approx.K < k {
		return 0, fmt.Errorf("neighbors: recall at k = %d of a graph with %d neighbours: %w", k, approx.K, ErrMismatch)
	}
	n := exact.N
	if rows != nil && len(rows) != n {
		return 0, fmt.Errorf("neighbors: %d rows for an exact graph of %d points: %w", len(rows), n, ErrMismatch)
	}
	if rows == nil && n != approx.N {
		return 0, fmt.Errorf("neighbors: exact graph of %d points, approximate of %d: %w", n, approx.N, ErrMismatch)
	}
	if n == 0 {
		return 0, fmt.Errorf("neighbors: recall over no points: %w", ErrMismatch)
	}
	found := 0
	for r := 0; r < n; r++ {
		i := r
		if rows != nil {
			i = rows[r]
		}
		if i < 0 || i >= approx.N {
			return 0, &InputError{Row: r, Column: -1, Err: fmt.Errorf("%w: %d not in [0, %d)", ErrRowIndex, i, approx.N)}
		}
		a := approx.Index[i*approx.K : i*approx.K+k]
		for _, e := range exact.Index[r*k : (r+1)*k] {
			for _, id := range a {
				if id == e {
					found++
					break
				}
			}
		}
	}
	return float64(found) / float64(n*k), nil
}
