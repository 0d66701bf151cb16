package embed

import "math"

// The kernel's tail. The similarity of two map points at distance d is
//
//	w(d) = (1 + d²/α)^(−α),
//
// Student's t-distribution with 2α degrees of freedom, up to scale ("Heavy-
// tailed kernels reveal a finer cluster structure in t-SNE visualisations",
// ECML PKDD 2019). α = 1 is the Cauchy kernel 1/(1 + d²) of t-SNE; α < 1
// gives heavier tails, which let groups that t-SNE shows as one split into
// their finer parts; α → ∞ tends to the Gaussian kernel exp(−d²) of SNE,
// which pulls groups together. Near d = 0 every α gives w ≈ 1 − d², so the
// tail changes the map's large scale, not its smallest.
//
// With u = 1/(1 + d²/α), so that w = u^α, the gradient of the objective of
// the package documentation becomes
//
//	∂C_ρ/∂y_i = 4 [ ρ Σ_j p_ij u_ij (y_i − y_j) − (1/Z) Σ_j w_ij u_ij (y_i − y_j) ],   Z = Σ_{k≠l} w_kl,
//
// the attraction keeps the form of t-SNE's with u in place of w, and the
// repulsion's kernel is w·u = u^(α+1).
const (
	// MinTail and MaxTail bound Params.Tail. Below 0.1 the similarity
	// hardly falls with distance (w(10) = 0.68 at α = 0.05) and the map
	// loses its groups; above 20 the kernel is near its Gaussian limit
	// (w(1) = 0.377 at α = 20, against e⁻¹ = 0.368).
	MinTail = 0.1
	MaxTail = 20
)

// tailKernel evaluates the similarity kernel for one α.
type tailKernel struct {
	alpha float64 // α
	scale float64 // 1/α
}

func newTail(alpha float64) tailKernel { return tailKernel{alpha: alpha, scale: 1 / alpha} }

// cauchy reports whether the kernel is t-SNE's, α = 1, for which every
// routine keeps the arithmetic it had before the tail existed.
func (k tailKernel) cauchy() bool { return k.alpha == 1 }

// at returns K_x, K_y and K_w at offset (dx, dy): dx·w·u, dy·w·u and w,
// the terms of the repulsive sums and of Z.
func (k tailKernel) at(dx, dy float64) (float64, float64, float64) {
	if k.cauchy() {
		w := 1 / (1 + dx*dx + dy*dy)
		return dx * w * w, dy * w * w, w
	}
	q := 1 + (dx*dx+dy*dy)*k.scale
	u := 1 / q
	w := math.Exp(-k.alpha * math.Log(q))
	wu := w * u
	return dx * wu, dy * wu, w
}

// logW returns −log w at squared distance d2: α·log(1 + d2/α).
func (k tailKernel) logW(d2 float64) float64 {
	if k.cauchy() {
		return math.Log(1 + d2)
	}
	return k.alpha * math.Log1p(d2*k.scale)
}
