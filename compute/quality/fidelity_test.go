package quality

import (
	"context"
	"errors"
	"math"
	"testing"

	"lodestone/compute/atlas"
)

// directDCor is the exact slow computation of the sample distance
// correlation (Székely, Rizzo & Bakirov 2007, definition 4): both n×n
// distance matrices stored, double centred, and multiplied entry by entry,
// all in float64.
func directDCor(n int, da, db func(i, j int) float64) float64 {
	centre := func(d func(i, j int) float64) [][]float64 {
		m := make([][]float64, n)
		row := make([]float64, n)
		all := 0.0
		for i := range m {
			m[i] = make([]float64, n)
			for j := range m[i] {
				m[i][j] = d(i, j)
				row[i] += m[i][j] / float64(n)
			}
			all += row[i] / float64(n)
		}
		for i := range m {
			for j := range m[i] {
				m[i][j] += all - row[i] - row[j]
			}
		}
		return m
	}
	A, B := centre(da), centre(db)
	var ab, aa, bb float64
	for i := range A {
		for j := range A[i] {
			ab += A[i][j] * B[i][j]
			aa += A[i][j] * A[i][j]
			bb += B[i][j] * B[i][j]
		}
	}
	return math.Sqrt(ab / math.Sqrt(aa*bb))
}

// TestFidelityDistanceCorrelation checks the distance correlation between
// the data and the map against the direct computation on 5-D data and a
// noisy map, on a sample. The data's squared distances are summed in
// float32 by the distance kernel (relative error below 1e-6 for 5 terms), so
// the scores agree to 1e-6, not to the last bit.
func TestFidelityDistanceCorrelation(t *testing.T) {
	x := randomData(400, 5, 11)
	xy := noisyLayout(x, 0.4, 12)
	o := FidelityOptions{Sample: 150, Seed: 3, K: 10, Threads: 2}
	got, err := Fidelity(context.Background(), x, xy, o)
	if err != nil {
		t.Fatal(err)
	}
	s := Sample(x.Rows, o.Sample, o.Seed)
	high := func(i, j int) float64 {
		d := 0.0
		for c := 0; c < x.Cols; c++ {
			v := float64(x.At(s[i], c)) - float64(x.At(s[j], c))
			d += v * v
		}
		return math.Sqrt(d)
	}
	lay := func(i, j int) float64 { return math.Sqrt(layoutDist(xy)(s[i], s[j])) }
	want := directDCor(len(s), high, lay)
	if math.Abs(got.DCor-want) > 1e-6 {
		t.Fatalf("DCor = %.9f, direct computation %.9f", got.DCor, want)
	}
	if want < 0.3 || want > 0.99 {
		t.Fatalf("the test map should keep some but not all structure: dCor %v", want)
	}
}

// TestFidelityWorkedExample puts the four points of
// TestDistanceCorrelationByHand in the data and the reordered four in the
// map: R = √(11/13) as worked out there.
func TestFidelityWorkedExample(t *testing.T) {
	x := atlas.NewDense(4, 2)
	copy(x.Data, []float32{0, 0, 1, 0, 2, 0, 3, 0})
	xy := []float32{0, 0, 1, 0, 3, 0, 2, 0}
	got, err := Fidelity(context.Background(), x, xy, FidelityOptions{K: 1})
	if err != nil {
		t.Fatal(err)
	}
	if want := math.Sqrt(11.0 / 13); math.Abs(got.DCor-want) > 1e-12 {
		t.Fatalf("DCor = %v, want √(11/13) = %v", got.DCor, want)
	}
	if got.Cells != 4 || got.K != 1 {
		t.Fatalf("scored %d cells with k = %d, want all 4 with k = 1", got.Cells, got.K)
	}
}

// TestFidelityIsItsParts checks that Fidelity's local scores are those of
// KNNPreservation, Trustworthiness and LabelAccuracy (each checked against
// scikit-learn or a direct computation above) on the sample Sample draws with
// the options' size and seed, and that they do not depend on the thread
// count.
func TestFidelityIsItsParts(t *testing.T) {
	ctx := context.Background()
	x := randomData(900, 6, 21)
	xy := noisyLayout(x, 0.3, 22)
	labels := make([]int32, x.Rows)
	for i := range labels {
		labels[i] = int32(i % 4)
		if x.At(i, 0) > 0 {
			labels[i] = 4
		}
		if i%31 == 0 {
			labels[i] = -1
		}
	}
	o := FidelityOptions{Sample: 300, Seed: 5, K: 12, Threads: 1, Labels: labels}
	got, err := Fidelity(ctx, x, xy, o)
	if err != nil {
		t.Fatal(err)
	}
	s := Sample(x.Rows, 300, 5)
	kept, _ := KNNPreservation(ctx, x, xy, 12, s, 1)
	trust, _ := Trustworthiness(ctx, x, xy, 12, s, 1)
	acc, _ := LabelAccuracy(xy, labels, 12, s)
	if got.KNN != kept || got.Trust != trust || got.Labels != acc || got.Cells != 300 || got.K != 12 {
		t.Fatalf("Fidelity %+v; parts: kept %v trust %v labels %v", got, kept, trust, acc)
	}
	o.Threads = 3
	other, err := Fidelity(ctx, x, xy, o)
	if err != nil {
		t.Fatal(err)
	}
	if other.KNN != got.KNN || other.Trust != got.Trust || other.Labels != got.Labels || math.Abs(other.DCor-got.DCor) > 1e-12 {
		t.Fatalf("3 threads %+v, 1 thread %+v", other, got)
	}
}

// TestFidelityDefaults checks the documented defaults: zero options score
// DefaultFidelitySample cells drawn with seed 0 and DefaultFidelityK
// neighbours, and give no label accuracy.
func TestFidelityDefaults(t *testing.T) {
	ctx := context.Background()
	x := randomData(2500, 4, 31)
	xy := noisyLayout(x, 0.2, 32)
	got, err := Fidelity(ctx, x, xy, FidelityOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if got.Cells != DefaultFidelitySample || got.K != DefaultFidelityK || !math.IsNaN(got.Labels) {
		t.Fatalf("defaults gave %+v", got)
	}
	want, _ := KNNPreservation(ctx, x, xy, DefaultFidelityK, Sample(x.Rows, DefaultFidelitySample, 0), 0)
	if got.KNN != want {
		t.Fatalf("KNN %v, want %v (sample of %d, seed 0)", got.KNN, want, DefaultFidelitySample)
	}
	// Labels nobody in the sample has: no accuracy rather than an error.
	none := make([]int32, x.Rows)
	for i := range none {
		none[i] = -1
	}
	if got, err := Fidelity(ctx, x, xy, FidelityOptions{Labels: none}); err != nil || !math.IsNaN(got.Labels) {
		t.Fatalf("unlabelled cells: %+v, %v", got, err)
	}
}

// TestFidelityCancelled checks that a cancelled context stops Fidelity and
// Trustworthiness with ctx.Err().
func TestFidelityCancelled(t *testing.T) {
	x := randomData(600, 5, 41)
	xy := noisyLayout(x, 0.2, 42)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := Fidelity(ctx, x, xy, FidelityOptions{}); !errors.Is(err, context.Canceled) {
		t.Fatalf("Fidelity after cancel: %v", err)
	}
	if _, err := Trustworthiness(ctx, x, xy, 15, nil, 2); !errors.Is(err, context.Canceled) {
		t.Fatalf("Trustworthiness after cancel: %v", err)
	}
}

func TestFidelityErrors(t *testing.T) {
	ctx := context.Background()
	x := randomData(100, 3, 51)
	xy := noisyLayout(x, 0.1, 52)
	if _, err := Fidelity(ctx, x, xy, FidelityOptions{Labels: make([]int32, 99)}); !errors.Is(err, ErrShape) {
		t.Errorf("99 labels for 100 cells: %v", err)
	}
	if _, err := Fidelity(ctx, x, xy, FidelityOptions{Sample: -1}); !errors.Is(err, ErrSample) {
		t.Errorf("negative sample: %v", err)
	}
	if _, err := Fidelity(ctx, x, xy, FidelityOptions{K: 50}); !errors.Is(err, ErrK) {
		t.Errorf("k = 50 of 100 cells: %v", err)
	}
	if _, err := Fidelity(ctx, nil, xy, FidelityOptions{}); !errors.Is(err, ErrShape) {
		t.Errorf("no data: %v", err)
	}
	if _, err := Fidelity(ctx, x, xy[:10], FidelityOptions{}); !errors.Is(err, ErrShape) {
		t.Errorf("short layout: %v", err)
	}
}
