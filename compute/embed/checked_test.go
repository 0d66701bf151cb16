package embed

import (
	"context"
	"errors"
	"slices"
	"testing"
)

// TestRunCheckedEqualsRun checks that affinities checked once give, run
// after run, the layouts Run gives on the same P, bit for bit, and that
// they are refused with a layout of another size and checked like Run's.
func TestRunCheckedEqualsRun(t *testing.T) {
	P := mixtureAffinity(t, 1500)
	c, err := CheckAffinities(P, 2)
	if err != nil {
		t.Fatal(err)
	}
	p := DefaultParams()
	p.Threads, p.Iterations = 2, 300
	fresh, err := Run(context.Background(), P, nil, p, nil)
	if err != nil {
		t.Fatal(err)
	}
	got, err := RunChecked(context.Background(), c, nil, p, nil)
	if err != nil || !slices.Equal(got, fresh) {
		t.Fatalf("fresh runs differ (err %v)", err)
	}
	p.Attraction, p.EarlyIterations, p.Iterations = 4, 0, 100
	for i := 0; i < 2; i++ { // the same checked affinities again: the KL's entropy is per run
		want, err := Run(context.Background(), P, fresh, p, nil)
		if err != nil {
			t.Fatal(err)
		}
		got, err := RunChecked(context.Background(), c, fresh, p, nil)
		if err != nil || !slices.Equal(got, want) {
			t.Fatalf("warm run %d differs (err %v)", i, err)
		}
	}
	var le *LayoutError
	if _, err := RunChecked(context.Background(), c, fresh[:len(fresh)-2], p, nil); !errors.As(err, &le) || !errors.Is(err, ErrShape) {
		t.Fatalf("a layout of another size: %v", err)
	}
	bad := *P
	bad.Val = slices.Clone(P.Val)
	bad.Val[5] = -1
	var ae *AffinityError
	if _, err := CheckAffinities(&bad, 2); !errors.As(err, &ae) || !errors.Is(err, ErrNegative) {
		t.Fatalf("a negative affinity: %v", err)
	}
}
