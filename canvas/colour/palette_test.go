package colour

import (
	"fmt"
	"image/color"
	"math"
	"strings"
	"testing"
)

// TestCategoricalTableIsGenerated regenerates the committed table with
// designCategorical and compares. The design colours lie on the band's exact
// grid; only their rounding to 8 bits could differ by one unit where another
// platform's floating point lands on the other side of a half, so channels
// may differ by 1. On a mismatch the test prints the table to paste.
func TestCategoricalTableIsGenerated(t *testing.T) {
	design := designCategorical(len(categoricalTable))
	var b strings.Builder
	same := len(design) == len(categoricalTable)
	for i, c := range design {
		n := c.SRGB().NRGBA()
		fmt.Fprintf(&b, "\t{R: %d, G: %d, B: %d, A: 255}, // OKLCH(%.2f, %.2f, %.0f)\n", n.R, n.G, n.B, c.L, c.C, c.H)
		if i < len(categoricalTable) {
			m := categoricalTable[i]
			if absDiff(m.R, n.R) > 1 || absDiff(m.G, n.G) > 1 || absDiff(m.B, n.B) > 1 || m.A != n.A {
				same = false
			}
		}
	}
	if !same {
		t.Errorf("categoricalTable differs from designCategorical; regenerated:\n%s", b.String())
	}
}

func absDiff(a, b uint8) int {
	if a > b {
		return int(a - b)
	}
	return int(b - a)
}

// Design targets of the categorical palette, stated before it was generated
// and checked on the committed table: among the first twelve colours the
// smallest CIEDE2000 difference is at least minNormal in normal vision and
// at least minDeficient under each simulated deficiency, and every colour is
// at least that far from the missing grey and from white.
const (
	minNormal    = 15.0
	minDeficient = 6.0
)

func TestCategoricalDistinct(t *testing.T) {
	visions := append([]Deficiency{0}, deficiencies[:]...)
	labs := func(c color.NRGBA) []Lab {
		lin := fromNRGBA(c).Linear()
		out := make([]Lab, len(visions))
		for i, d := range visions {
			out[i] = Simulate(lin, d).Lab()
		}
		return out
	}
	pal := Categorical(len(categoricalTable))
	others := append([]color.NRGBA{Missing, paletteBackground.NRGBA()}, pal...)
	for i, c := range pal {
		li := labs(c)
		for j, o := range others[:i+2] {
			lo := labs(o)
			for v, d := range visions {
				want := minDeficient
				if d == 0 {
					want = minNormal
				}
				if e := DeltaE2000(li[v], lo[v]); e < want {
					t.Errorf("colours %v and %v (index %d, %d) differ by ΔE00 %.2f under %v, want ≥ %g", c, o, i, j-2, e, visionName(d), want)
				}
			}
		}
	}
}

// TestCategoricalGreedyOrder recomputes, for the first steps, the greedy
// choice by an exact slow search: the candidate chosen at step k has the
// largest smallest separation from everything chosen before (and the two
// anchors), and the separations achieved never increase along the sequence,
// so the first colours are the most distinct.
func TestCategoricalGreedyOrder(t *testing.T) {
	cands := bandCandidates()
	design := designCategorical(16)
	chosen := []candidate{
		newCandidate(OKLCH{L: missingLightness}),
		newCandidate(paletteBackground.OKLab().LCH()),
	}
	prev := math.Inf(1)
	for k, c := range design {
		best, bestSep := -1, -1.0
		for i := range cands {
			sep := math.Inf(1)
			for j := range chosen {
				sep = math.Min(sep, separation(&cands[i], &chosen[j]))
			}
			if sep > bestSep {
				best, bestSep = i, sep
			}
		}
		if cands[best].lch != c {
			t.Fatalf("step %d: greedy chose %v, slow search %v", k, c, cands[best].lch)
		}
		if bestSep > prev+1e-12 {
			t.Errorf("step %d: separation %.3f exceeds the previous %.3f", k, bestSep, prev)
		}
		prev = bestSep
		chosen = append(chosen, cands[best])
	}
}

// TestCategoricalInGamutAndBand checks that every designed colour lies in the
// sRGB gamut before rounding and inside the design band.
func TestCategoricalInGamutAndBand(t *testing.T) {
	for i, c := range designCategorical(40) {
		if s := c.SRGB(); !s.InGamut(1e-12) {
			t.Errorf("colour %d %v out of gamut: %v", i, c, s)
		}
		if c.L < bandLightMin-1e-9 || c.L > bandLightMax+1e-9 || c.C < bandChromaMin-1e-9 || c.C > bandChromaMax+1e-9 {
			t.Errorf("colour %d %v outside the design band", i, c)
		}
	}
	if m := fromNRGBA(Missing); m.R != m.G || m.G != m.B {
		t.Errorf("Missing %v is not neutral", Missing)
	}
}

// TestCategoricalExtends checks the palette for more categories than the
// table: the table is its prefix, colours do not repeat up to maxDesigned,
// and past it the sequence cycles.
func TestCategoricalExtends(t *testing.T) {
	if n := len(Categorical(0)); n != 0 {
		t.Errorf("Categorical(0) has %d colours", n)
	}
	if n := len(Categorical(-3)); n != 0 {
		t.Errorf("Categorical(-3) has %d colours", n)
	}
	long := Categorical(maxDesigned)
	for i, c := range categoricalTable {
		if long[i] != c {
			t.Fatalf("colour %d: extended %v, table %v", i, long[i], c)
		}
	}
	seen := map[color.NRGBA]int{}
	for i, c := range long {
		if j, ok := seen[c]; ok {
			t.Errorf("colour %d repeats colour %d (%v)", i, j, c)
		}
		seen[c] = i
	}
	n := maxDesigned
	all := Categorical(n + 5)
	if len(bandCandidates()) < n {
		t.Fatalf("the design band has fewer than %d candidates", n)
	}
	for i := 0; i < 5; i++ {
		if all[n+i] != all[i] {
			t.Errorf("colour %d = %v, want the cycle to repeat %v", n+i, all[n+i], all[i])
		}
	}
}

func visionName(d Deficiency) string {
	if d == 0 {
		return "normal vision"
	}
	return d.String()
}
