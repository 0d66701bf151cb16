package embed

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/mat"

	"lodestone/compute/parallel"
	"lodestone/compute/sparse"
)

// SpectralInfo describes how a spectral layout was obtained.
type SpectralInfo struct {
	// Components is the number of connected components of the graph of P,
	// and Sizes their sizes, largest first.
	Components int
	Sizes      []int
	// Eigenvalues are λ2 and λ3, the largest eigenvalues of
	// A = D^{-1/2} P D^{-1/2} after the trivial λ1 = 1, for the largest
	// component.
	Eigenvalues [2]float64
	// Residual is the largest ‖A u − λ u‖ of the two unit eigenvectors u of
	// the largest component.
	Residual float64
	// Products counts the sparse matrix–vector products of the eigensolver,
	// over all components.
	Products int
	// Converged reports that every component's eigenvectors reached the
	// solver's tolerance; when false the layout is the best approximation
	// found within the solver's budget.
	Converged bool
}

// Eigensolver settings.
const (
	lanczosBasis   = 40   // vectors kept in the Krylov basis
	lanczosKeep    = 16   // Ritz vectors kept at each restart
	lanczosTol     = 1e-8 // residual ‖A u − λ u‖ at which a pair has converged
	lanczosMaxProd = 4000 // matrix–vector products allowed per component
	denseBelow     = 400  // components smaller than this are solved densely
	spectralSeed   = 0x5bec_7a1
)

// Spectral returns the Laplacian eigenmap of the graph of P (Belkin & Niyogi
// 2003), the layout the optimiser tends to as the attraction grows without
// bound. With D the diagonal of row sums of P, the two coordinates are
//
//	f_k = D^{-1/2} u_k,   k = 2, 3,
//
// where u_2, u_3 are the eigenvectors of the second and third largest
// eigenvalues of A = D^{-1/2} P D^{-1/2} (the largest, 1, belongs to the
// trivial u_1 ∝ D^{1/2}·1); equivalently f_2, f_3 solve the generalised
// problem L f = μ D f with L = D − P for its smallest non-zero μ = 1 − λ. Each
// f_k is normalised so that f_kᵀ D f_k = 1 and its largest-magnitude entry is
// positive (the first such entry on ties), and the layout is then centred and
// scaled to standard deviation 1 over all coordinates.
//
// The eigenvectors come from a Lanczos iteration with full
// reorthogonalisation and thick restarts, with the trivial vector projected
// out, started from a fixed pseudo-random vector (so the result is
// deterministic for a given thread count); components of fewer than 400 points
// are solved densely with gonum.
//
// A graph with several connected components (found by union–find over the
// entries of P) has eigenvalue 1 once per component. Each component is then
// laid out on its own, scaled to a root-mean-square radius proportional to the
// square root of its size, and the components are placed side by side in
// rows, largest first; components of one or two points sit on a short line.
// SpectralInfo reports the components.
//
// P must be a valid symmetric affinity matrix; the result is undefined for
// an asymmetric one. threads < 1 means all processors. Spectral returns
// ctx.Err() when ctx is cancelled.
func Spectral(ctx context.Context, P *sparse.CSR, threads int) ([]float32, *SpectralInfo, error) {
	if _, err := checkAffinity(P, -1, threads); err != nil {
		return nil, nil, err
	}
	threads = parallel.Threads(threads)
	n := P.Rows
	comp, sizes := components(P)
	order := make([]int, len(sizes)) // components, largest first (ties: lower id)
	for c := range order {
		order[c] = c
	}
	slices.SortStableFunc(order, func(a, b int) int { return sizes[b] - sizes[a] })
	info := &SpectralInfo{Components: len(sizes), Converged: true}
	for _, c := range order {
		info.Sizes = append(info.Sizes, sizes[c])
	}
	members := make([][]int, len(sizes))
	for i, c := range comp {
		members[c] = append(members[c], i)
	}
	y := make([]float64, 2*n)
	boxes := make([][4]float64, len(sizes))
	for rank, c := range order {
		part := make([]float64, 2*len(members[c]))
		switch len(members[c]) {
		case 1:
		case 2:
			part[0], part[2] = -1, 1
		default:
			sub := P
			if len(sizes) > 1 {
				sub = submatrix(P, members[c])
			}
			res, err := eigenmap(ctx, sub, threads)
			if err != nil {
				return nil, nil, err
			}
			copy(part, res.layout)
			info.Products += res.products
			info.Converged = info.Converged && res.converged
			if rank == 0 {
				info.Eigenvalues, info.Residual = res.values, res.residual
			}
		}
		radius := math.Sqrt(float64(len(members[c])) / float64(info.Sizes[0]))
		normalise(part, radius)
		box := [4]float64{math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)}
		for k, i := range members[c] {
			y[2*i], y[2*i+1] = part[2*k], part[2*k+1]
			box[0], box[1] = min(box[0], part[2*k]), max(box[1], part[2*k])
			box[2], box[3] = min(box[2], part[2*k+1]), max(box[3], part[2*k+1])
		}
		boxes[c] = box
	}
	if len(sizes) > 1 {
		pack(y, comp, order, boxes)
	}
	normalise(y, math.Sqrt2)
	out := make([]float32, 2*n)
	for i, v := range y {
		out[i] = float32(v)
	}
	return out, info, nil
}

// SpectralInit returns the spectral layout of P (Spectral) scaled to standard
// deviation 1e-4 over all coordinates: an initial layout for Run (common
// practice), an alternative to InitPCA when only the affinities are at hand.
// Errors are those of Spectral.
func SpectralInit(ctx context.Context, P *sparse.CSR, threads int) ([]float32, error) {
	layout, _, err := Spectral(ctx, P, threads)
	if err != nil {
		return nil, err
	}
	for i := range layout {
		layout[i] *= initialStd
	}
	return layout, nil
}

// normalise centres the interleaved layout y and scales it to the given
// root-mean-square radius; a layout of coincident points is only centred.
func normalise(y []float64, radius float64) {
	n := len(y) / 2
	var mx, my float64
	for i := 0; i < n; i++ {
		mx += y[2*i]
		my += y[2*i+1]
	}
	mx, my = mx/float64(n), my/float64(n)
	var r2 float64
	for i := 0; i < n; i++ {
		y[2*i] -= mx
		y[2*i+1] -= my
		r2 += y[2*i]*y[2*i] + y[2*i+1]*y[2*i+1]
	}
	if r2 == 0 {
		return
	}
	s := radius / math.Sqrt(r2/float64(n))
	for i := range y {
		y[i] *= s
	}
}

// pack places the components' layouts, already centred and sized, side by
// side in rows (shelf packing), in the given order, with a gap of a quarter
// of the largest component's height between them.
func pack(y []float64, comp []int, order []int, boxes [][4]float64) {
	var area, widest float64
	for _, b := range boxes {
		area += (b[1] - b[0]) * (b[3] - b[2])
		widest = max(widest, b[1]-b[0])
	}
	big := boxes[order[0]]
	gap := 0.25 * max(big[3]-big[2], big[1]-big[0])
	rowWidth := max(widest, 1.2*math.Sqrt(area))
	shift := make([][2]float64, len(boxes))
	var x, top, rowHeight float64
	for _, c := range order {
		b := boxes[c]
		w, h := b[1]-b[0], b[3]-b[2]
		if x > 0 && x+w > rowWidth {
			x, top, rowHeight = 0, top-rowHeight-gap, 0
		}
		shift[c] = [2]float64{x - b[0], top - b[3]}
		x += w + gap
		rowHeight = max(rowHeight, h)
	}
	for i, c := range comp {
		y[2*i] += shift[c][0]
		y[2*i+1] += shift[c][1]
	}
}

// components labels the connected components of the graph whose edges are
// the positive entries of P, by union–find with path halving. Components are
// numbered in the order of their smallest member. It returns each point's
// component and the component sizes.
func components(P *sparse.CSR) ([]int, []int) {
	n := P.Rows
	parent := make([]int32, n)
	for i := range parent {
		parent[i] = int32(i)
	}
	find := func(i int32) int32 {
		for parent[i] != i {
			parent[i] = parent[parent[i]]
			i = parent[i]
		}
		return i
	}
	for i := 0; i < n; i++ {
		cols, vals := P.Row(i)
		for k, j := range cols {
			if vals[k] > 0 {
				a, b := find(int32(i)), find(j)
				if a != b {
					if a < b {
						parent[b] = a
					} else {
						parent[a] = b
					}
				}
			}
		}
	}
	label := make([]int, n)
	ids := make(map[int32]int)
	var sizes []int
	for i := 0; i < n; i++ {
		r := find(int32(i))
		c, ok := ids[r]
		if !ok {
			c = len(sizes)
			ids[r] = c
			sizes = append(sizes, 0)
		}
		label[i] = c
		sizes[c]++
	}
	return label, sizes
}

// submatrix returns the rows and columns of P for the given sorted points,
// renumbered 0…len(rows)−1.
func submatrix(P *sparse.CSR, rows []int) *sparse.CSR {
	return P.SelectRows(rows).SelectCols(rows)
}

// eigenResult is the eigenmap of one connected component.
type eigenResult struct {
	layout    []float64 // interleaved f_2, f_3
	values    [2]float64
	residual  float64
	products  int
	converged bool
}

// eigenmap computes the two non-trivial eigenvectors of a connected graph's
// normalised affinity and returns the coordinates D^{-1/2} u.
func eigenmap(ctx context.Context, P *sparse.CSR, threads int) (*eigenResult, error) {
	n := P.Rows
	deg := make([]float64, n)
	invSqrt := make([]float64, n)
	trivial := make([]float64, n)
	var norm float64
	for i := 0; i < n; i++ {
		_, vals := P.Row(i)
		for _, v := range vals {
			deg[i] += float64(v)
		}
		invSqrt[i] = 1 / math.Sqrt(deg[i])
		trivial[i] = math.Sqrt(deg[i])
		norm += deg[i]
	}
	for i := range trivial {
		trivial[i] /= math.Sqrt(norm)
	}
	// A x = D^{-1/2} P D^{-1/2} x, one block of rows per thread.
	apply := func(dst, x []float64) {
		parallel.For(n, threads, func(lo, hi, _ int) {
			for i := lo; i < hi; i++ {
				cols, vals := P.Row(i)
				var s float64
				for k, j := range cols {
					s += float64(vals[k]) * invSqrt[j] * x[j]
				}
				dst[i] = invSqrt[i] * s
			}
		})
	}
	var (
		res *eigenResult
		err error
	)
	if n < denseBelow {
		res = denseEigen(n, apply, trivial)
	} else if res, err = lanczos(ctx, n, apply, trivial, threads); err != nil {
		return nil, err
	}
	for k := 0; k < 2; k++ {
		// f = D^{-1/2} u with uᵀu = 1, so fᵀ D f = 1; sign: largest entry positive.
		var big float64
		for i := 0; i < n; i++ {
			f := res.layout[2*i+k] * invSqrt[i]
			res.layout[2*i+k] = f
			if math.Abs(f) > math.Abs(big) {
				big = f
			}
		}
		if big < 0 {
			for i := 0; i < n; i++ {
				res.layout[2*i+k] = -res.layout[2*i+k]
			}
		}
	}
	return res, nil
}

// denseEigen solves a small component with gonum's symmetric eigensolver,
// on A with the trivial eigenvector deflated (A − u_1 u_1ᵀ), whose top two
// eigenpairs are λ2 and λ3.
func denseEigen(n int, apply func(dst, x []float64), trivial []float64) *eigenResult {
	a := mat.NewSymDense(n, nil)
	e, col := make([]float64, n), make([]float64, n)
	for j := 0; j < n; j++ {
		clear(e)
		e[j] = 1
		apply(col, e)
		for i := 0; i <= j; i++ {
			a.SetSym(i, j, col[i]-trivial[i]*trivial[j])
		}
	}
	var eig mat.EigenSym
	eig.Factorize(a, true)
	vals := eig.Values(nil)
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	res := &eigenResult{layout: make([]float64, 2*n), products: n, converged: true}
	for k := 0; k < 2; k++ {
		c := n - 1 - k // ascending order: the largest are last
		res.values[k] = vals[c]
		for i := 0; i < n; i++ {
			res.layout[2*i+k] = vecs.At(i, c)
		}
		res.residual = max(res.residual, residual(n, apply, res.layout, k, vals[c]))
	}
	return res
}

// residual returns ‖A u − λ u‖ for the k-th interleaved column u of layout.
func residual(n int, apply func(dst, x []float64), layout []float64, k int, lambda float64) float64 {
	u, au := make([]float64, n), make([]float64, n)
	for i := range u {
		u[i] = layout[2*i+k]
	}
	apply(au, u)
	var s float64
	for i := range u {
		d := au[i] - lambda*u[i]
		s += d * d
	}
	return math.Sqrt(s)
}

// lanczos finds the two largest eigenpairs of the symmetric operator apply
// (eigenvalues in [−1, 1]) on the orthogonal complement of the unit vector
// trivial: a Lanczos iteration with full reorthogonalisation (classical
// Gram–Schmidt applied twice) and thick restarts that keep the best
// lanczosKeep Ritz vectors (Wu & Simon 2000). The projected matrix is
// accumulated from the Gram–Schmidt coefficients, so it is VᵀAV whether or
// not a restart has made it an arrowhead.
func lanczos(ctx context.Context, n int, apply func(dst, x []float64), trivial []float64, threads int) (*eigenResult, error) {
	m := min(lanczosBasis, n-1)
	keep := min(lanczosKeep, m-2)
	v := make([][]float64, m+1)
	for j := range v {
		v[j] = make([]float64, n)
	}
	w := make([]float64, n)
	t := mat.NewSymDense(m, nil)
	h := make([]float64, m+1)
	partial := make([][]float64, parallel.Threads(threads))
	for b := range partial {
		partial[b] = make([]float64, m+2)
	}
	// orthogonalise removes from x its components along trivial and v[0:cnt],
	// twice, adding the coefficients along v to h, and returns ‖x‖.
	orthogonalise := func(x []float64, cnt int) float64 {
		clear(h)
		for pass := 0; pass < 2; pass++ {
			for b := range partial {
				clear(partial[b])
			}
			parallel.For(n, threads, func(lo, hi, block int) {
				s := partial[block]
				for i := lo; i < hi; i++ {
					xi := x[i]
					for j := 0; j < cnt; j++ {
						s[j] += v[j][i] * xi
					}
					s[m+1] += trivial[i] * xi
				}
			})
			var coef [lanczosBasis + 2]float64
			for b := range partial {
				for j := 0; j < cnt; j++ {
					coef[j] += partial[b][j]
				}
				coef[m+1] += partial[b][m+1]
			}
			for j := 0; j < cnt; j++ {
				h[j] += coef[j]
			}
			parallel.For(n, threads, func(lo, hi, _ int) {
				for i := lo; i < hi; i++ {
					s := coef[m+1] * trivial[i]
					for j := 0; j < cnt; j++ {
						s += coef[j] * v[j][i]
					}
					x[i] -= s
				}
			})
		}
		return normOf(x, partial, threads)
	}
	rng := rand.New(rand.NewPCG(spectralSeed, uint64(n)))
	randomUnit := func(x []float64, cnt int) {
		for {
			for i := range x {
				x[i] = rng.NormFloat64()
			}
			if nrm := orthogonalise(x, cnt); nrm > 1e-8 {
				for i := range x {
					x[i] /= nrm
				}
				return
			}
		}
	}
	randomUnit(v[0], 0)

	res := &eigenResult{layout: make([]float64, 2*n)}
	var (
		theta []float64
		s     mat.Dense
		eig   mat.EigenSym
		beta  float64
	)
	start := 0
	for {
		for j := start; j < m; j++ {
			if err := ctx.Err(); err != nil {
				return nil, err
			}
			apply(w, v[j])
			res.products++
			beta = orthogonalise(w, j+1)
			for i := 0; i <= j; i++ {
				t.SetSym(i, j, h[i])
			}
			if beta < 1e-10 {
				// An invariant subspace: continue from a fresh direction.
				beta = 0
				randomUnit(v[j+1], j+1)
				continue
			}
			for i := range w {
				v[j+1][i] = w[i] / beta
			}
		}
		eig.Factorize(t, true)
		theta = eig.Values(theta)
		eig.VectorsTo(&s)
		// Ritz pairs in descending order: column m−1−r of s for rank r.
		converged := true
		for r := 0; r < 2; r++ {
			if math.Abs(beta*s.At(m-1, m-1-r)) > lanczosTol {
				converged = false
			}
		}
		if converged || res.products >= lanczosMaxProd {
			res.converged = converged
			break
		}
		// Thick restart: v[0:keep] ← the best Ritz vectors, v[keep] ← v[m].
		restart(v, &s, m, keep, threads)
		copy(v[keep], v[m])
		t = mat.NewSymDense(m, nil)
		for r := 0; r < keep; r++ {
			t.SetSym(r, r, theta[m-1-r])
		}
		start = keep
	}
	// Ritz vectors of the two largest Ritz values.
	for r := 0; r < 2; r++ {
		c := m - 1 - r
		res.values[r] = theta[c]
		parallel.For(n, threads, func(lo, hi, _ int) {
			for i := lo; i < hi; i++ {
				var x float64
				for j := 0; j < m; j++ {
					x += v[j][i] * s.At(j, c)
				}
				res.layout[2*i+r] = x
			}
		})
		res.residual = max(res.residual, residual(n, apply, res.layout, r, theta[c]))
	}
	return res, nil
}

// restart overwrites v[0:keep] with the Ritz vectors V·s[:, m−1−r],
// r = 0…keep−1 (the largest Ritz values first), point by point.
func restart(v [][]float64, s *mat.Dense, m, keep, threads int) {
	n := len(v[0])
	parallel.For(n, threads, func(lo, hi, _ int) {
		var row [lanczosBasis]float64
		for i := lo; i < hi; i++ {
			for j := 0; j < m; j++ {
				row[j] = v[j][i]
			}
			for r := 0; r < keep; r++ {
				c := m - 1 - r
				var x float64
				for j := 0; j < m; j++ {
					x += row[j] * s.At(j, c)
				}
				v[r][i] = x
			}
		}
	})
}

// normOf returns the Euclidean norm of x, summed per block in block order.
func normOf(x []float64, partial [][]float64, threads int) float64 {
	for b := range partial {
		partial[b][0] = 0
	}
	parallel.For(len(x), threads, func(lo, hi, block int) {
		var s float64
		for _, v := range x[lo:hi] {
			s += v * v
		}
		partial[block][0] = s
	})
	var s float64
	for b := range partial {
		s += partial[b][0]
	}
	return math.Sqrt(s)
}

// ScaleLike returns layout turned, reflected and scaled to match reference,
// so that swapping one for the other on screen moves the points as little as
// a rigid motion and a uniform scale allow. Both are centred; the rotation or
// reflection R is the orthogonal Procrustes solution
//
//	R = U Vᵀ,   U Σ Vᵀ = SVD(Σ_i r_i l_iᵀ),
//
// over the centred points l_i of layout and r_i of reference, and the result
// R l_i is scaled to the root-mean-square radius of the reference. The
// reference's centre is kept, so the result lands where the reference was.
// layout and reference must have the same even length and finite values;
// otherwise ScaleLike returns a *LayoutError. layout is not modified.
func ScaleLike(layout, reference []float32) ([]float32, error) {
	if len(layout)%2 != 0 || len(layout) == 0 {
		return nil, &LayoutError{What: "layout", Point: -1, Err: ErrShape}
	}
	if len(reference) != len(layout) {
		return nil, &LayoutError{What: "reference layout", Point: -1, Err: ErrShape}
	}
	l, err := toFloat64(layout, "layout")
	if err != nil {
		return nil, err
	}
	r, err := toFloat64(reference, "reference layout")
	if err != nil {
		return nil, err
	}
	n := len(l) / 2
	var rc [2]float64
	for i := 0; i < n; i++ {
		rc[0] += r[2*i]
		rc[1] += r[2*i+1]
	}
	rc[0], rc[1] = rc[0]/float64(n), rc[1]/float64(n)
	normalise(l, 1)
	var rr float64
	cross := mat.NewDense(2, 2, nil)
	for i := 0; i < n; i++ {
		rx, ry := r[2*i]-rc[0], r[2*i+1]-rc[1]
		rr += rx*rx + ry*ry
		cross.Set(0, 0, cross.At(0, 0)+rx*l[2*i])
		cross.Set(0, 1, cross.At(0, 1)+rx*l[2*i+1])
		cross.Set(1, 0, cross.At(1, 0)+ry*l[2*i])
		cross.Set(1, 1, cross.At(1, 1)+ry*l[2*i+1])
	}
	rot := mat.NewDense(2, 2, []float64{1, 0, 0, 1})
	var svd mat.SVD
	if svd.Factorize(cross, mat.SVDFull) {
		var u, v mat.Dense
		svd.UTo(&u)
		svd.VTo(&v)
		rot.Mul(&u, v.T())
	}
	scale := math.Sqrt(rr / float64(n))
	out := make([]float32, len(layout))
	for i := 0; i < n; i++ {
		x, y := l[2*i], l[2*i+1]
		out[2*i] = float32(rc[0] + scale*(rot.At(0, 0)*x+rot.At(0, 1)*y))
		out[2*i+1] = float32(rc[1] + scale*(rot.At(1, 0)*x+rot.At(1, 1)*y))
	}
	return out, nil
}
