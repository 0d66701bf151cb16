package sampledata

import (
	"math"
	"slices"
)

// Stream purposes: each kind of random draw has its own family of streams.
const (
	purposeCells uint64 = iota + 1
	purposeGenes
	purposeNames
)

// Gene composition at the default size; other sizes scale these counts.
const (
	defaultGenes          = 2000
	mitoGenes             = 12   // genes named with MitoPrefix
	housekeepingGeneShare = 0.03 // share of genes with high, steady expression
	programmeMin          = 30   // smallest state programme at the default size
	programmeMax          = 60   // largest state programme at the default size
	rampGenes             = 25   // genes rising along each lineage, default size
	maturationGenes       = 20   // genes rising with maturation in every lineage
	handlingGenes         = 40   // genes raised in run 2 only (its handling response), default size
	minProgrammeGenes     = 4    // floor of a state programme at small sizes
	minRampGenes          = 2    // floor of a ramp at small sizes
)

// Gene parameters.
const (
	foldMin, foldMax         = 1.5, 3.0 // range of a state programme gene's log fold change
	rampFoldMin, rampFoldMax = 1.0, 2.0 // range of a ramp gene's log fold change
	captureFactorSD          = 0.25     // sd of the log of run 2's per-gene capture factor
	handlingFoldMin          = 1.5      // range of a handling gene's log fold change in run 2
	handlingFoldMax          = 2.5
	housekeepingCountShare   = 0.50      // share of nuclear counts in housekeeping genes when programmes are off
	minSize, maxSize         = 0.25, 100 // range of the negative binomial size r
	backgroundSD             = 2.8       // sd of the log abundance of background genes
	backgroundMaxZ           = 1.3       // the normal behind it is truncated above here
	programmeLogBase         = 0.5       // log abundance of programme genes relative to the background median
	programmeLogSD           = 0.7       // and its sd
)

// Programme slots: one per state, then one ramp per lineage, then the ramp
// shared by all lineages.
const (
	slotRamp0      = len(states)
	slotMaturation = slotRamp0 + len(paths)
	slotCount      = slotMaturation + 1
)

// geneModel holds everything about the genes that does not change from cell
// to cell.
type geneModel struct {
	genes   int
	nuclear int // genes [0, nuclear) are nuclear, [nuclear, genes) mitochondrial-like

	symbols []string
	size    []float64 // negative binomial size r of each gene
	slot    []int8    // programme slot of each nuclear gene, −1 when none
	logFold []float64 // log fold change of each gene at full programme activity

	abundance [2][]float64 // per run, relative abundance of each nuclear gene
	total     [2]float64   // per run, sum of abundance
	factor    []float64    // per gene, run 2's multiplicative factor
	mitoShare []float64    // per mitochondrial-like gene, its share of their counts

	active [len(paths)][]int32 // per fate (path), genes whose programme can be on

	programmes   [slotCount][]int // genes of each slot, ascending
	housekeeping []int
	handling     []int // genes raised in run 2 only, ascending
}

// scaled returns n scaled from the default gene count to genes, at least lo.
func scaled(n float64, genes, lo int) int {
	return max(lo, int(math.Round(n*float64(genes)/defaultGenes)))
}

// newGeneModel draws the gene parameters from the gene stream of seed.
func newGeneModel(seed int64, genes int) *geneModel {
	m := &geneModel{genes: genes, nuclear: genes - mitoGenes}
	s := newStream(seed, purposeGenes, 0)
	m.symbols = geneSymbols(m.nuclear, mitoGenes)

	// Roles: a random order of the nuclear genes is cut into housekeeping
	// genes, state programmes, lineage ramps, the shared ramp and background.
	order := make([]int, m.nuclear)
	for i := range order {
		order[i] = i
	}
	for i := len(order) - 1; i > 0; i-- {
		j := int(s.uniform() * float64(i+1))
		order[i], order[j] = order[j], order[i]
	}
	m.slot = make([]int8, genes)
	for i := range m.slot {
		m.slot[i] = -1
	}
	next := 0
	take := func(n int) []int {
		g := slices.Clone(order[next : next+n])
		next += n
		slices.Sort(g)
		return g
	}
	m.housekeeping = take(scaled(housekeepingGeneShare*defaultGenes, genes, 1))
	for st := range states {
		n := programmeMin + s.uniform()*(programmeMax-programmeMin)
		m.programmes[st] = take(scaled(n, genes, minProgrammeGenes))
	}
	for l := range paths {
		m.programmes[slotRamp0+l] = take(scaled(rampGenes, genes, minRampGenes))
	}
	m.programmes[slotMaturation] = take(scaled(maturationGenes, genes, minRampGenes))
	m.handling = take(scaled(handlingGenes, genes, minRampGenes))

	// Log abundances: background genes spread widely around a low median,
	// programme genes low until their programme switches on, housekeeping
	// genes high and narrow. Each group is scaled to its share.
	logAb := make([]float64, m.nuclear)
	for g := range logAb {
		z := s.normal()
		for z > backgroundMaxZ {
			z = s.normal()
		}
		logAb[g] = backgroundSD * z
	}
	m.logFold = make([]float64, genes)
	for sl := range m.programmes {
		lo, hi := foldMin, foldMax
		if sl >= slotRamp0 {
			lo, hi = rampFoldMin, rampFoldMax
		}
		for _, g := range m.programmes[sl] {
			m.slot[g] = int8(sl)
			m.logFold[g] = lo + s.uniform()*(hi-lo)
			logAb[g] = programmeLogBase + programmeLogSD*s.normal()
		}
	}
	// Handling genes are expressed like programme genes, in every state.
	for _, g := range m.handling {
		logAb[g] = programmeLogBase + programmeLogSD*s.normal()
	}
	var other float64
	isHK := make([]bool, m.nuclear)
	for _, g := range m.housekeeping {
		isHK[g] = true
	}
	for g, v := range logAb {
		if !isHK[g] {
			other += math.Exp(v)
		}
	}
	hk := make([]float64, len(m.housekeeping))
	var hkSum float64
	for i := range hk {
		hk[i] = math.Exp(0.5 * s.normal())
		hkSum += hk[i]
	}
	// Housekeeping genes take housekeepingCountShare of the nuclear counts of a
	// cell whose programmes are all off.
	hkScale := housekeepingCountShare / (1 - housekeepingCountShare) * other / hkSum
	for i, g := range m.housekeeping {
		logAb[g] = math.Log(hk[i] * hkScale)
	}

	// Dispersion: housekeeping genes are close to Poisson, the rest
	// overdispersed, each gene with its own size, rounded to a quarter
	// (which makes the sampler faster and changes nothing visible).
	m.size = make([]float64, genes)
	for g := range m.size {
		mean := math.Log(1.5)
		if g < m.nuclear && isHK[g] || g >= m.nuclear {
			mean = math.Log(10)
		}
		r := min(maxSize, max(minSize, math.Exp(mean+0.6*s.normal())))
		m.size[g] = math.Round(4*r) / 4
	}

	// Run 2 multiplies each nuclear gene by a log-normal capture factor,
	// and its handling genes by a fold change on top: the batch effect.
	m.factor = make([]float64, genes)
	for g := range m.factor {
		m.factor[g] = 1
		if g < m.nuclear {
			m.factor[g] = math.Exp(captureFactorSD * s.normal())
		}
	}
	for _, g := range m.handling {
		m.factor[g] *= math.Exp(handlingFoldMin + s.uniform()*(handlingFoldMax-handlingFoldMin))
	}
	for b := range m.abundance {
		m.abundance[b] = make([]float64, m.nuclear)
		for g, v := range logAb {
			a := math.Exp(v)
			if b == 1 {
				a *= m.factor[g]
			}
			m.abundance[b][g] = a
			m.total[b] += a
		}
	}

	m.mitoShare = make([]float64, mitoGenes)
	var ms float64
	for j := range m.mitoShare {
		m.mitoShare[j] = math.Exp(0.8 * s.normal())
		ms += m.mitoShare[j]
	}
	for j := range m.mitoShare {
		m.mitoShare[j] /= ms
	}

	// Genes whose programme can be on in the cells of each fate: the
	// seedbed, the shared ramp and the path's states and ramp.
	for l, p := range paths {
		sl := append([]int{seedbedState, slotMaturation, slotRamp0 + l}, p.states...)
		var gs []int32
		for _, x := range sl {
			for _, g := range m.programmes[x] {
				gs = append(gs, int32(g))
			}
		}
		slices.Sort(gs)
		m.active[l] = gs
	}
	return m
}
