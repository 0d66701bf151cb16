package raster

import (
	"math"
	"sort"
)

// subdiv is the number of sub-pixel positions per axis for which a disc is
// pre-rendered: a point's centre is placed to within 1/(2·subdiv) pixel.
const (
	subdivShift = 2
	subdiv      = 1 << subdivShift
)

// alphaOne is the fixed-point alpha of full coverage at full opacity.
const alphaOne = 256

// stamp is a disc pre-rendered at one sub-pixel offset: a block of w × h
// pixels whose top-left pixel lies (dx, dy) pixels from the pixel holding the
// point's centre, and in it the pixels of non-zero alpha (coverage ×
// opacity, 1 … alphaOne), row by row.
type stamp struct {
	dx, dy int
	w, h   int
	pixels []stampPixel
	offs   []int    // offs[k]: offset of pixels[k] from the block's top-left, in rows of stampSet.stride pixels
	alphas []uint32 // alphas[k] = pixels[k].a, kept beside offs for the drawing loop
}

// stampPixel is one pixel of a stamp: column i and row j in the block.
type stampPixel struct {
	i, j int
	a    uint32
}

// stampSet holds the stamps of one radius and opacity for every sub-pixel
// offset, indexed by sy·subdiv + sx.
type stampSet struct {
	radius, opacity float64
	stamps          [subdiv * subdiv]stamp
	maxH            int
	stride          int // the row length, in pixels, offs are computed for
}

// setStride computes every stamp's pixel offsets for rows of stride pixels.
func (set *stampSet) setStride(stride int) {
	if set.stride == stride {
		return
	}
	set.stride = stride
	for s := range set.stamps {
		st := &set.stamps[s]
		for k, p := range st.pixels {
			st.offs[k] = p.j*stride + p.i
		}
	}
}

// newStampSet pre-renders a disc of the given radius (device pixels) and
// opacity at each sub-pixel offset. The alpha of a pixel is its exact
// coverage by the disc times opacity, rounded to 1/alphaOne:
//
//	alpha(i, j) = round(alphaOne · opacity · area(disc ∩ [i, i+1] × [j, j+1]))
//
// with the disc centred at ((sx + ½)/subdiv, (sy + ½)/subdiv) in the centre
// pixel. Rows and columns of zero alpha are trimmed. Offsets into images
// are computed by setStride.
func newStampSet(radius, opacity float64) *stampSet {
	set := &stampSet{radius: radius, opacity: opacity}
	for sy := 0; sy < subdiv; sy++ {
		for sx := 0; sx < subdiv; sx++ {
			cx := (float64(sx) + 0.5) / subdiv
			cy := (float64(sy) + 0.5) / subdiv
			x0, x1 := int(math.Floor(cx-radius)), int(math.Ceil(cx+radius))
			y0, y1 := int(math.Floor(cy-radius)), int(math.Ceil(cy+radius))
			w, h := x1-x0, y1-y0
			full := make([]uint32, w*h)
			for j := 0; j < h; j++ {
				for i := 0; i < w; i++ {
					px, py := float64(x0+i)-cx, float64(y0+j)-cy
					a := discRectArea(radius, px, px+1, py, py+1)
					full[j*w+i] = uint32(math.Round(alphaOne * opacity * math.Min(a, 1)))
				}
			}
			st := trimStamp(full, w, h)
			st.dx += x0
			st.dy += y0
			set.stamps[sy*subdiv+sx] = st
			set.maxH = max(set.maxH, st.h)
		}
	}
	return set
}

// trimStamp returns the stamp of the smallest block of a (w × h, row-major)
// holding all its non-zero values, with the block's offset from the top-left
// corner of a.
func trimStamp(a []uint32, w, h int) stamp {
	i0, i1, j0, j1 := w, -1, h, -1
	for j := 0; j < h; j++ {
		for i := 0; i < w; i++ {
			if a[j*w+i] != 0 {
				i0, i1 = min(i0, i), max(i1, i)
				j0, j1 = min(j0, j), max(j1, j)
			}
		}
	}
	if i1 < 0 {
		return stamp{}
	}
	st := stamp{dx: i0, dy: j0, w: i1 - i0 + 1, h: j1 - j0 + 1}
	for j := j0; j <= j1; j++ {
		for i := i0; i <= i1; i++ {
			if v := a[j*w+i]; v != 0 {
				st.pixels = append(st.pixels, stampPixel{i: i - i0, j: j - j0, a: v})
				st.alphas = append(st.alphas, v)
			}
		}
	}
	st.offs = make([]int, len(st.pixels))
	return st
}

// discRectArea returns the exact area of the intersection of the disc of
// radius r centred at the origin with the rectangle [x0, x1] × [y0, y1]:
//
//	A = ∫_{x0}^{x1} [clamp(s(x), y0, y1) − clamp(−s(x), y0, y1)] dx,  s(x) = √(r² − x²)
//
// integrated piecewise in closed form, with ∫ s dx = (x·s(x) + r²·asin(x/r))/2.
func discRectArea(r, x0, x1, y0, y1 float64) float64 {
	x0, x1 = math.Max(x0, -r), math.Min(x1, r)
	if !(x1 > x0) || !(y1 > y0) {
		return 0
	}
	return clampedArcIntegral(r, x0, x1, y0, y1, 1) - clampedArcIntegral(r, x0, x1, y0, y1, -1)
}

// clampedArcIntegral returns ∫_{x0}^{x1} clamp(sign·s(x), y0, y1) dx for
// −r ≤ x0 < x1 ≤ r. The integrand is constant or ±s(x) between the points
// where s(x) = |y0| or |y1|, so the interval is split there.
func clampedArcIntegral(r, x0, x1, y0, y1, sign float64) float64 {
	cuts := []float64{x0, x1}
	for _, c := range [2]float64{y0, y1} {
		if sign*c > 0 && math.Abs(c) < r {
			xb := math.Sqrt(r*r - c*c)
			for _, x := range [2]float64{-xb, xb} {
				if x > x0 && x < x1 {
					cuts = append(cuts, x)
				}
			}
		}
	}
	sort.Float64s(cuts)
	s := func(x float64) float64 { return math.Sqrt(math.Max(0, r*r-x*x)) }
	prim := func(x float64) float64 { return (x*s(x) + r*r*math.Asin(math.Max(-1, math.Min(1, x/r)))) / 2 }
	var total float64
	for k := 0; k+1 < len(cuts); k++ {
		a, b := cuts[k], cuts[k+1]
		switch v := sign * s((a+b)/2); {
		case v <= y0:
			total += y0 * (b - a)
		case v >= y1:
			total += y1 * (b - a)
		default:
			total += sign * (prim(b) - prim(a))
		}
	}
	return total
}
