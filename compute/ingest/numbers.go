package ingest

import (
	"math"
	"strconv"
)

// pow10 holds the powers of ten that float64 represents exactly.
var pow10 = [...]float64{1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10,
	1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22}

// parseUint parses a non-empty run of ASCII digits. It reports false for
// any other byte, an empty b or a value above max.
func parseUint(b []byte, max uint64) (uint64, bool) {
	if len(b) == 0 || len(b) > 19 {
		return 0, false
	}
	var v uint64
	for _, c := range b {
		d := c - '0'
		if d > 9 {
			return 0, false
		}
		v = v*10 + uint64(d)
	}
	return v, v <= max
}

// parseInt parses an optionally signed decimal integer.
func parseInt(b []byte) (int64, bool) {
	neg := false
	if len(b) > 0 && (b[0] == '-' || b[0] == '+') {
		neg = b[0] == '-'
		b = b[1:]
	}
	v, ok := parseUint(b, math.MaxInt64)
	if neg {
		return -int64(v), ok
	}
	return int64(v), ok
}

// parseFloat parses a decimal or scientific number as float64. Plain
// decimals with at most 15 significant digits and a small exponent are
// converted exactly by one multiplication or division of exact float64
// values, which is correctly rounded (the fast path of Clinger, "How to read
// floating point numbers accurately", PLDI 1990); anything else goes to
// strconv.ParseFloat. Both paths therefore return the float64 nearest to the
// decimal value. Infinities and NaN are returned as parsed; callers decide
// whether they are allowed.
func parseFloat(b []byte) (float64, bool) {
	if v, ok := fastFloat(b); ok {
		return v, true
	}
	// string(b) does not escape: strconv copies its input into errors.
	v, err := strconv.ParseFloat(string(b), 64)
	if err != nil {
		if ne, ok := err.(*strconv.NumError); ok && ne.Err == strconv.ErrRange {
			return v, true // ±Inf or 0 with the right sign
		}
		return 0, false
	}
	return v, true
}

// fastFloat handles [+-]digits[.digits][(e|E)[+-]digits] when the digits
// form an integer below 2^53 and the decimal exponent is within ±22.
func fastFloat(b []byte) (float64, bool) {
	i, n := 0, len(b)
	neg := false
	if i < n && (b[i] == '-' || b[i] == '+') {
		neg = b[i] == '-'
		i++
	}
	var mant uint64
	digits, exp := 0, 0
	start := i
	for ; i < n; i++ {
		d := b[i] - '0'
		if d > 9 {
			break
		}
		if mant == 0 && d == 0 {
			continue // leading zeros are not significant
		}
		mant = mant*10 + uint64(d)
		digits++
	}
	intDigits := i - start
	fracDigits := 0
	if i < n && b[i] == '.' {
		i++
		fs := i
		for ; i < n; i++ {
			d := b[i] - '0'
			if d > 9 {
				break
			}
			exp--
			if mant == 0 && d == 0 {
				continue
			}
			mant = mant*10 + uint64(d)
			digits++
		}
		fracDigits = i - fs
	}
	if intDigits+fracDigits == 0 || digits > 15 {
		return 0, false
	}
	if i < n && (b[i] == 'e' || b[i] == 'E') {
		i++
		eneg := false
		if i < n && (b[i] == '-' || b[i] == '+') {
			eneg = b[i] == '-'
			i++
		}
		es := i
		e := 0
		for ; i < n && i-es < 4; i++ {
			d := b[i] - '0'
			if d > 9 {
				break
			}
			e = e*10 + int(d)
		}
		if i == es {
			return 0, false
		}
		if eneg {
			e = -e
		}
		exp += e
	}
	if i != n {
		return 0, false
	}
	v := float64(mant) // exact: mant < 10^15 < 2^53
	switch {
	case mant == 0 || exp == 0:
	case exp > 0 && exp <= 22:
		v *= pow10[exp]
	case exp < 0 && exp >= -22:
		v /= pow10[-exp]
	default:
		return 0, false
	}
	if neg {
		v = -v
	}
	return v, true
}

// toFloat32 rounds v to float32 and reports whether the result is finite.
func toFloat32(v float64) (float32, bool) {
	f := float32(v)
	return f, !math.IsNaN(v) && !math.IsInf(float64(f), 0)
}
