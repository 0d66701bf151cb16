package neighbors

import (
	"context"
	"testing"
)

// TestPortableKernels runs the exhaustive search and the approximate one
// with the portable kernels on an AVX2 machine, against the float64 brute
// force, so that the code path of other processors is tested here too.
func TestPortableKernels(t *testing.T) {
	if !haveAVX2 {
		t.Skip("the portable kernels are the only ones here and are tested everywhere")
	}
	haveAVX2 = false
	defer func() { haveAVX2 = true }()
	x := randomMatrix(300, 13, 21)
	want, wantD := naiveNeighbors(x, 10, false)
	g, err := Exact(context.Background(), x, Options{K: 10})
	if err != nil {
		t.Fatal(err)
	}
	a, err := Approximate(context.Background(), x, Options{K: 10, Seed: 2})
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < x.Rows; i++ {
		checkAgainst(t, g, i, i, want[i], wantD[i], 1e-5)
		checkValidRow(t, a, i)
	}
	if r, err := Recall(a, g, nil); err != nil || r < 0.98 {
		t.Fatalf("portable approximate search: recall %v, %v", r, err)
	}
}

// TestPortableSmallKernels runs the checks of the thresholded distances and
// of the membership test with the portable code on an AVX2 machine.
func TestPortableSmallKernels(t *testing.T) {
	if !haveAVX2 {
		t.Skip("the portable kernels are the only ones here and are tested everywhere")
	}
	haveAVX2 = false
	defer func() { haveAVX2 = true }()
	checkBelowKernel(t)
	checkContains(t)
}
