package neighbors

import (
	"context"
	"lodestone/internal/pyref"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// runReference runs a Python script with args under the reference
// interpreter and returns its standard output; it skips the test when
// scikit-learn is missing.
func runReference(t *testing.T, script string, args ...string) string {
	t.Helper()
	return string(pyref.Output(t, "numpy, sklearn", "import sys\nimport numpy, sklearn\n"+script, args...))
}

// writeMatrix writes the rows of a matrix as text, one row a line.
func writeMatrix(t *testing.T, rows, cols int, at func(i, j int) float32) string {
	t.Helper()
	var b strings.Builder
	for i := 0; i < rows; i++ {
		for j := 0; j < cols; j++ {
			if j > 0 {
				b.WriteByte(' ')
			}
			b.WriteString(strconv.FormatFloat(float64(at(i, j)), 'g', -1, 32))
		}
		b.WriteByte('\n')
	}
	path := filepath.Join(t.TempDir(), "matrix.txt")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// parseMatrix reads whitespace-separated numbers, one row a line.
func parseMatrix(t *testing.T, text string) [][]float64 {
	t.Helper()
	var out [][]float64
	for _, line := range strings.Split(strings.TrimSpace(text), "\n") {
		var row []float64
		for _, f := range strings.Fields(line) {
			v, err := strconv.ParseFloat(f, 64)
			if err != nil {
				t.Fatalf("reference output: %v", err)
			}
			row = append(row, v)
		}
		out = append(out, row)
	}
	return out
}

// sklearnNeighbors asks sklearn.neighbors.NearestNeighbors (brute force, in
// float64) for the k neighbours of every row, itself excluded: it queries
// k+1 neighbours and drops the row itself. Output: for each metric named,
// per row, k ids then k distances.
const sklearnNeighbors = `
import numpy as np
from sklearn.neighbors import NearestNeighbors
x = np.loadtxt(sys.argv[1], ndmin=2)
k = int(sys.argv[2])
for metric in sys.argv[3:]:
    d, idx = NearestNeighbors(n_neighbors=k + 1, algorithm="brute", metric=metric).fit(x).kneighbors(x)
    for i in range(len(x)):
        keep = [e for e in range(k + 1) if idx[i, e] != i][:k]
        print(" ".join(str(v) for v in idx[i, keep]), " ".join(repr(float(v)) for v in d[i, keep]))
`

// TestExactMatchesSklearn compares Exact with scikit-learn's
// NearestNeighbors on random data, for the Euclidean and cosine metrics:
// ids and distances (to float32 precision) must agree.
func TestExactMatchesSklearn(t *testing.T) {
	x := randomMatrix(300, 10, 5)
	path := writeMatrix(t, x.Rows, x.Cols, x.At)
	const k = 15
	all := parseMatrix(t, runReference(t, sklearnNeighbors, path, strconv.Itoa(k), Euclidean.String(), Cosine.String()))
	for mi, m := range []Metric{Euclidean, Cosine} {
		ref := all[mi*x.Rows : (mi+1)*x.Rows]
		g, err := Exact(context.Background(), x, Options{K: k, Metric: m})
		if err != nil {
			t.Fatal(err)
		}
		for i := 0; i < x.Rows; i++ {
			want := make([]int32, k)
			for e := range want {
				want[e] = int32(ref[i][e])
			}
			checkAgainst(t, g, i, i, want, ref[i][k:], 1e-5)
		}
		t.Logf("%v: %d rows agree with sklearn", m, x.Rows)
	}
}
