// Package integrate corrects the principal components of cells for the
// sample (batch) they came from, by Harmony (Korsunsky, Millard, Fan,
// Slowikowski, Zhang, Wei, Baglaenko, Brenner, Loh & Raychaudhuri 2019,
// "Fast, sensitive and accurate integration of single-cell data with
// Harmony", Nature Methods 16:1289–1296, Methods and Supplementary Note).
//
// # The model
//
// Let Z (d × N) hold the principal components of N cells, Ẑ the corrected
// components and Z̃ the corrected components scaled to unit length (cosine
// normalisation). Each cell i belongs to one level of each batch column c
// (a donor, a protocol…); φ_i stacks the one-hot indicators of its levels,
// and π_l = N_l / N is the share of the cells in level l. Harmony
// alternates two steps.
//
// Clustering. K centroids Y_k (unit vectors) and soft assignments R_ki
// (R_ki > 0, Σ_k R_ki = 1) minimise
//
//	J(R, Y) = Σ_{i,k} R_ki ‖Z̃_i − Y_k‖²                         (1) k-means error
//	        + σ Σ_{i,k} R_ki log R_ki                            (2) entropy
//	        + σ Σ_c θ_c Σ_{i,k} R_ki Σ_{l∈c} φ_li log((O_kl + 1)/(E_kl + 1))   (3) diversity
//
// with the observed and expected numbers of cells of level l in cluster k
//
//	O_kl = Σ_i R_ki φ_li,   E_kl = π_l Σ_i R_ki.
//
// For unit vectors ‖Z̃_i − Y_k‖² = 2(1 − Y_k·Z̃_i). The centroid step
// (exact for fixed R under ‖Y_k‖ = 1) is
//
//	Y_k = Σ_i R_ki Z̃_i / ‖Σ_i R_ki Z̃_i‖                          (4)
//
// and the assignment step, with O and E held fixed, is
//
//	R_ki ∝ exp(−‖Z̃_i − Y_k‖²/σ) · Π_c ((E_kl_c(i) + 1)/(O_kl_c(i) + 1))^θ_c      (5)
//
// Because O and E depend on R, (5) is applied to one block of cells at a
// time (a fixed share of the cells, in a random order): the block's cells are
// taken out of O and E, reassigned, and put back. The diversity penalty θ
// makes a cluster that holds more of a level than expected less attractive to
// that level's cells, so clusters come to mix the batches.
//
// With O and E held fixed, (5) minimises J over a block exactly only in the
// limit of many cells per cluster and level (the derivative of (3) then
// tends to its logarithm); with θ = 0 it is exact. With a few dozen cells per
// cluster the objective can rise a little within a round (measured: up to
// 2e-4 of its value with 30 cells per cluster and θ = 2); with several
// hundred, as at the default K from about 30,000 cells up, it does not
// beyond rounding (the tests check both).
//
// Correction. In each cluster a linear model with an intercept explains
// the components by the batch levels (a mixture of experts weighted by R):
// with Φ*_i = (1, φ_i),
//
//	W_k = (Σ_i R_ki Φ*_i Φ*_iᵀ + Λ)⁻¹ Σ_i R_ki Φ*_i Z_iᵀ,   Λ = diag(0, λ_c …)   (6)
//
// (a ridge regression whose penalty λ_c shrinks the batch terms of column c,
// not the intercept), and every cell loses the batch terms of the clusters it
// belongs to:
//
//	Ẑ_i = Z_i − Σ_k R_ki W_k[batch rows]ᵀ φ_i                      (7)
//
// The intercept (the cluster's centre) is kept, so the biology a cluster
// stands for stays. Clustering and correction alternate until the
// objective J changes by less than a tolerance between rounds.
//
// # What the correction can and cannot do
//
// Harmony removes differences that the batch levels explain within each
// cluster. It cannot tell a technical shift from a real difference between
// samples: a state that exists in one donor only is, to the model, a cluster
// in which that donor is over-represented, and the diversity penalty pushes
// its cells towards clusters shared with other donors. Check a finding
// with and without integration.
//
// # Computation
//
// Cells are stored in a random order (seeded) so that the blocks of (5) are
// contiguous; within aligned chunks of chunkCells cells they are grouped by
// their combination of levels, so the sums of (6) and the corrections of (7)
// are matrix products over runs of cells. The products (distances to the
// centroids, the centroid sums, the sums of (6) and the corrections) run
// through one 6×16 single-precision kernel (AVX2 and FMA where available)
// with float64 accumulation between chunks. Work is split into fixed blocks
// per thread and reduced in block order, so the result is the same for a
// given seed and thread count.
package integrate
