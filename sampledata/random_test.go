package sampledata

import (
	"fmt"
	"lodestone/internal/pyref"
	"math"
	"testing"
)

// moments returns the sample mean, the unbiased sample variance and the
// fourth central moment of x.
func moments(x []float64) (mean, variance, m4 float64) {
	n := float64(len(x))
	for _, v := range x {
		mean += v
	}
	mean /= n
	for _, v := range x {
		d := v - mean
		variance += d * d
		m4 += d * d * d * d
	}
	return mean, variance / (n - 1), m4 / n
}

// checkMoments compares the sample mean and variance of x with the exact
// mean and variance of its law. The allowance is five standard errors: of
// the mean, sqrt(σ²/n); of the sample variance, sqrt((μ₄ − σ⁴)/n) with the
// fourth central moment estimated from the sample (standard large-sample
// results, common practice).
func checkMoments(t *testing.T, what string, x []float64, wantMean, wantVar float64) {
	t.Helper()
	n := float64(len(x))
	mean, variance, m4 := moments(x)
	if se := math.Sqrt(wantVar / n); math.Abs(mean-wantMean) > 5*se {
		t.Errorf("%s: mean %.5g, want %.5g ± %.2g", what, mean, wantMean, 5*se)
	}
	if se := math.Sqrt(math.Max(m4-variance*variance, 0) / n); math.Abs(variance-wantVar) > 5*se {
		t.Errorf("%s: variance %.5g, want %.5g ± %.2g", what, variance, wantVar, 5*se)
	}
}

// nbPMF is the negative binomial probability of k for mean mu and size r,
// from the closed form with log-gamma functions (a different route from the
// recursion of nbInvert):
//
//	P(k) = Γ(k+r) / (Γ(r) k!) · (r/(r+μ))^r · (μ/(r+μ))^k.
func nbPMF(k int, mu, r float64) float64 {
	a, _ := math.Lgamma(float64(k) + r)
	b, _ := math.Lgamma(r)
	c, _ := math.Lgamma(float64(k) + 1)
	return math.Exp(a - b - c + r*math.Log(r/(r+mu)) + float64(k)*math.Log(mu/(r+mu)))
}

// poissonPMF is the Poisson probability of k for mean lambda.
func poissonPMF(k int, lambda float64) float64 {
	c, _ := math.Lgamma(float64(k) + 1)
	return math.Exp(-lambda + float64(k)*math.Log(lambda) - c)
}

// checkDistribution compares the empirical distribution function of the
// integer sample x with the exact one given by pmf. By the
// Dvoretzky–Kiefer–Wolfowitz inequality with Massart's constant (Massart,
// Ann. Probab. 18:1269–1283, 1990), which holds for discrete laws too,
//
//	P(sup_k |F_n(k) − F(k)| > ε) ≤ 2 exp(−2nε²),
//
// so ε is chosen for a chance of 1e-6 of a false alarm.
func checkDistribution(t *testing.T, what string, x []int, pmf func(int) float64) {
	t.Helper()
	maxK := 0
	for _, k := range x {
		if k < 0 {
			t.Fatalf("%s: negative variate %d", what, k)
		}
		maxK = max(maxK, k)
	}
	hist := make([]float64, maxK+1)
	for _, k := range x {
		hist[k]++
	}
	n := float64(len(x))
	eps := math.Sqrt(math.Log(2/1e-6) / (2 * n))
	var fn, f, worst float64
	worstK := 0
	for k := 0; k <= maxK; k++ {
		fn += hist[k] / n
		f += pmf(k)
		if d := math.Abs(fn - f); d > worst {
			worst, worstK = d, k
		}
	}
	if worst > eps {
		t.Errorf("%s: empirical and exact distribution functions differ by %.3g at k=%d (allowed %.3g)", what, worst, worstK, eps)
	}
}

// nbCases cover every route of negBinomial: the squeeze, the search with a
// quarter-multiple size (roots and squaring) and with another size
// (exp and log), and the gamma–Poisson mixture with both routes of poisson.
var nbCases = []struct{ mu, r float64 }{
	{0.02, 0.25}, {0.4, 1.5}, {1.2, 0.5}, {5, 2.75}, {12, 0.3}, {30, 4},
	{47.9, 10}, {60, 1.25}, {70, 0.5}, {400, 20}, {3, 100}, {8, 250.5},
}

func TestNegBinomialMoments(t *testing.T) {
	const n = 1000000
	x := make([]float64, n)
	for c, tc := range nbCases {
		s := newStream(11, 99, uint64(c))
		for i := range x {
			x[i] = float64(s.negBinomial(tc.mu, tc.r))
		}
		// Negative binomial moments (standard): mean μ, variance μ + μ²/r.
		checkMoments(t, "negative binomial", x, tc.mu, tc.mu+tc.mu*tc.mu/tc.r)
	}
}

func TestNegBinomialDistribution(t *testing.T) {
	const n = 400000
	x := make([]int, n)
	for c, tc := range nbCases {
		s := newStream(12, 99, uint64(c))
		for i := range x {
			x[i] = s.negBinomial(tc.mu, tc.r)
		}
		checkDistribution(t, "negative binomial", x, func(k int) float64 { return nbPMF(k, tc.mu, tc.r) })
	}
}

func TestPoisson(t *testing.T) {
	const n = 400000
	x := make([]int, n)
	f := make([]float64, n)
	for c, lambda := range []float64{0.01, 2.5, 9.99, 10, 25, 180, 5000} {
		s := newStream(13, 99, uint64(c))
		for i := range x {
			x[i] = s.poisson(lambda)
			f[i] = float64(x[i])
		}
		// Poisson moments (standard): mean and variance λ.
		checkMoments(t, "Poisson", f, lambda, lambda)
		checkDistribution(t, "Poisson", x, func(k int) float64 { return poissonPMF(k, lambda) })
	}
}

func TestGammaAndBeta(t *testing.T) {
	const n = 400000
	x := make([]float64, n)
	for c, shape := range []float64{0.25, 0.9, 1, 2.75, 40} {
		s := newStream(14, 99, uint64(c))
		for i := range x {
			x[i] = s.gamma(shape)
		}
		// Gamma(a, 1) moments (standard): mean a, variance a.
		checkMoments(t, "gamma", x, shape, shape)
	}
	for c, ab := range [][2]float64{{1.05, 5.95}, {5.6, 1.4}, {0.5, 0.5}} {
		s := newStream(15, 99, uint64(c))
		for i := range x {
			x[i] = s.beta(ab[0], ab[1])
		}
		// Beta(a, b) moments (standard): mean a/(a+b), variance
		// ab/((a+b)²(a+b+1)).
		a, b := ab[0], ab[1]
		checkMoments(t, "beta", x, a/(a+b), a*b/((a+b)*(a+b)*(a+b+1)))
	}
}

func TestNormal(t *testing.T) {
	const n = 400000
	x := make([]float64, n)
	s := newStream(16, 99, 0)
	var m3 float64
	for i := range x {
		x[i] = s.normal()
		m3 += x[i] * x[i] * x[i]
	}
	// Standard normal: mean 0, variance 1, third moment 0 with standard
	// error sqrt(15/n) (since E z⁶ = 15).
	checkMoments(t, "normal", x, 0, 1)
	if se := math.Sqrt(15.0 / n); math.Abs(m3/n) > 5*se {
		t.Errorf("normal: third moment %.4g, want 0 ± %.2g", m3/n, 5*se)
	}
}

func TestUniformAndPick(t *testing.T) {
	const n = 400000
	s := newStream(17, 99, 0)
	weights := []float64{0.5, 0, 2, 1.5}
	hist := make([]float64, len(weights))
	x := make([]float64, n)
	for i := range x {
		x[i] = s.uniform()
		if x[i] < 0 || x[i] >= 1 {
			t.Fatalf("uniform %v outside [0, 1)", x[i])
		}
		hist[s.pick(weights)]++
	}
	// Uniform on [0, 1) (standard): mean 1/2, variance 1/12.
	checkMoments(t, "uniform", x, 0.5, 1.0/12)
	// Each category count is binomial(n, w/Σw): standard error
	// sqrt(n p (1−p)).
	for i, w := range weights {
		p := w / 4
		if se := math.Sqrt(n * p * (1 - p)); math.Abs(hist[i]-n*p) > 5*se+1e-9 {
			t.Errorf("pick: category %d drawn %v times, want %v ± %.0f", i, hist[i], n*p, 5*se)
		}
	}
}

func TestStreamsDiffer(t *testing.T) {
	// Streams for neighbouring keys, seeds and purposes must not repeat one
	// another: their first outputs are all distinct.
	seen := map[uint64]string{}
	for seed := int64(0); seed < 4; seed++ {
		for purpose := uint64(1); purpose <= 3; purpose++ {
			for key := uint64(0); key < 100; key++ {
				s := newStream(seed, purpose, key)
				v := s.pcg.Uint64()
				if prev, ok := seen[v]; ok {
					t.Fatalf("streams %s and (%d,%d,%d) start alike", prev, seed, purpose, key)
				}
				seen[v] = fmt.Sprintf("(%d,%d,%d)", seed, purpose, key)
			}
		}
	}
}

func TestPowSize(t *testing.T) {
	// math.Pow is the reference.
	for _, y := range []float64{1, 0.999999, 0.9, 0.5, 0.07, 1e-5} {
		for _, r := range []float64{0.25, 0.5, 0.75, 1, 1.25, 2.75, 7, 33.5, 100, 256, 0.3, 1.7, 300} {
			got, want := powSize(y, r), math.Pow(y, r)
			if math.Abs(got-want) > 1e-13*want {
				t.Errorf("powSize(%v, %v) = %v, math.Pow gives %v", y, r, got, want)
			}
		}
	}
}

// TestPMFAgainstScipy checks the closed-form probabilities used above
// against scipy.stats.nbinom and scipy.stats.poisson (scipy's nbinom(n, p)
// has size n = r and success probability p = r/(r+μ)).
func TestPMFAgainstScipy(t *testing.T) {
	const script = `
import json, sys
from scipy.stats import nbinom, poisson
cases = json.load(sys.stdin)
out = []
for mu, r, k in cases["nb"]:
    out.append(float(nbinom.pmf(k, r, r / (r + mu))))
for lam, k in cases["pois"]:
    out.append(float(poisson.pmf(k, lam)))
print(json.dumps(out))
`
	type nbCase struct {
		mu, r float64
		k     int
	}
	nb := []nbCase{{0.02, 0.25, 0}, {0.02, 0.25, 3}, {5, 2.75, 4}, {12, 0.3, 40}, {400, 20, 380}, {8, 250.5, 11}}
	pois := [][2]float64{{2.5, 0}, {25, 30}, {5000, 4900}}
	in := map[string][][]float64{}
	for _, c := range nb {
		in["nb"] = append(in["nb"], []float64{c.mu, c.r, float64(c.k)})
	}
	for _, c := range pois {
		in["pois"] = append(in["pois"], []float64{c[0], c[1]})
	}
	var want []float64
	pyref.JSON(t, "scipy.stats", script, in, &want)
	var got []float64
	for _, c := range nb {
		got = append(got, nbPMF(c.k, c.mu, c.r))
	}
	for _, c := range pois {
		got = append(got, poissonPMF(int(c[1]), c[0]))
	}
	for i := range got {
		if math.Abs(got[i]-want[i]) > 1e-10*want[i] {
			t.Errorf("case %d: closed form %.12g, scipy %.12g", i, got[i], want[i])
		}
	}
}
