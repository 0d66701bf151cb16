package embed

import (
	"bufio"
	"context"
	"encoding/binary"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"lodestone/compute/atlas"
	"lodestone/internal/pyref"
)

// loadDigits returns scikit-learn's copy of the optical digits data
// (sklearn.datasets.load_digits: 1797 images of 8×8 pixels) and its labels.
func loadDigits(t *testing.T) (*atlas.Dense, []int32) {
	py := pyref.Require(t, "numpy, scipy, sklearn")
	dir := t.TempDir()
	script := `
import sys, numpy as np
from sklearn.datasets import load_digits
d = load_digits()
d.data.astype('<f4').tofile(sys.argv[1])
d.target.astype('<i4').tofile(sys.argv[2])
`
	x, lab := filepath.Join(dir, "x"), filepath.Join(dir, "labels")
	if out, err := exec.Command(py, "-c", script, x, lab).CombinedOutput(); err != nil {
		t.Fatalf("loading digits: %v\n%s", err, out)
	}
	data, labels := readFloat32s(t, x), readInt32s(t, lab)
	if len(labels) != 1797 || len(data) != 1797*64 {
		t.Fatalf("digits: %d labels, %d values", len(labels), len(data))
	}
	return &atlas.Dense{Rows: 1797, Cols: 64, Data: data}, labels
}

func readFloat32s(t *testing.T, path string) []float32 {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	out := make([]float32, len(b)/4)
	for i := range out {
		out[i] = math.Float32frombits(binary.LittleEndian.Uint32(b[4*i:]))
	}
	return out
}

func readInt32s(t *testing.T, path string) []int32 {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	out := make([]int32, len(b)/4)
	for i := range out {
		out[i] = int32(binary.LittleEndian.Uint32(b[4*i:]))
	}
	return out
}

// readReference reads testdata/digits_reference.txt: scikit-learn's layout
// and the KL divergence it reported.
func readReference(t *testing.T) ([]float32, float64, string) {
	t.Helper()
	f, err := os.Open("testdata/digits_reference.txt")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var (
		layout  []float32
		kl      float64
		version string
	)
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := sc.Text()
		if rest, ok := strings.CutPrefix(line, "# kl_divergence_ "); ok {
			kl, _ = strconv.ParseFloat(rest, 64)
			continue
		}
		if rest, ok := strings.CutPrefix(line, "# sklearn "); ok {
			version = rest
			continue
		}
		if strings.HasPrefix(line, "#") {
			continue
		}
		for _, field := range strings.Fields(line) {
			v, err := strconv.ParseFloat(field, 32)
			if err != nil {
				t.Fatal(err)
			}
			layout = append(layout, float32(v))
		}
	}
	return layout, kl, version
}

// labelAccuracy returns the share of points whose label is the most common
// among their k nearest neighbours in the layout (itself excluded; a tie
// goes to the smaller label), by brute force.
func labelAccuracy(layout []float32, labels []int32, k int) float64 {
	n := len(labels)
	type cand struct {
		d float64
		j int
	}
	cands := make([]cand, 0, n)
	correct := 0
	for i := 0; i < n; i++ {
		cands = cands[:0]
		for j := 0; j < n; j++ {
			if j != i {
				dx, dy := float64(layout[2*i]-layout[2*j]), float64(layout[2*i+1]-layout[2*j+1])
				cands = append(cands, cand{dx*dx + dy*dy, j})
			}
		}
		slices.SortFunc(cands, func(a, b cand) int {
			if a.d != b.d {
				if a.d < b.d {
					return -1
				}
				return 1
			}
			return a.j - b.j
		})
		votes := map[int32]int{}
		for _, c := range cands[:k] {
			votes[labels[c.j]]++
		}
		best, bestVotes := int32(-1), 0
		for lab, v := range votes {
			if v > bestVotes || (v == bestVotes && lab < best) {
				best, bestVotes = lab, v
			}
		}
		if best == labels[i] {
			correct++
		}
	}
	return float64(correct) / float64(n)
}

// TestDigits embeds the digits data (perplexity 30, 750 iterations from the
// PCA initialisation) and compares with scikit-learn's Barnes–Hut t-SNE on
// the same data (testdata/digits_reference.txt, written by
// testdata/digits_reference.py). Checks:
//   - 10-NN label accuracy in the map ≥ 0.95 (common practice as a measure
//     of how well a map separates known classes);
//   - our layout's exact KL(P‖Q) is no worse than that of scikit-learn's
//     layout, both measured exactly (KL) with the same P, our perplexity-30
//     affinities, so the two numbers are comparable.
func TestDigits(t *testing.T) {
	x, labels := loadDigits(t)
	P := affinityOf(t, x, 30)
	init, err := InitPCA(x)
	if err != nil {
		t.Fatal(err)
	}
	layout, err := Run(context.Background(), P, init, DefaultParams(), nil)
	if err != nil {
		t.Fatal(err)
	}
	acc := labelAccuracy(layout, labels, 10)
	ours, err := KL(P, layout, 1, 0)
	if err != nil {
		t.Fatal(err)
	}
	refLayout, refReported, version := readReference(t)
	theirs, err := KL(P, refLayout, 1, 0)
	if err != nil {
		t.Fatal(err)
	}
	refAcc := labelAccuracy(refLayout, labels, 10)
	t.Logf("digits: ours 10-NN accuracy %.4f, exact KL %.4f; scikit-learn %s Barnes–Hut: accuracy %.4f, exact KL with our P %.4f (it reported %.4f with its own P)",
		acc, ours, version, refAcc, theirs, refReported)
	if acc < 0.95 {
		t.Errorf("10-NN label accuracy %.4f < 0.95", acc)
	}
	if ours > theirs {
		t.Errorf("KL %.4f worse than scikit-learn's %.4f", ours, theirs)
	}
}
