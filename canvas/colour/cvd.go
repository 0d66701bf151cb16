package colour

import "fmt"

// Deficiency names a colour-vision deficiency that Simulate can imitate.
type Deficiency int

// The deficiencies simulated at full severity (dichromacy).
const (
	Protanopia   Deficiency = iota + 1 // missing long-wavelength cones
	Deuteranopia                       // missing medium-wavelength cones
	Tritanopia                         // missing short-wavelength cones
)

// deficiencies lists every Deficiency.
var deficiencies = [...]Deficiency{Protanopia, Deuteranopia, Tritanopia}

// String returns the name of d.
func (d Deficiency) String() string {
	switch d {
	case Protanopia:
		return "protanopia"
	case Deuteranopia:
		return "deuteranopia"
	case Tritanopia:
		return "tritanopia"
	}
	return fmt.Sprintf("Deficiency(%d)", int(d))
}

// The simulation matrices for severity 1.0 from Machado, Oliveira &
// Fernandes (2009), "A physiologically-based model for simulation of color
// vision deficiency", IEEE TVCG 15(6):1291–1298, printed there to six
// decimals.
var cvdMatrices = [...]mat3{
	Protanopia - 1: {
		{0.152286, 1.052583, -0.204868},
		{0.114503, 0.786281, 0.099216},
		{-0.003882, -0.048116, 1.051998},
	},
	Deuteranopia - 1: {
		{0.367322, 0.860646, -0.227968},
		{0.280085, 0.672501, 0.047413},
		{-0.011820, 0.042940, 0.968881},
	},
	Tritanopia - 1: {
		{1.255528, -0.076749, -0.178779},
		{-0.078411, 0.930809, 0.147602},
		{0.004733, 0.691367, 0.303900},
	},
}

// Simulate returns how c appears to a viewer with deficiency d at full
// severity, by the model of Machado, Oliveira & Fernandes (2009):
//
//	(R', G', B')ᵀ = Φ_d · (R, G, B)ᵀ
//
// applied to linear-light RGB. The result is not clamped and may fall
// slightly outside [0, 1]. An unknown d returns c unchanged.
func Simulate(c Linear, d Deficiency) Linear {
	if d < Protanopia || d > Tritanopia {
		return c
	}
	r, g, b := cvdMatrices[d-1].apply(c.R, c.G, c.B)
	return Linear{r, g, b}
}
