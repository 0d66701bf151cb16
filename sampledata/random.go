package sampledata

import (
	"math"
	"math/rand/v2"
)

// stream is one independent sequence of random numbers. Every cell of the
// atlas has its own stream, keyed by the seed and the cell's index, so that
// cells can be filled in any order on any number of goroutines with the same
// result.
//
// The bits come from the PCG generator of math/rand/v2, whose output for a
// given seed is fixed; the transforms to uniform, normal, gamma, beta,
// Poisson and negative binomial variates are implemented here so that the
// values never depend on the standard library's choice of algorithm.
type stream struct {
	pcg rand.PCG
}

// mix64 is the finaliser of the SplitMix64 generator (Steele, Lea & Flood,
// "Fast splittable pseudorandom number generators", OOPSLA 2014): a bijection
// of uint64 that spreads neighbouring keys over the whole range.
func mix64(x uint64) uint64 {
	x += 0x9e3779b97f4a7c15
	x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9
	x = (x ^ (x >> 27)) * 0x94d049bb133111eb
	return x ^ (x >> 31)
}

// newStream returns the stream for the given seed, purpose and key (a cell
// index, or a fixed key for the gene parameters).
func newStream(seed int64, purpose, key uint64) stream {
	var s stream
	s.pcg.Seed(mix64(uint64(seed)^mix64(purpose)), mix64(key^mix64(uint64(seed)+purpose)))
	return s
}

// uniform returns a uniform variate in [0, 1) with 53 random bits.
func (s *stream) uniform() float64 {
	return float64(s.pcg.Uint64()>>11) * 0x1p-53
}

// normal returns a standard normal variate by the polar method
// (Marsaglia & Bray, "A convenient method for generating normal variables",
// SIAM Review 6:260–264, 1964).
func (s *stream) normal() float64 {
	for {
		u := 2*s.uniform() - 1
		v := 2*s.uniform() - 1
		q := u*u + v*v
		if q > 0 && q < 1 {
			return u * math.Sqrt(-2*math.Log(q)/q)
		}
	}
}

// pick returns an index drawn with probabilities proportional to weights.
func (s *stream) pick(weights []float64) int {
	var total float64
	for _, w := range weights {
		total += w
	}
	u := s.uniform() * total
	for i, w := range weights {
		if u < w {
			return i
		}
		u -= w
	}
	return len(weights) - 1
}

// gamma returns a Gamma(shape, 1) variate, shape > 0, by the method of
// Marsaglia & Tsang ("A simple method for generating gamma variables",
// ACM TOMS 26:363–372, 2000). For shape < 1 it uses their boost
//
//	Gamma(a) = Gamma(a+1) · U^(1/a).
func (s *stream) gamma(shape float64) float64 {
	if shape < 1 {
		return s.gamma(shape+1) * math.Pow(s.uniform(), 1/shape)
	}
	d := shape - 1.0/3
	c := 1 / math.Sqrt(9*d)
	for {
		var x, v float64
		for {
			x = s.normal()
			v = 1 + c*x
			if v > 0 {
				break
			}
		}
		v = v * v * v
		u := s.uniform()
		x2 := x * x
		if u < 1-0.0331*x2*x2 {
			return d * v
		}
		if math.Log(u) < 0.5*x2+d*(1-v+math.Log(v)) {
			return d * v
		}
	}
}

// beta returns a Beta(a, b) variate as X/(X+Y) with X ~ Gamma(a), Y ~ Gamma(b).
func (s *stream) beta(a, b float64) float64 {
	x := s.gamma(a)
	y := s.gamma(b)
	return x / (x + y)
}

// poissonInversionMax is the largest mean for which poisson searches the
// cumulative distribution from zero; larger means use rejection.
const poissonInversionMax = 10

// poisson returns a Poisson(lambda) variate, lambda ≥ 0. Small means use
// sequential search of the cumulative distribution
//
//	P(0) = e^(−λ),  P(k) = P(k−1)·λ/k;
//
// larger means use the transformed rejection method PTRS of Hörmann ("The
// transformed rejection method for generating Poisson random variables",
// Insurance: Mathematics and Economics 12:39–45, 1993).
func (s *stream) poisson(lambda float64) int {
	if lambda < poissonInversionMax {
		u := s.uniform()
		p := math.Exp(-lambda)
		f := p
		k := 0
		for u >= f {
			k++
			p *= lambda / float64(k)
			f += p
			if p <= f*0x1p-53 {
				break // the rest of the tail cannot change f
			}
		}
		return k
	}
	slam := math.Sqrt(lambda)
	loglam := math.Log(lambda)
	b := 0.931 + 2.53*slam
	a := -0.059 + 0.02483*b
	invAlpha := 1.1239 + 1.1328/(b-3.4)
	vr := 0.9277 - 3.6224/(b-2)
	for {
		u := s.uniform() - 0.5
		v := s.uniform()
		us := 0.5 - math.Abs(u)
		k := math.Floor((2*a/us+b)*u + lambda + 0.43)
		if us >= 0.07 && v <= vr {
			return int(k)
		}
		if k < 0 || (us < 0.013 && v > us) {
			continue
		}
		lg, _ := math.Lgamma(k + 1)
		if math.Log(v)+math.Log(invAlpha)-math.Log(a/(us*us)+b) <= -lambda+k*loglam-lg {
			return int(k)
		}
	}
}

// nbInversionMax is the largest mean for which negBinomial searches the
// cumulative distribution; larger means use the gamma–Poisson mixture.
const nbInversionMax = 48

// negBinomial returns a negative binomial variate with mean mu ≥ 0 and size
// (inverse dispersion) r ≥ 0.01:
//
//	P(k) = Γ(k+r) / (Γ(r) k!) · (r/(r+μ))^r · (μ/(r+μ))^k,
//	mean μ, variance μ + μ²/r.
//
// For μ < nbInversionMax it inverts one uniform u by sequential search from
// zero. Most draws of a sparse count matrix are zeros, so a cheap squeeze
// settles them first: since log(1+x) ≤ x and the alternating Taylor series
// of e^(−μ) stops after a negative term,
//
//	P(0) = (1+μ/r)^(−r) ≥ e^(−μ) ≥ 1 − μ + μ²/2 − μ³/6,
//
// and u below the cubic is a zero without evaluating P(0). Larger means draw
// λ ~ Gamma(r, μ/r) and return a Poisson(λ) variate, which has the same
// distribution. Sizes that are whole multiples of 1/4 make P(0) cheapest
// (see powSize).
func (s *stream) negBinomial(mu, r float64) int {
	if mu >= nbInversionMax {
		return s.poisson(mu / r * s.gamma(r))
	}
	u := float64(s.pcg.Uint64()>>11) * 0x1p-53
	if u < 1-mu*(1-mu*(0.5-mu*(1.0/6))) {
		return 0
	}
	return nbInvert(u, mu, r)
}

// reciprocals[k] is 1/k, so that the search in nbInvert multiplies instead of
// dividing.
var reciprocals = func() (t [256]float64) {
	for k := 1; k < len(t); k++ {
		t[k] = 1 / float64(k)
	}
	return t
}()

// nbInvert returns the smallest k with F(k) > u for the negative binomial
// distribution of mean mu and size r, summing the probabilities by
//
//	P(0) = (r/(r+μ))^r,  P(k) = P(k−1) · (k−1+r)/k · μ/(r+μ).
func nbInvert(u, mu, r float64) int {
	inv := 1 / (r + mu)
	p := powSize(r*inv, r)
	f := p
	q := mu * inv
	k := 0
	for u >= f {
		k++
		if k < len(reciprocals) {
			p *= (float64(k-1) + r) * q * reciprocals[k]
		} else {
			p *= (float64(k-1) + r) * q / float64(k)
		}
		f += p
		if p <= f*0x1p-53 {
			break // the rest of the tail cannot change f
		}
	}
	return k
}

// maxQuarterPower bounds the exponents that powSize raises by multiplication.
const maxQuarterPower = 1024

// powSize returns y^r for 0 < y ≤ 1 and r > 0. When 4r is a whole number up
// to maxQuarterPower it uses square roots and repeated squaring,
//
//	y^r = (y^(1/4))^(4r mod 4) · y^⌊r⌋,
//
// which is several times faster than exp(r log y); otherwise it uses the
// latter.
func powSize(y, r float64) float64 {
	q := 4 * r
	if q != math.Trunc(q) || q > maxQuarterPower {
		return math.Exp(r * math.Log(y))
	}
	n := int(q)
	p := 1.0
	switch n & 3 {
	case 1:
		p = math.Sqrt(math.Sqrt(y))
	case 2:
		p = math.Sqrt(y)
	case 3:
		h := math.Sqrt(y)
		p = h * math.Sqrt(h)
	}
	for m, b := n>>2, y; m > 0; m >>= 1 {
		if m&1 == 1 {
			p *= b
		}
		b *= b
	}
	return p
}
