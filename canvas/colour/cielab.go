package colour

import "math"

// Lab is a CIE 1976 L*a*b* colour relative to the D65 white: L from 0 (black)
// to 100 (white), a green–red, b blue–yellow.
type Lab struct{ L, A, B float64 }

// d65 is the D65 reference white in XYZ (Y = 1), from its chromaticity
// x = 0.3127, y = 0.3290 as in CSS Color 4.
var d65 = XYZ{0.3127 / 0.3290, 1, (1 - 0.3127 - 0.3290) / 0.3290}

// CIE 15 constants, as exact fractions: ε = (6/29)³ and κ = (29/3)³.
const (
	labEpsilon = 216.0 / 24389
	labKappa   = 24389.0 / 27
)

// Lab returns c in CIELAB relative to D65 (CIE 15:2004):
//
//	L* = 116·f(Y/Yn) − 16
//	a* = 500·(f(X/Xn) − f(Y/Yn))
//	b* = 200·(f(Y/Yn) − f(Z/Zn))
//	f(t) = ∛t if t > ε, (κ·t + 16)/116 otherwise
func (c XYZ) Lab() Lab {
	f := func(t float64) float64 {
		if t > labEpsilon {
			return math.Cbrt(t)
		}
		return (labKappa*t + 16) / 116
	}
	fx, fy, fz := f(c.X/d65.X), f(c.Y/d65.Y), f(c.Z/d65.Z)
	return Lab{116*fy - 16, 500 * (fx - fy), 200 * (fy - fz)}
}

// XYZ returns c in CIE XYZ (D65), the inverse of XYZ.Lab.
func (c Lab) XYZ() XYZ {
	fy := (c.L + 16) / 116
	fx := fy + c.A/500
	fz := fy - c.B/200
	inv := func(f float64) float64 {
		if t := f * f * f; t > labEpsilon {
			return t
		}
		return (116*f - 16) / labKappa
	}
	return XYZ{inv(fx) * d65.X, inv(fy) * d65.Y, inv(fz) * d65.Z}
}

// Lab returns c in CIELAB (D65) by way of XYZ.
func (c Linear) Lab() Lab { return c.XYZ().Lab() }

// Lab returns c in CIELAB (D65) by way of linear sRGB and XYZ.
func (c SRGB) Lab() Lab { return c.Linear().XYZ().Lab() }

// DeltaE2000 returns the CIEDE2000 colour difference between a and b with
// the parametric factors k_L = k_C = k_H = 1, following the equations and
// implementation notes of Sharma, Wu & Dalal (2005):
//
//	ΔE₀₀ = √( (ΔL'/S_L)² + (ΔC'/S_C)² + (ΔH'/S_H)² + R_T·(ΔC'/S_C)·(ΔH'/S_H) )
//
// where a' = (1+G)·a* with G = ½(1 − √(C̄⁷/(C̄⁷+25⁷))), C' and h' are the
// chroma and hue of (a', b*), and S_L, S_C, S_H and R_T are the weighting and
// rotation functions of the standard. The mean hue and the hue difference
// follow the paper's rules for hues on either side of 0° and for zero chroma.
func DeltaE2000(a, b Lab) float64 {
	const pow25to7 = 6103515625.0 // 25⁷

	c1 := math.Hypot(a.A, a.B)
	c2 := math.Hypot(b.A, b.B)
	cBar := (c1 + c2) / 2
	cBar7 := math.Pow(cBar, 7)
	g := 0.5 * (1 - math.Sqrt(cBar7/(cBar7+pow25to7)))

	a1p := (1 + g) * a.A
	a2p := (1 + g) * b.A
	c1p := math.Hypot(a1p, a.B)
	c2p := math.Hypot(a2p, b.B)
	h1p := primeHue(a1p, a.B)
	h2p := primeHue(a2p, b.B)

	dLp := b.L - a.L
	dCp := c2p - c1p
	var dhp float64
	if c1p*c2p != 0 {
		dhp = h2p - h1p
		switch {
		case dhp > 180:
			dhp -= 360
		case dhp < -180:
			dhp += 360
		}
	}
	dHp := 2 * math.Sqrt(c1p*c2p) * math.Sin(dhp*math.Pi/360)

	lBarP := (a.L + b.L) / 2
	cBarP := (c1p + c2p) / 2
	var hBarP float64
	switch {
	case c1p*c2p == 0:
		hBarP = h1p + h2p
	case math.Abs(h1p-h2p) <= 180:
		hBarP = (h1p + h2p) / 2
	case h1p+h2p < 360:
		hBarP = (h1p + h2p + 360) / 2
	default:
		hBarP = (h1p + h2p - 360) / 2
	}

	rad := math.Pi / 180
	t := 1 - 0.17*math.Cos((hBarP-30)*rad) + 0.24*math.Cos(2*hBarP*rad) +
		0.32*math.Cos((3*hBarP+6)*rad) - 0.20*math.Cos((4*hBarP-63)*rad)
	dTheta := 30 * math.Exp(-((hBarP-275)/25)*((hBarP-275)/25))
	cBarP7 := math.Pow(cBarP, 7)
	rc := 2 * math.Sqrt(cBarP7/(cBarP7+pow25to7))
	l50 := (lBarP - 50) * (lBarP - 50)
	sl := 1 + 0.015*l50/math.Sqrt(20+l50)
	sc := 1 + 0.045*cBarP
	sh := 1 + 0.015*cBarP*t
	rt := -math.Sin(2*dTheta*rad) * rc

	tl, tc, th := dLp/sl, dCp/sc, dHp/sh
	return math.Sqrt(tl*tl + tc*tc + th*th + rt*tc*th)
}

// primeHue returns the hue angle h' of (a', b) in degrees, [0, 360), and 0
// when a' = b = 0 as the standard requires.
func primeHue(ap, b float64) float64 {
	if ap == 0 && b == 0 {
		return 0
	}
	return hueDegrees(ap, b)
}
