package sampledata

import "math"

// Names of the annotation columns of the generated atlas.
const (
	ColumnDay        = "day"
	ColumnLineage    = "lineage"
	ColumnState      = "state"
	ColumnBatch      = "batch"
	ColumnMaturation = "maturation"
)

// Progenitor is the lineage label of the cells that have not yet chosen a
// lineage.
const Progenitor = "progenitor"

// days are the sampled days, the levels of the day column.
var days = [...]string{"day 2", "day 4", "day 6", "day 8", "day 10"}

// batches are the two sequencing runs, the levels of the batch column.
var batches = [...]string{"run 1", "run 2"}

// lineages are the levels of the lineage column: the progenitor pool first,
// then the three lineages that branch from it.
var lineages = [...]string{Progenitor, "veilward", "brinewell", "keelcord"}

// states are the levels of the state column: the progenitor state, then the
// states of each lineage in the order a cell passes through them.
var states = [...]string{
	"seedbed",
	"veil-sprout", "veil-spread", "veil-sheet",
	"brine-bud", "brine-swell", "brine-gland",
	"keel-thread", "keel-cord",
}

// path describes one lineage: its states and where along the maturation axis
// each state's programme peaks.
type path struct {
	states  []int     // indices into states
	centres []float64 // maturation at which each state's programme peaks
}

// paths are the three lineages, in the order of lineages[1:].
var paths = [...]path{
	{states: []int{1, 2, 3}, centres: []float64{0.28, 0.56, 0.86}},
	{states: []int{4, 5, 6}, centres: []float64{0.28, 0.56, 0.86}},
	{states: []int{7, 8}, centres: []float64{0.32, 0.80}},
}

// lineageWeights are the shares of the committed cells in each lineage.
var lineageWeights = []float64{0.42, 0.33, 0.25}

const (
	// seedbedState is the index in states of the progenitor state.
	seedbedState = 0
	// seedbedCentre is the maturation at which the seedbed programme peaks.
	seedbedCentre = 0
	// commitAt is the maturation of the least mature committed cell;
	// progenitors lie in [0, commitAt).
	commitAt = 0.12
	// programmeWidth is the standard deviation, in maturation units, of the
	// bell-shaped activity of a state's programme around its centre.
	programmeWidth = 0.14
	// maturationConcentration is α+β of the Beta law of the maturation of
	// committed cells on a given day.
	maturationConcentration = 7
)

// dayWeights are the relative numbers of cells sampled on each day.
var dayWeights = []float64{0.19, 0.2, 0.21, 0.2, 0.2}

// progenitorShare is, for each day, the chance that a sampled cell is still a
// progenitor: all days have some, later days fewer.
var progenitorShare = []float64{0.55, 0.34, 0.2, 0.12, 0.08}

// dayMaturation is, for each day, the mean of the Beta law from which the
// maturation of committed cells is drawn (before mapping to [commitAt, 1]).
var dayMaturation = []float64{0.15, 0.32, 0.5, 0.66, 0.8}

// activity returns the strength, in [0, 1], of a programme that peaks at
// maturation centre, for a cell at maturation t:
//
//	a(t) = exp(−(t − centre)² / (2 w²)),  w = programmeWidth.
func activity(t, centre float64) float64 {
	d := (t - centre) / programmeWidth
	return math.Exp(-0.5 * d * d)
}

// nearestState returns the index in states of the state of a cell at
// maturation t on path p: the state whose programme is most active, that is,
// whose centre is nearest.
func nearestState(p *path, t float64) int {
	best := 0
	for j, c := range p.centres {
		if math.Abs(t-c) < math.Abs(t-p.centres[best]) {
			best = j
		}
	}
	return p.states[best]
}
