package spatial

import "testing"

// TestModeApply checks every mode against its truth table, and that an
// unknown mode keeps the selection.
func TestModeApply(t *testing.T) {
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
		{Mode(9), current},
	} {
		for i := range current {
			if got := tc.mode.Apply(current[i], lasso[i]); got != tc.want[i] {
				t.Errorf("mode %d, current %v, lasso %v: %v, want %v", tc.mode, current[i], lasso[i], got, tc.want[i])
			}
		}
	}
}
