package colour

import (
	"math"
	"testing"
)

// TestSimulateKeepsNeutrals checks the property Machado, Oliveira &
// Fernandes (2009) build their matrices to have: every row sums to one, so
// white maps to white and every grey stays the same grey. The matrices are
// printed to six decimals, so each row sum may be off by up to 3 × 5e-7.
func TestSimulateKeepsNeutrals(t *testing.T) {
	const tol = 1.5e-6
	for _, d := range deficiencies {
		for _, g := range []float64{0, 0.05, 0.2, 0.5, 0.8, 1} {
			s := Simulate(Linear{g, g, g}, d)
			if !near3(s.R, s.G, s.B, g, g, g, tol*g) {
				t.Errorf("%v: grey %g → %v", d, g, s)
			}
		}
	}
	if got := Simulate(Linear{0.1, 0.2, 0.3}, Deficiency(0)); got != (Linear{0.1, 0.2, 0.3}) {
		t.Errorf("unknown deficiency changed the colour: %v", got)
	}
}

// TestDeuteranopeConfusion checks a pair that deuteranopes confuse: a red
// and a green of matched OKLab lightness and chroma, OKLCH(0.60, 0.13, 30°)
// and OKLCH(0.60, 0.13, 140°) — the classic red–green confusion of
// deuteranopia (Machado et al. 2009 show it on their test images). In normal
// vision they differ by ΔE₀₀ ≈ 50; under the simulated deuteranopia the
// difference must fall below 3, the range where side-by-side patches read as
// one colour (common practice). A blue–yellow pair of the same lightness,
// which deuteranopes do tell apart, must stay above 40.
func TestDeuteranopeConfusion(t *testing.T) {
	diff := func(a, b OKLCH, d Deficiency) float64 {
		la, lb := a.OKLab().Linear(), b.OKLab().Linear()
		if d != 0 {
			la, lb = Simulate(la, d), Simulate(lb, d)
		}
		return DeltaE2000(la.Lab(), lb.Lab())
	}
	red, green := OKLCH{0.60, 0.13, 30}, OKLCH{0.60, 0.13, 140}
	if n := diff(red, green, 0); n < 40 {
		t.Errorf("red–green in normal vision ΔE00 = %.2f, want ≥ 40", n)
	}
	if s := diff(red, green, Deuteranopia); s >= 3 {
		t.Errorf("red–green under deuteranopia ΔE00 = %.2f, want < 3", s)
	}
	blue, yellow := OKLCH{0.60, 0.12, 260}, OKLCH{0.60, 0.12, 90}
	if s := diff(blue, yellow, Deuteranopia); s <= 40 {
		t.Errorf("blue–yellow under deuteranopia ΔE00 = %.2f, want > 40", s)
	}
	if math.IsNaN(diff(red, green, Tritanopia)) {
		t.Error("NaN under tritanopia")
	}
}
