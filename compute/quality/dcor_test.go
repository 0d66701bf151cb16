package quality

import (
	"context"
	"fmt"
)

// DistanceCorrelation returns the sample distance correlation of Székely,
// Rizzo & Bakirov (2007) between two point sets of equal size with two
// coordinates each (two layouts of the same cells, interleaved), on the
// sampled rows. With a_kl = ‖a_k − a_l‖ and its double centring
//
//	A_kl = a_kl − ā_k· − ā_·l + ā_··
//
// (and likewise B from b), the squared distance covariance is
// V²(a, b) = (1/n²) Σ_kl A_kl B_kl and
//
//	R(a, b) = √( V²(a, b) / √(V²(a, a) V²(b, b)) ),
//
// 0 when the denominator is 0. R lies in [0, 1] and is 0 only for
// independent samples in the limit. The sums use the identity
// Σ A_kl B_kl = Σ a_kl b_kl − 2n Σ_k ā_k b̄_k + n² ā b̄ so no n×n matrix is
// stored; the cost is O(n²) for n sampled rows (nil means all).
func DistanceCorrelation(a, b []float32, sample []int) (float64, error) {
	if len(a)%2 != 0 || len(a) != len(b) {
		return 0, &InputError{Input: "b", Row: -1, Err: fmt.Errorf("%w: %d and %d coordinates (want equal and even)", ErrShape, len(a), len(b))}
	}
	n := len(a) / 2
	if err := checkLayout("a", a, n); err != nil {
		return 0, err
	}
	if err := checkLayout("b", b, n); err != nil {
		return 0, err
	}
	sample = orAll(sample, n)
	if err := checkSample(sample, n, 2); err != nil {
		return 0, err
	}
	return distanceCorrelation(context.Background(), len(sample), 0, layoutRows(a, sample), layoutRows(b, sample))
}
