package cluster

// modularity evaluates the modularity Q with resolution gamma (the formula
// at Leiden) for communities comm numbered 0…k−1.
func (g *graph) modularity(comm []int32, k int, gamma float64) float64 {
	inner := make([]float64, k) // Σ_{i,j ∈ c} A_ij
	tot := make([]float64, k)   // Σ_{i ∈ c} k_i
	for v := 0; v < g.n; v++ {
		c := comm[v]
		tot[c] += g.deg[v]
		inner[c] += g.self[v]
		for p := g.start[v]; p < g.start[v+1]; p++ {
			if comm[g.adj[p]] == c {
				inner[c] += g.w[p]
			}
		}
	}
	var q float64
	for c := range inner {
		q += inner[c] - gamma*tot[c]*tot[c]/g.total
	}
	return q / g.total
}
