package integrate

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"lodestone/compute/atlas"
	"lodestone/compute/neighbors"
)

// planted is a generated mixture of cell types seen in several batches,
// each batch shifted by its own offset in component space.
type planted struct {
	z     *atlas.Dense
	clean *atlas.Dense // z without the batch offsets

	types, batch []int32
	nt, nb       int
}

// newPlanted draws n cells in d dimensions: nt types with centres
// μ_t ~ N(0, (4/√d)² I) (about 5.7 apart), nb batches with offsets
// δ_b ~ N(0, (shift/√d)² I) (about shift·√2 apart) plus a type-specific part
// ε_tb ~ N(0, (shift/(3√d))² I), and noise N(0, noise² I):
//
//	z_i = μ_t + δ_b + ε_tb + noise·ξ_i.
func newPlanted(n, d, nt, nb int, shift, noise float64, seed uint64) *planted {
	rng := rand.New(rand.NewPCG(seed, 7))
	norm := func(s float64) []float64 {
		v := make([]float64, d)
		for j := range v {
			v[j] = s * rng.NormFloat64()
		}
		return v
	}
	sd := 1 / math.Sqrt(float64(d))
	mu := make([][]float64, nt)
	for t := range mu {
		mu[t] = norm(4 * sd)
	}
	delta := make([][]float64, nb)
	for b := range delta {
		delta[b] = norm(shift * sd)
	}
	eps := make([][]float64, nt*nb)
	for e := range eps {
		eps[e] = norm(shift * sd / 3)
	}
	p := &planted{z: atlas.NewDense(n, d), clean: atlas.NewDense(n, d), types: make([]int32, n), batch: make([]int32, n), nt: nt, nb: nb}
	for i := 0; i < n; i++ {
		t, b := rng.IntN(nt), rng.IntN(nb)
		p.types[i], p.batch[i] = int32(t), int32(b)
		row, clean := p.z.Row(i), p.clean.Row(i)
		for j := range row {
			x := mu[t][j] + noise*rng.NormFloat64()
			clean[j] = float32(x)
			row[j] = float32(x + delta[b][j] + eps[t*nb+b][j])
		}
	}
	return p
}

func (p *planted) covariate() Covariate {
	levels := make([]string, p.nb)
	for b := range levels {
		levels[b] = string(rune('A' + b))
	}
	return Covariate{Name: "batch", Levels: levels, Codes: p.batch, Theta: DefaultTheta, Lambda: DefaultLambda}
}

// displacement returns the mean, over types and batches, of the distance
// between the mean of the type's cells in the batch and the mean of all the
// type's cells.
func displacement(z *atlas.Dense, types, batch []int32, nt, nb int) float64 {
	d := z.Cols
	sum := make([]float64, nt*nb*d)
	cnt := make([]float64, nt*nb)
	all := make([]float64, nt*d)
	allCnt := make([]float64, nt)
	for i := 0; i < z.Rows; i++ {
		t, b := int(types[i]), int(batch[i])
		for j, v := range z.Row(i) {
			sum[(t*nb+b)*d+j] += float64(v)
			all[t*d+j] += float64(v)
		}
		cnt[t*nb+b]++
		allCnt[t]++
	}
	var tot float64
	var groups int
	for t := 0; t < nt; t++ {
		for b := 0; b < nb; b++ {
			if cnt[t*nb+b] == 0 {
				continue
			}
			var s float64
			for j := 0; j < d; j++ {
				x := sum[(t*nb+b)*d+j]/cnt[t*nb+b] - all[t*d+j]/allCnt[t]
				s += x * x
			}
			tot += math.Sqrt(s)
			groups++
		}
	}
	return tot / float64(groups)
}

// knnAccuracy returns the share of cells whose type is the majority type of
// their k nearest neighbours (exact, Euclidean; ties to the nearest).
func knnAccuracy(t *testing.T, z *atlas.Dense, types []int32, k int) float64 {
	g, err := neighbors.Exact(context.Background(), z, neighbors.Options{K: k})
	if err != nil {
		t.Fatal(err)
	}
	right := 0
	votes := map[int32]int{}
	for i := 0; i < z.Rows; i++ {
		ids, _ := g.Neighbors(i)
		clear(votes)
		best, bv := int32(-1), 0
		for _, j := range ids {
			votes[types[j]]++
		}
		for _, j := range ids {
			if v := votes[types[j]]; v > bv {
				best, bv = types[j], v
			}
		}
		if best == types[i] {
			right++
		}
	}
	return float64(right) / float64(z.Rows)
}

// TestPlantedOffsetsAreRemoved integrates a mixture of 8 cell types seen in
// 3 batches, each batch shifted by its own offset (batches further apart
// than types, so that the cells group by batch first): afterwards the mean
// displacement of a type's cells in one batch from the type's mean is at
// most 10 % of what it was, and the type of a cell is still the majority
// type of its 10 nearest neighbours for at least 95 % of the cells. The
// displacement of the data without offsets (sampling noise of the means) is
// the floor no correction can go below; the test's sizes keep it near 3 %.
func TestPlantedOffsetsAreRemoved(t *testing.T) {
	p := newPlanted(12000, 30, 8, 3, 6, 0.8, 1)
	before := displacement(p.z, p.types, p.batch, p.nt, p.nb)
	floor := displacement(p.clean, p.types, p.batch, p.nt, p.nb)
	res, err := Harmony(context.Background(), p.z, []Covariate{p.covariate()}, Options{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	after := displacement(res.Corrected, p.types, p.batch, p.nt, p.nb)
	accBefore, acc := knnAccuracy(t, p.z, p.types, 10), knnAccuracy(t, res.Corrected, p.types, 10)
	t.Logf("displacement %.3f → %.3f (%.1f %%; without offsets %.3f, %.1f %%); 10-NN type accuracy %.4f → %.4f; %d rounds, converged %v",
		before, after, 100*after/before, floor, 100*floor/before, accBefore, acc, res.Rounds, res.Converged)
	if after > 0.1*before {
		t.Errorf("mean batch displacement %.3f after integration, %.1f %% of %.3f before (want ≤ 10 %%)", after, 100*after/before, before)
	}
	if acc < 0.95 {
		t.Errorf("10-NN type accuracy %.4f after integration (want ≥ 0.95)", acc)
	}
	// Before, the cells' nearest neighbours are of their own batch.
	if mix := otherBatchShare(t, p.z, p.batch, 10); mix > 0.05 {
		t.Errorf("planted batches are not apart: %.3f of neighbours from another batch", mix)
	}
	if mix := otherBatchShare(t, res.Corrected, p.batch, 10); mix < 0.5 {
		t.Errorf("after integration only %.3f of neighbours come from another batch (chance: 2/3)", mix)
	}
}

// TestTwoBatchColumns integrates cells with two batch columns whose
// offsets add up (4 donors and 2 protocols): the displacement of each
// column's levels falls to at most 10 %.
func TestTwoBatchColumns(t *testing.T) {
	const n, d = 12000, 30
	donors := newPlanted(n, d, 8, 4, 5, 0.8, 21)
	rng := rand.New(rand.NewPCG(22, 23))
	protocol := make([]int32, n)
	shift := make([]float64, d)
	for j := range shift {
		shift[j] = 5 / math.Sqrt(d) * rng.NormFloat64()
	}
	z := atlas.NewDense(n, d)
	copy(z.Data, donors.z.Data)
	for i := range protocol {
		protocol[i] = int32(rng.IntN(2))
		if protocol[i] == 1 {
			for j, v := range shift {
				z.Data[i*d+j] += float32(v)
			}
		}
	}
	covs := []Covariate{donors.covariate(),
		{Name: "protocol", Levels: []string{"fresh", "frozen"}, Codes: protocol, Theta: DefaultTheta, Lambda: DefaultLambda}}
	res, err := Harmony(context.Background(), z, covs, Options{Seed: 2})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name  string
		codes []int32
		nb    int
	}{{"donor", donors.batch, 4}, {"protocol", protocol, 2}} {
		before := displacement(z, donors.types, c.codes, donors.nt, c.nb)
		after := displacement(res.Corrected, donors.types, c.codes, donors.nt, c.nb)
		floor := displacement(donors.clean, donors.types, c.codes, donors.nt, c.nb)
		t.Logf("%s: displacement %.3f → %.3f (%.1f %%; without offsets %.1f %%)", c.name, before, after, 100*after/before, 100*floor/before)
		if after > 0.1*before {
			t.Errorf("%s: displacement %.3f after, %.1f %% of %.3f before (want ≤ 10 %%)", c.name, after, 100*after/before, before)
		}
	}
	if acc := knnAccuracy(t, res.Corrected, donors.types, 10); acc < 0.95 {
		t.Errorf("10-NN type accuracy %.4f (want ≥ 0.95)", acc)
	}
}

// otherBatchShare returns the share of the k nearest neighbours of all
// cells that belong to another batch.
func otherBatchShare(t *testing.T, z *atlas.Dense, batch []int32, k int) float64 {
	g, err := neighbors.Exact(context.Background(), z, neighbors.Options{K: k})
	if err != nil {
		t.Fatal(err)
	}
	other := 0
	for i := 0; i < z.Rows; i++ {
		ids, _ := g.Neighbors(i)
		for _, j := range ids {
			if batch[j] != batch[i] {
				other++
			}
		}
	}
	return float64(other) / float64(z.Rows*k)
}
