package spatial

import (
	"errors"
	"testing"
)

// TestCombine checks every mode against its truth table.
func TestCombine(t *testing.T) {
	current := []bool{false, false, true, true}
	lasso := []bool{false, true, false, true}
	for _, tc := range []struct {
		mode Mode
		want []bool
	}{
		{Replace, []bool{false, true, false, true}},
		{Add, []bool{false, true, true, true}},
		{Subtract, []bool{false, false, true, false}},
		{Intersect, []bool{false, false, false, true}},
	} {
		got, err := Combine(nil, current, lasso, tc.mode)
		if err != nil {
			t.Fatal(err)
		}
		for i := range got {
			if got[i] != tc.want[i] {
				t.Errorf("mode %d: %v, want %v", tc.mode, got, tc.want)
				break
			}
		}
	}
	in := append([]bool(nil), current...)
	if got, _ := Combine(in, in, lasso, Add); &got[0] != &in[0] || !got[1] {
		t.Error("Combine in place failed")
	}
	if _, err := Combine(nil, current, lasso[:3], Add); !errors.Is(err, ErrLength) {
		t.Errorf("length mismatch: %v", err)
	}
	if _, err := Combine(make([]bool, 2), current, lasso, Add); !errors.Is(err, ErrLength) {
		t.Errorf("short dst: %v", err)
	}
	if _, err := Combine(nil, current, lasso, Mode(9)); !errors.Is(err, ErrMode) {
		t.Errorf("bad mode: %v", err)
	}
}
