package embed

import (
	"context"
	"os"
	"testing"

	"lodestone/compute/affinity"
	"lodestone/compute/atlas"
	"lodestone/compute/neighbors"
	"lodestone/compute/sparse"
)

// exactKNN returns the exact k-nearest-neighbour graph of the rows of x.
func exactKNN(t testing.TB, x *atlas.Dense, k int) *neighbors.Graph {
	t.Helper()
	g, err := neighbors.Exact(context.Background(), x, neighbors.Options{K: k})
	if err != nil {
		t.Fatal(err)
	}
	return g
}

// writeText writes s to path.
func writeText(t *testing.T, path, s string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(s), 0o644); err != nil {
		t.Fatal(err)
	}
}

// affinityOf returns the perplexity-30 affinities of the rows of x.
func affinityOf(t testing.TB, x *atlas.Dense, perplexity float64) *sparse.CSR {
	t.Helper()
	g := exactKNN(t, x, min(x.Rows-1, int(3*perplexity)))
	p, err := affinity.Perplexity(context.Background(), g, perplexity, 0)
	if err != nil {
		t.Fatal(err)
	}
	return p
}

// testTeam returns a team of threads goroutines (threads < 1: all
// processors), closed when the test ends.
func testTeam(tb testing.TB, threads int) *team {
	tm := newTeam(threads)
	tb.Cleanup(tm.close)
	return tm
}
