package markers

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"lodestone/internal/pyref"
)

// stepUp is the procedure as Benjamini & Hochberg (1995) state it: with the
// p-values sorted ascending, find the largest i with p_(i) ≤ i·α/m and
// reject the hypotheses of p_(1) … p_(i). It returns which are rejected.
func stepUp(p []float64, alpha float64) []bool {
	order := make([]int, len(p))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int {
		switch {
		case p[a] < p[b]:
			return -1
		case p[a] > p[b]:
			return 1
		}
		return 0
	})
	m := float64(len(p))
	last := -1
	for r, i := range order {
		if p[i] <= float64(r+1)*alpha/m {
			last = r
		}
	}
	out := make([]bool, len(p))
	for r := 0; r <= last; r++ {
		out[order[r]] = true
	}
	return out
}

// qByDefinition evaluates q_(i) = min(1, min_{j ≥ i} p_(j)·m/j) pair by
// pair (exact slow computation), giving tied p-values the rank of the last
// of their tie, where the minimum over j ≥ i lands.
func qByDefinition(p []float64) []float64 {
	m := len(p)
	q := make([]float64, m)
	for i := range p {
		best := 1.0
		for j := range p {
			if p[j] < p[i] {
				continue
			}
			// rank of p[j]: the number of p-values ≤ p[j].
			rank := 0
			for k := range p {
				if p[k] <= p[j] {
					rank++
				}
			}
			best = min(best, p[j]*float64(m)/float64(rank))
		}
		q[i] = best
	}
	return q
}

func TestBenjaminiHochbergPaperExample(t *testing.T) {
	// Benjamini & Hochberg (1995), section 4.1: fifteen p-values from a
	// study of a thrombolytic treatment; at α = 0.05 their procedure rejects
	// the four smallest (p ≤ 0.0095), where the Bonferroni bound 0.05/15
	// rejects three. The values and the count are from memory; the count is
	// re-derived here from the procedure as stated (stepUp) and the
	// q-values from their definition.
	p := []float64{0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344,
		0.0459, 0.3240, 0.4262, 0.5719, 0.6528, 0.7590, 1.0000}
	q := BenjaminiHochberg(p, nil)
	rejected := 0
	for i := range q {
		if q[i] <= 0.05 {
			rejected++
		}
	}
	if rejected != 4 {
		t.Errorf("%d q-values ≤ 0.05, the paper rejects 4", rejected)
	}
	step := stepUp(p, 0.05)
	want := qByDefinition(p)
	for i := range p {
		if (q[i] <= 0.05) != step[i] {
			t.Errorf("p = %v: q = %v disagrees with the step-up procedure", p[i], q[i])
		}
		if math.Abs(q[i]-want[i]) > 1e-15 {
			t.Errorf("p = %v: q = %.17g, definition %.17g", p[i], q[i], want[i])
		}
	}
}

func TestBenjaminiHochbergRandom(t *testing.T) {
	// References: the definition of q (qByDefinition) and the step-up
	// procedure of Benjamini & Hochberg (1995) at several α, on random
	// p-values with ties, shuffled.
	rng := rand.New(rand.NewPCG(21, 22))
	for trial := 0; trial < 50; trial++ {
		m := 1 + rng.IntN(60)
		p := make([]float64, m)
		for i := range p {
			p[i] = math.Pow(rng.Float64(), 3)
			if rng.IntN(5) == 0 {
				p[i] = math.Round(p[i]*10) / 10 // ties
			}
		}
		q := BenjaminiHochberg(p, make([]float64, 0, m))
		want := qByDefinition(p)
		for i := range p {
			if math.Abs(q[i]-want[i]) > 1e-15*math.Max(1, want[i]) {
				t.Fatalf("trial %d: p = %v: q = %.17g, definition %.17g", trial, p[i], q[i], want[i])
			}
		}
		for _, alpha := range []float64{0.01, 0.05, 0.1, 0.25} {
			step := stepUp(p, alpha)
			for i := range p {
				if (q[i] <= alpha) != step[i] {
					t.Fatalf("trial %d, α = %v: p = %v, q = %v, step-up rejects: %v", trial, alpha, p[i], q[i], step[i])
				}
			}
		}
		// In place gives the same.
		inPlace := BenjaminiHochberg(p, p)
		if !slices.Equal(inPlace, q) {
			t.Fatalf("trial %d: in place %v, apart %v", trial, inPlace, q)
		}
	}
}

func TestBenjaminiHochbergNaN(t *testing.T) {
	// A NaN p-value stays NaN and is not counted: the others get the
	// q-values of the list without it (definition of q).
	p := []float64{0.01, math.NaN(), 0.04, 0.03}
	q := BenjaminiHochberg(p, nil)
	want := qByDefinition([]float64{0.01, 0.04, 0.03})
	if !math.IsNaN(q[1]) || q[0] != want[0] || q[2] != want[1] || q[3] != want[2] {
		t.Errorf("q = %v, want [%v NaN %v %v]", q, want[0], want[1], want[2])
	}
	if got := BenjaminiHochberg(nil, nil); len(got) != 0 {
		t.Errorf("empty input gives %v", got)
	}
}

// scipyFDR runs scipy.stats.false_discovery_control(p, method="bh"), which
// scipy has from version 1.11 on; it prints null when it is missing.
const scipyFDR = `
import json, sys
import scipy.stats as st
p = json.load(sys.stdin)
f = getattr(st, "false_discovery_control", None)
print(json.dumps(None if f is None else [float(v) for v in f(p, method="bh")]))
`

func TestBenjaminiHochbergScipy(t *testing.T) {
	// Reference: scipy.stats.false_discovery_control(method="bh"), where
	// the installed scipy has it (1.11 and later).
	rng := rand.New(rand.NewPCG(23, 24))
	p := make([]float64, 200)
	for i := range p {
		p[i] = math.Pow(rng.Float64(), 4)
	}
	var want []float64
	pyref.JSON(t, "scipy.stats", scipyFDR, p, &want)
	if want == nil {
		t.Skip("reference check skipped: scipy.stats.false_discovery_control needs scipy ≥ 1.11")
	}
	q := BenjaminiHochberg(p, nil)
	for i := range p {
		if !relClose(q[i], want[i], 1e-12) {
			t.Errorf("p = %v: q = %.17g, scipy %.17g", p[i], q[i], want[i])
		}
	}
}
