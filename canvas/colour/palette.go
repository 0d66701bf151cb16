package colour

import (
	"image/color"
	"sync"
)

// The design band of the categorical palette in OKLCH: light enough to read
// on a dark background, dark enough to read on white, and saturated enough
// to be told apart, with hues sampled every hueStep degrees.
const (
	bandLightMin  = 0.48
	bandLightMax  = 0.84
	bandLightStep = 0.04
	bandChromaMin = 0.08
	bandChromaMax = 0.23
	bandChromaStp = 0.03
	bandHueStep   = 5.0
)

// missingLightness is the OKLab lightness of the neutral grey for missing
// values: light enough to recede behind painted cells on white.
const missingLightness = 0.80

var cvdWeight = 2.5

// Missing is the neutral grey used for cells whose value is missing: OKLCH
// (0.80, 0, 0).
var Missing = OKLCH{L: missingLightness}.SRGB().NRGBA()

// paletteBackground is the white the categorical palette keeps its distance
// from.
var paletteBackground = SRGB{1, 1, 1}

// categoricalTable holds the first len(categoricalTable) colours of the
// categorical palette, as designCategorical produces them (a test
// regenerates them and compares).
var categoricalTable = [...]color.NRGBA{
	{R: 118, G: 34, B: 200, A: 255},  // OKLCH(0.48, 0.23, 300)
	{R: 156, G: 58, B: 17, A: 255},   // OKLCH(0.48, 0.14, 40)
	{R: 35, G: 108, B: 87, A: 255},   // OKLCH(0.48, 0.08, 170)
	{R: 243, G: 49, B: 121, A: 255},  // OKLCH(0.64, 0.23, 5)
	{R: 62, G: 196, B: 7, A: 255},    // OKLCH(0.72, 0.23, 140)
	{R: 42, G: 128, B: 226, A: 255},  // OKLCH(0.60, 0.17, 255)
	{R: 149, G: 127, B: 35, A: 255},  // OKLCH(0.60, 0.11, 95)
	{R: 244, G: 148, B: 249, A: 255}, // OKLCH(0.80, 0.17, 325)
	{R: 223, G: 140, B: 111, A: 255}, // OKLCH(0.72, 0.11, 40)
	{R: 219, G: 204, B: 117, A: 255}, // OKLCH(0.84, 0.11, 100)
	{R: 43, G: 169, B: 194, A: 255},  // OKLCH(0.68, 0.11, 215)
	{R: 146, G: 114, B: 161, A: 255}, // OKLCH(0.60, 0.08, 315)
}

// maxDesigned bounds the number of distinct colours Categorical designs;
// past it colours repeat (that many categories cannot be told apart by
// colour anyway).
const maxDesigned = 256

// Categorical returns n colours for n categories, most distinct first: the
// first ones are the committed table; further ones continue the same greedy
// design, each less distinct than the last. Past maxDesigned (256) colours
// the sequence repeats. Categorical(0) returns an empty slice.
func Categorical(n int) []color.NRGBA {
	if n <= 0 {
		return []color.NRGBA{}
	}
	out := make([]color.NRGBA, n)
	if n <= len(categoricalTable) {
		copy(out, categoricalTable[:n])
		return out
	}
	ext := extendedPalette(min(n, maxDesigned))
	for i := range out {
		out[i] = ext[i%len(ext)]
	}
	return out
}

var extended struct {
	sync.Mutex
	colours []color.NRGBA
}

// extendedPalette returns at least min(n, candidates) designed colours,
// designing more only when an earlier call did not already.
func extendedPalette(n int) []color.NRGBA {
	extended.Lock()
	defer extended.Unlock()
	if len(extended.colours) < n {
		design := designCategorical(n)
		if len(design) > len(extended.colours) {
			extended.colours = make([]color.NRGBA, len(design))
			for i, c := range design {
				extended.colours[i] = c.SRGB().NRGBA()
			}
		}
	}
	return extended.colours
}

// candidate is one colour of the design band, seen in normal vision and
// under each simulated deficiency.
type candidate struct {
	lch OKLCH
	lab [4]Lab // normal, then deficiencies in order
}

func newCandidate(c OKLCH) candidate {
	lin := c.OKLab().Linear()
	k := candidate{lch: c}
	k.lab[0] = lin.Lab()
	for i, d := range deficiencies {
		k.lab[i+1] = Simulate(lin, d).Lab()
	}
	return k
}

// separation returns the smallest CIEDE2000 difference between a and b
// over normal vision and the three simulated deficiencies.
func separation(a, b *candidate) float64 {
	m := DeltaE2000(a.lab[0], b.lab[0])
	for v := 1; v < len(a.lab); v++ {
		if d := cvdWeight * DeltaE2000(a.lab[v], b.lab[v]); d < m {
			m = d
		}
	}
	return m
}

// bandCandidates returns the in-gamut colours of the design band, in a fixed
// order (lightness, then chroma, then hue).
func bandCandidates() []candidate {
	var out []candidate
	for li := 0; ; li++ {
		l := bandLightMin + float64(li)*bandLightStep
		if l > bandLightMax+1e-9 {
			break
		}
		for ci := 0; ; ci++ {
			c := bandChromaMin + float64(ci)*bandChromaStp
			if c > bandChromaMax+1e-9 {
				break
			}
			for h := 0.0; h < 360; h += bandHueStep {
				lch := OKLCH{l, c, h}
				if lch.SRGB().InGamut(0) {
					out = append(out, newCandidate(lch))
				}
			}
		}
	}
	return out
}

// designCategorical chooses up to n colours from the design band by greedy
// farthest-point selection (Gonzalez 1985): each step takes the candidate
// whose smallest separation from the colours already chosen, the missing
// grey and the white background is largest (ties to the earlier candidate).
// Separation is the smallest CIEDE2000 difference in normal vision and under
// protanopia, deuteranopia and tritanopia. Greedy selection makes the
// sequence a prefix of any longer one, and puts the most distinct colours
// first. It returns fewer than n colours when the band has fewer candidates.
func designCategorical(n int) []OKLCH {
	cands := bandCandidates()
	if n > len(cands) {
		n = len(cands)
	}
	anchors := []candidate{
		newCandidate(OKLCH{L: missingLightness}),
		newCandidate(paletteBackground.OKLab().LCH()),
	}
	nearest := make([]float64, len(cands))
	for i := range cands {
		nearest[i] = separation(&cands[i], &anchors[0])
		if d := separation(&cands[i], &anchors[1]); d < nearest[i] {
			nearest[i] = d
		}
	}
	taken := make([]bool, len(cands))
	out := make([]OKLCH, 0, n)
	for len(out) < n {
		best := -1
		for i := range cands {
			if !taken[i] && (best < 0 || nearest[i] > nearest[best]) {
				best = i
			}
		}
		taken[best] = true
		out = append(out, cands[best].lch)
		for i := range cands {
			if !taken[i] {
				if d := separation(&cands[i], &cands[best]); d < nearest[i] {
					nearest[i] = d
				}
			}
		}
	}
	return out
}
