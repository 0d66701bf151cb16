package cli

import (
	"math"
	"testing"

	"lodestone/compute/neighbors"
)

// TestSampleRecall checks the recall and its standard error on a hand-made
// case: two sampled rows of k = 2 with recalls 1 and 1/2, so the mean is
// 3/4 and the standard error √(((1/4)² + (1/4)²) / 2 / (2 − 1)) = 1/4.
func TestSampleRecall(t *testing.T) {
	// Point 1 lists {0, 2}, as exact; point 2 lists {0, 3}, exact {1, 3}.
	g := &neighbors.Graph{N: 4, K: 2, Index: []int32{1, 2, 0, 2, 0, 3, 0, 1}, Dist: make([]float32, 8)}
	exact := &neighbors.Graph{N: 2, K: 2, Index: []int32{0, 2, 1, 3}, Dist: make([]float32, 4)}
	mean, se, err := sampleRecall(g, exact, []int{1, 2})
	if err != nil || math.Abs(mean-0.75) > 1e-12 || math.Abs(se-0.25) > 1e-12 {
		t.Fatalf("recall %g ± %g, %v; want 0.75 ± 0.25", mean, se, err)
	}
}
