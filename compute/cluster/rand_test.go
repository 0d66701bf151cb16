package cluster

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"lodestone/internal/pyref"
)

// sklearnARI computes sklearn.metrics.adjusted_rand_score for each pair.
const sklearnARI = `
import json, sys
from sklearn.metrics import adjusted_rand_score
print(json.dumps([adjusted_rand_score(a, b) for a, b in json.load(sys.stdin)]))
`

func TestAdjustedRandIndexSklearn(t *testing.T) {
	// Reference: scikit-learn 1.2's adjusted_rand_score on random label
	// pairs of several sizes and on the limit cases (identical up to
	// renaming, one class against singletons, all together, all apart).
	rng := rand.New(rand.NewPCG(8, 9))
	var pairs [][2][]int32
	for trial := 0; trial < 30; trial++ {
		n := 1 + rng.IntN(60)
		ka, kb := 1+rng.IntN(6), 1+rng.IntN(6)
		a, b := make([]int32, n), make([]int32, n)
		for i := range a {
			a[i] = int32(rng.IntN(ka))
			b[i] = a[i] // start equal, then disturb some
			if rng.Float64() < float64(trial%5)/4 {
				b[i] = int32(rng.IntN(kb)) - 3
			}
		}
		pairs = append(pairs, [2][]int32{a, b})
	}
	same := []int32{0, 0, 1, 1, 2, 2}
	renamed := []int32{5, 5, -1, -1, 9, 9}
	alone := []int32{0, 1, 2, 3, 4, 5}
	together := []int32{3, 3, 3, 3, 3, 3}
	pairs = append(pairs, [2][]int32{same, renamed}, [2][]int32{together, alone},
		[2][]int32{together, together}, [2][]int32{alone, alone}, [2][]int32{same, alone},
		[2][]int32{{1}, {2}})
	var want []float64
	pyref.JSON(t, "sklearn", sklearnARI, pairs, &want)
	for c, p := range pairs {
		got, err := AdjustedRandIndex(p[0], p[1])
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(got-want[c]) > 1e-12 {
			t.Errorf("pair %d (n=%d): ARI %.15g, scikit-learn %.15g", c, len(p[0]), got, want[c])
		}
	}
}

func TestAdjustedRandIndexErrors(t *testing.T) {
	for _, p := range [][2][]int32{{{1, 2}, {1}}, {nil, nil}} {
		if _, err := AdjustedRandIndex(p[0], p[1]); !errors.Is(err, ErrLabels) {
			t.Errorf("%v: err = %v, want ErrLabels", p, err)
		}
	}
}
