package spatial

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
