package quality

import (
	"context"
	"testing"

	"lodestone/compute/synth"
)

// Scores at the size the window shows them: 70,000 cells in 50 dimensions,
// a sample of 5,000, k = 15. The map is the data's first two coordinates.
func benchInputs(b *testing.B) ([]float32, []int) {
	b.Helper()
	x, _ := synth.GaussianMixture(70000, 50, 20, 1)
	xy := make([]float32, 2*x.Rows)
	for i := 0; i < x.Rows; i++ {
		xy[2*i], xy[2*i+1] = x.At(i, 0), x.At(i, 1)
	}
	return xy, Sample(x.Rows, 5000, 1)
}

func BenchmarkKNNPreservation70k(b *testing.B) {
	x, _ := synth.GaussianMixture(70000, 50, 20, 1)
	xy, s := benchInputs(b)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := KNNPreservation(context.Background(), x, xy, 15, s, 0); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkTrustworthiness70k(b *testing.B) {
	x, _ := synth.GaussianMixture(70000, 50, 20, 1)
	xy, s := benchInputs(b)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Trustworthiness(context.Background(), x, xy, 15, s, 0); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkLabelAccuracy70k(b *testing.B) {
	_, labels := synth.GaussianMixture(70000, 50, 20, 1)
	xy, s := benchInputs(b)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := LabelAccuracy(xy, labels, 15, s); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkDistanceCorrelation70k(b *testing.B) {
	xy, s := benchInputs(b)
	other := make([]float32, len(xy))
	for i := 0; i < len(xy); i += 2 {
		other[i], other[i+1] = xy[i+1], xy[i]*xy[i]
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := DistanceCorrelation(xy, other, s); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkFidelity70k scores a map of 70,000 cells in 50 dimensions at the
// defaults (a sample of DefaultFidelitySample cells, k = DefaultFidelityK):
// what the window and the headless commands compute for each map.
func BenchmarkFidelity70k(b *testing.B) {
	x, _ := synth.GaussianMixture(70000, 50, 20, 1)
	xy, _ := benchInputs(b)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Fidelity(context.Background(), x, xy, FidelityOptions{Seed: 1}); err != nil {
			b.Fatal(err)
		}
	}
}
