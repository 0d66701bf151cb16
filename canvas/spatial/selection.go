package spatial

import "math"

// Mode says how a new lasso combines with the current selection.
type Mode int

// The ways a lasso combines with the current selection.
const (
	Replace   Mode = iota // the lasso alone
	Add                   // current or lasso
	Subtract              // current and not lasso
	Intersect             // current and lasso
)

// Combine sets dst[i] to current[i] combined with lasso[i] by mode and
// returns dst. If dst is nil a new slice is allocated; dst may be current or
// lasso. It returns an error when the lengths differ or mode is unknown.
func Combine(dst, current, lasso []bool, mode Mode) ([]bool, error) {
	if mode < Replace || mode > Intersect {
		return nil, &InputError{Arg: "mode", Index: int(mode), Err: ErrMode}
	}
	if len(current) != len(lasso) {
		return nil, &InputError{Arg: "lasso", Index: -1, Err: ErrLength}
	}
	if dst == nil {
		dst = make([]bool, len(lasso))
	} else if len(dst) != len(lasso) {
		return nil, &InputError{Arg: "dst", Index: -1, Err: ErrLength}
	}
	for i, l := range lasso {
		c := current[i]
		switch mode {
		case Replace:
			dst[i] = l
		case Add:
			dst[i] = c || l
		case Subtract:
			dst[i] = c && !l
		case Intersect:
			dst[i] = c && l
		}
	}
	return dst, nil
}

// Simplify thins a freehand path (x₀, y₀, x₁, y₁, …) by dropping every
// vertex closer than minDist to the last vertex kept, so that a lasso drawn
// with the pointer keeps about one vertex per minDist of its length (one
// pixel, say, in data units: 1/View.Scale). The first vertex is always kept.
// It appends the kept vertices to dst[:0] and returns the result; dst may be
// path itself. It returns an error when path has odd length or a non-finite
// coordinate.
func Simplify(dst, path []float64, minDist float64) ([]float64, error) {
	if len(path)%2 != 0 {
		return nil, &InputError{Arg: "path", Index: -1, Err: ErrOddLength}
	}
	for i, v := range path {
		if !finite(v) {
			return nil, &InputError{Arg: "path", Index: i, Err: ErrPolygon}
		}
	}
	dst = dst[:0]
	if len(path) == 0 {
		return dst, nil
	}
	lx, ly := path[0], path[1]
	dst = append(dst, lx, ly)
	for k := 2; k+1 < len(path); k += 2 {
		x, y := path[k], path[k+1]
		if math.Hypot(x-lx, y-ly) >= minDist {
			dst = append(dst, x, y)
			lx, ly = x, y
		}
	}
	return dst, nil
}
