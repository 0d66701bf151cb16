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

// Apply returns whether a point is selected after a lasso of this mode:
// current says whether it was selected, lasso whether the lasso holds it.
// An unknown mode leaves the selection as it was.
func (m Mode) Apply(current, lasso bool) bool {
	switch m {
	case Replace:
		return lasso
	case Add:
		return current || lasso
	case Subtract:
		return current && !lasso
	case Intersect:
		return current && lasso
	}
	return current
}
