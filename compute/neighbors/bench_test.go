package neighbors

import (
	"context"
	"flag"
	"strings"
	"testing"

	"lodestone/compute/atlas"
	"lodestone/compute/synth"
)

// sampleRows returns every step-th row of n, for recall on a sample.
func sampleRows(n, size int) []int {
	rows := make([]int, 0, size)
	for i := 0; i < size; i++ {
		rows = append(rows, int(int64(i)*int64(n)/int64(size)))
	}
	return rows
}

// benchApproximate times Approximate on x and reports its recall against the
// exact neighbours of 1,000 rows.
func benchApproximate(b *testing.B, x *atlas.Dense, k int) {
	ctx := context.Background()
	rows := sampleRows(x.Rows, 1000)
	exact, err := ExactFor(ctx, x, rows, Options{K: k})
	if err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	var g *Graph
	for i := 0; i < b.N; i++ {
		if g, err = Approximate(ctx, x, Options{K: k, Seed: 1}); err != nil {
			b.Fatal(err)
		}
	}
	b.StopTimer()
	r, err := Recall(g, exact, rows)
	if err != nil {
		b.Fatal(err)
	}
	b.ReportMetric(r, "recall")
}

func BenchmarkApproximate70k(b *testing.B) {
	x, _ := synth.GaussianMixture(70000, 50, 20, 1)
	benchApproximate(b, x, 90)
}

func BenchmarkApproximate70kPath(b *testing.B) {
	x, _, _ := synth.BranchingPath(70000, 50, 1, 1)
	benchApproximate(b, x, 90)
}

func BenchmarkApproximate70kK15(b *testing.B) {
	x, _ := synth.GaussianMixture(70000, 50, 20, 1)
	benchApproximate(b, x, 15)
}

// BenchmarkExactFor70k times the exhaustive search for 7,000 of 70,000
// points (a tenth of Exact on all of them).
func BenchmarkExactFor70k(b *testing.B) {
	x, _ := synth.GaussianMixture(70000, 50, 20, 1)
	rows := sampleRows(x.Rows, 7000)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := ExactFor(context.Background(), x, rows, Options{K: 90}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkApproximate1M times Approximate on a million points in 50
// dimensions (k = 90) and reports recall on 1,000 of them; it needs about
// 2 GB of memory and minutes, so it runs only when -bench names it.
func BenchmarkApproximate1M(b *testing.B) {
	if !strings.Contains(flag.Lookup("test.bench").Value.String(), "1M") {
		b.Skip("a million points take minutes: run with -bench Approximate1M")
	}
	x, _ := synth.GaussianMixture(1000000, 50, 20, 1)
	benchApproximate(b, x, 90)
}

// BenchmarkExact70k times Exact on 70,000 points in 50 dimensions, k = 90.
func BenchmarkExact70k(b *testing.B) {
	x, _ := synth.GaussianMixture(70000, 50, 20, 1)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := Exact(context.Background(), x, Options{K: 90}); err != nil {
			b.Fatal(err)
		}
	}
}
