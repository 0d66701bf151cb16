package embed

import (
	"errors"
	"math"
	"os/exec"
	"strconv"
	"strings"
	"testing"

	"lodestone/compute/atlas"
	"lodestone/internal/pyref"
)

// TestInitPCAAgainstSklearn compares InitPCA on the digits data with
// sklearn.decomposition.PCA(n_components=2) scores: |correlation| ≥ 0.99999
// per component (the same axes up to sign and scale), the documented sign
// rule (each axis's largest-magnitude loading positive), and the first
// coordinate's standard deviation equal to 1e-4 (common practice).
func TestInitPCAAgainstSklearn(t *testing.T) {
	x, _ := loadDigits(t)
	py := pyref.Require(t, "numpy, scipy, sklearn")
	script := `
import sys, numpy as np
from sklearn.datasets import load_digits
from sklearn.decomposition import PCA
pca = PCA(n_components=2, svd_solver="full").fit(load_digits().data)
s = pca.transform(load_digits().data)
for k in range(2):
    print(" ".join("%.17g" % v for v in s[:, k]))
    print(" ".join("%.17g" % v for v in pca.components_[k]))
`
	out, err := exec.Command(py, "-c", script).CombinedOutput()
	if err != nil {
		t.Fatalf("reference script: %v\n%s", err, out)
	}
	lines := strings.Split(strings.TrimSpace(string(out)), "\n")
	layout, err := InitPCA(x)
	if err != nil {
		t.Fatal(err)
	}
	for k := 0; k < 2; k++ {
		ref := parseFloats(t, lines[2*k])
		loadings := parseFloats(t, lines[2*k+1])
		c := correlation(ref, layout, k)
		// Our sign: the largest-magnitude loading is positive. Flip scikit-
		// learn's axis to that rule and the correlation must be positive.
		var big float64
		for _, v := range loadings {
			if math.Abs(v) > math.Abs(big) {
				big = v
			}
		}
		if big < 0 {
			c = -c
		}
		t.Logf("component %d: correlation with scikit-learn (sign rule applied) %.9f", k, c)
		if c < 0.99999 {
			t.Errorf("component %d: correlation %.9f < 0.99999", k, c)
		}
	}
	var s, ss float64
	for i := 0; i < x.Rows; i++ {
		s += float64(layout[2*i])
	}
	mean := s / float64(x.Rows)
	for i := 0; i < x.Rows; i++ {
		d := float64(layout[2*i]) - mean
		ss += d * d
	}
	if sd := math.Sqrt(ss / float64(x.Rows-1)); math.Abs(sd-1e-4) > 1e-6*1e-4 {
		t.Errorf("first coordinate has standard deviation %.9g, want 1e-4", sd)
	}
}

func parseFloats(t *testing.T, line string) []float64 {
	t.Helper()
	var out []float64
	for _, f := range strings.Fields(line) {
		v, err := strconv.ParseFloat(f, 64)
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, v)
	}
	return out
}

func TestInitPCAErrors(t *testing.T) {
	cases := []struct {
		name string
		x    *atlas.Dense
		want error
	}{
		{"nil", nil, ErrShape},
		{"one row", &atlas.Dense{Rows: 1, Cols: 3, Data: make([]float32, 3)}, ErrShape},
		{"short data", &atlas.Dense{Rows: 3, Cols: 3, Data: make([]float32, 8)}, ErrShape},
		{"constant", &atlas.Dense{Rows: 3, Cols: 2, Data: []float32{1, 2, 1, 2, 1, 2}}, ErrEmpty},
		{"NaN", &atlas.Dense{Rows: 3, Cols: 2, Data: []float32{1, 2, 1, float32(math.NaN()), 1, 2}}, ErrNotFinite},
	}
	for _, c := range cases {
		_, err := InitPCA(c.x)
		if !errors.Is(err, c.want) {
			t.Errorf("%s: got %v, want %v", c.name, err, c.want)
		}
	}
	var le *LayoutError
	if _, err := InitPCA(cases[4].x); !errors.As(err, &le) || le.Point != 1 {
		t.Errorf("NaN in row 1: got %v", err)
	}
}
