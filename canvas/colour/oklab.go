package colour

import "math"

// XYZ is a CIE 1931 XYZ colour relative to the D65 white, scaled so that the
// white has Y = 1.
type XYZ struct{ X, Y, Z float64 }

// OKLab is a colour in the OKLab space: L is perceived lightness (0 black,
// 1 white), A runs green–red and B blue–yellow.
type OKLab struct{ L, A, B float64 }

// OKLCH is OKLab in polar form: lightness L, chroma C = √(A²+B²) and hue H
// in degrees, [0, 360).
type OKLCH struct{ L, C, H float64 }

type mat3 [3][3]float64

func (m *mat3) apply(x, y, z float64) (float64, float64, float64) {
	return m[0][0]*x + m[0][1]*y + m[0][2]*z,
		m[1][0]*x + m[1][1]*y + m[1][2]*z,
		m[2][0]*x + m[2][1]*y + m[2][2]*z
}

// The matrices below are those of CSS Color Module Level 4, §18 "Sample code
// for color conversions" (W3C): the sRGB matrices as exact fractions, the
// OKLab matrices recomputed there for the D65 white of the sRGB matrices.
var (
	linearToXYZ = mat3{
		{506752.0 / 1228815, 87881.0 / 245763, 12673.0 / 70218},
		{87098.0 / 409605, 175762.0 / 245763, 12673.0 / 175545},
		{7918.0 / 409605, 87881.0 / 737289, 1001167.0 / 1053270},
	}
	xyzToLinear = mat3{
		{12831.0 / 3959, -329.0 / 214, -1974.0 / 3959},
		{-851781.0 / 878810, 1648619.0 / 878810, 36519.0 / 878810},
		{705.0 / 12673, -2585.0 / 12673, 705.0 / 667},
	}
	xyzToLMS = mat3{
		{0.8190224379967030, 0.3619062600528904, -0.1288737815209879},
		{0.0329836539323885, 0.9292868615863434, 0.0361446663506424},
		{0.0481771893596242, 0.2642395317527308, 0.6335478284694309},
	}
	lmsToXYZ = mat3{
		{1.2268798758459243, -0.5578149944602171, 0.2813910456659647},
		{-0.0405757452148008, 1.1122868032803170, -0.0717110580655164},
		{-0.0763729366746601, -0.4214933324022432, 1.5869240198367816},
	}
	lmsToOKLab = mat3{
		{0.2104542683093140, 0.7936177747023054, -0.0040720430116193},
		{1.9779985324311684, -2.4285922420485799, 0.4505937096174110},
		{0.0259040424655478, 0.7827717124575296, -0.8086757549230774},
	}
	okLabToLMS = mat3{
		{1, 0.3963377773761749, 0.2158037573099136},
		{1, -0.1055613458156586, -0.0638541728258133},
		{1, -0.0894841775298119, -1.2914855480194092},
	}
)

// XYZ returns c in CIE XYZ (D65):
//
//	(X, Y, Z)ᵀ = M · (R, G, B)ᵀ
//
// with M the linear-sRGB-to-XYZ matrix of CSS Color 4.
func (c Linear) XYZ() XYZ {
	x, y, z := linearToXYZ.apply(c.R, c.G, c.B)
	return XYZ{x, y, z}
}

// Linear returns c in linear-light sRGB, the inverse of Linear.XYZ.
func (c XYZ) Linear() Linear {
	r, g, b := xyzToLinear.apply(c.X, c.Y, c.Z)
	return Linear{r, g, b}
}

// OKLab returns c in OKLab:
//
//	(l, m, s) = M₁ · (X, Y, Z)
//	(L, a, b) = M₂ · (∛l, ∛m, ∛s)
//
// with M₁ and M₂ as in CSS Color 4 (cube roots keep the sign).
func (c XYZ) OKLab() OKLab {
	l, m, s := xyzToLMS.apply(c.X, c.Y, c.Z)
	L, a, b := lmsToOKLab.apply(math.Cbrt(l), math.Cbrt(m), math.Cbrt(s))
	return OKLab{L, a, b}
}

// XYZ returns c in CIE XYZ (D65), the inverse of XYZ.OKLab.
func (c OKLab) XYZ() XYZ {
	l, m, s := okLabToLMS.apply(c.L, c.A, c.B)
	x, y, z := lmsToXYZ.apply(l*l*l, m*m*m, s*s*s)
	return XYZ{x, y, z}
}

// OKLab returns c in OKLab by way of XYZ.
func (c Linear) OKLab() OKLab { return c.XYZ().OKLab() }

// OKLab returns c in OKLab by way of linear sRGB and XYZ.
func (c SRGB) OKLab() OKLab { return c.Linear().XYZ().OKLab() }

// Linear returns c in linear-light sRGB by way of XYZ.
func (c OKLab) Linear() Linear { return c.XYZ().Linear() }

// SRGB returns c in gamma-encoded sRGB by way of XYZ and linear sRGB.
func (c OKLab) SRGB() SRGB { return c.XYZ().Linear().SRGB() }

// LCH returns c in polar form:
//
//	C = √(a² + b²),  H = atan2(b, a) in degrees, in [0, 360)
//
// H is 0 for a neutral colour (a = b = 0).
func (c OKLab) LCH() OKLCH {
	return OKLCH{c.L, math.Hypot(c.A, c.B), hueDegrees(c.A, c.B)}
}

// OKLab returns c in rectangular form:
//
//	a = C·cos(H), b = C·sin(H)
func (c OKLCH) OKLab() OKLab {
	s, co := math.Sincos(c.H * math.Pi / 180)
	return OKLab{c.L, c.C * co, c.C * s}
}

// SRGB returns c in gamma-encoded sRGB by way of OKLab.
func (c OKLCH) SRGB() SRGB { return c.OKLab().SRGB() }

// hueDegrees returns atan2(b, a) in degrees, in [0, 360).
func hueDegrees(a, b float64) float64 {
	h := math.Atan2(b, a) * 180 / math.Pi
	if h < 0 {
		h += 360
	}
	if h >= 360 {
		h -= 360
	}
	return h
}

// Distance returns the Euclidean distance between a and b in OKLab, the
// colour difference the OKLab space was designed for:
//
//	ΔE_ok = √((L₁−L₂)² + (a₁−a₂)² + (b₁−b₂)²)
func Distance(a, b OKLab) float64 {
	dl, da, db := a.L-b.L, a.A-b.A, a.B-b.B
	return math.Sqrt(dl*dl + da*da + db*db)
}
