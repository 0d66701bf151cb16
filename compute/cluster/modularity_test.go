package cluster

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"lodestone/compute/sparse"
	"lodestone/internal/pyref"
)

// modularityByDefinition evaluates
//
//	Q = 1/(2m) Σ_ij [A_ij − γ k_i k_j / (2m)] δ(c_i, c_j)
//
// (Newman & Girvan 2004) as the plain double sum over all pairs of nodes: the
// exact slow computation the fast one is checked against.
func modularityByDefinition(a *sparse.CSR, labels []int32, gamma float64) float64 {
	n := a.Rows
	k := make([]float64, n)
	var total float64
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			k[i] += float64(a.At(i, j))
		}
		total += k[i]
	}
	var q float64
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			if labels[i] == labels[j] {
				q += float64(a.At(i, j)) - gamma*k[i]*k[j]/total
			}
		}
	}
	return q / total
}

// randomLabels returns labels for n nodes drawn uniformly from k values,
// spread over a sparse range to check that labels need not be consecutive.
func randomLabels(n, k int, rng *rand.Rand) []int32 {
	l := make([]int32, n)
	for i := range l {
		l[i] = int32(rng.IntN(k) * 7)
	}
	return l
}

// randomWeighted returns a random symmetric graph on n nodes with edge
// probability p, weights in (0, 3] and a few diagonal entries.
func randomWeighted(n int, p float64, rng *rand.Rand) *sparse.CSR {
	var edges [][3]float64
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			if (i == j && rng.Float64() < 0.2) || (i != j && rng.Float64() < p) {
				edges = append(edges, [3]float64{float64(i), float64(j), math.Ceil(rng.Float64()*12) / 4})
			}
		}
	}
	return fromEdges(n, edges)
}

func TestModularityByDefinition(t *testing.T) {
	// Reference: the double sum of Newman & Girvan (2004), evaluated pair by
	// pair, on random weighted graphs with diagonal entries.
	rng := rand.New(rand.NewPCG(1, 2))
	for trial := 0; trial < 20; trial++ {
		a := randomWeighted(5+rng.IntN(30), 0.2, rng)
		labels := randomLabels(a.Rows, 1+rng.IntN(5), rng)
		for _, gamma := range []float64{0, 0.5, 1, 2.5} {
			got, err := Modularity(a, labels, gamma)
			if err != nil {
				t.Fatal(err)
			}
			want := modularityByDefinition(a, labels, gamma)
			if math.Abs(got-want) > 1e-12 {
				t.Errorf("trial %d, γ=%v: Q = %.15g, double sum gives %.15g", trial, gamma, got, want)
			}
		}
	}
}

// networkxModularity computes networkx.algorithms.community.modularity for
// each case; the graph is rebuilt from the CSR's upper triangle, a diagonal
// entry A_ii becoming a self loop of weight A_ii/2 (networkx counts a loop
// twice in a degree, once in the edge sum).
const networkxModularity = `
import json, sys
import networkx as nx
from networkx.algorithms.community import modularity
out = []
for case in json.load(sys.stdin):
    g = nx.Graph()
    g.add_nodes_from(range(case["n"]))
    for i, j, w in case["edges"]:
        g.add_edge(i, j, weight=w / 2 if i == j else w)
    comms = {}
    for v, c in enumerate(case["labels"]):
        comms.setdefault(c, set()).add(v)
    out.append(modularity(g, list(comms.values()), weight="weight", resolution=case["gamma"]))
print(json.dumps(out))
`

type modularityCase struct {
	N      int          `json:"n"`
	Edges  [][3]float64 `json:"edges"`
	Labels []int32      `json:"labels"`
	Gamma  float64      `json:"gamma"`
}

func upperEdges(a *sparse.CSR) [][3]float64 {
	var e [][3]float64
	for i := 0; i < a.Rows; i++ {
		cols, vals := a.Row(i)
		for p, j := range cols {
			if int(j) >= i {
				e = append(e, [3]float64{float64(i), float64(j), float64(vals[p])})
			}
		}
	}
	return e
}

func TestModularityNetworkx(t *testing.T) {
	// Reference: networkx 2.8's community.modularity on the same graphs and
	// partitions: Zachary's karate club (weighted and unweighted) split into
	// one community, singletons, the two recorded factions and random
	// partitions; and random weighted graphs with self loops.
	rng := rand.New(rand.NewPCG(3, 4))
	var cases []modularityCase
	var graphs []*sparse.CSR
	add := func(a *sparse.CSR, labels []int32, gamma float64) {
		cases = append(cases, modularityCase{a.Rows, upperEdges(a), labels, gamma})
		graphs = append(graphs, a)
	}
	one := make([]int32, 34)
	alone := make([]int32, 34)
	for v := range alone {
		alone[v] = int32(v)
	}
	for _, weighted := range []bool{false, true} {
		a := karate(weighted)
		for _, gamma := range []float64{1, 0.5, 2} {
			add(a, one, gamma)
			add(a, alone, gamma)
			add(a, karateSplit, gamma)
			for k := 2; k <= 6; k++ {
				add(a, randomLabels(34, k, rng), gamma)
			}
		}
	}
	for trial := 0; trial < 5; trial++ {
		a := randomWeighted(20, 0.25, rng)
		add(a, randomLabels(20, 3, rng), 1)
	}
	var want []float64
	pyref.JSON(t, "networkx", networkxModularity, cases, &want)
	for c, tc := range cases {
		got, err := Modularity(graphs[c], tc.Labels, tc.Gamma)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(got-want[c]) > 1e-12 {
			t.Errorf("case %d (n=%d, γ=%v): Q = %.15g, networkx gives %.15g", c, tc.N, tc.Gamma, got, want[c])
		}
	}
}

func TestKarateEdgesMatchNetworkx(t *testing.T) {
	// Reference: networkx 2.8's karate_club_graph(), the source of the copy
	// in karateEdges and karateSplit.
	var got struct {
		Edges [][3]int `json:"edges"`
		Clubs []string `json:"clubs"`
	}
	pyref.JSON(t, "networkx", `
import json, networkx as nx
g = nx.karate_club_graph()
print(json.dumps({"edges": [[u, v, d["weight"]] for u, v, d in g.edges(data=True)],
                  "clubs": [g.nodes[v]["club"] for v in g]}))
`, nil, &got)
	if len(got.Edges) != len(karateEdges) {
		t.Fatalf("networkx has %d edges, the copy %d", len(got.Edges), len(karateEdges))
	}
	for e := range karateEdges {
		if got.Edges[e] != karateEdges[e] {
			t.Errorf("edge %d: networkx %v, copy %v", e, got.Edges[e], karateEdges[e])
		}
	}
	for v, club := range got.Clubs {
		if (club == got.Clubs[0]) != (karateSplit[v] == 0) {
			t.Errorf("member %d: faction differs from networkx", v)
		}
	}
}

func TestModularityErrors(t *testing.T) {
	k := karate(false)
	asym := karate(false)
	asym.Val[0] = 2
	neg := fromEdges(3, [][3]float64{{0, 1, -1}, {1, 2, 1}})
	nan := fromEdges(3, [][3]float64{{0, 1, math.NaN()}, {1, 2, 1}})
	empty := &sparse.CSR{Rows: 3, Cols: 3, RowPtr: make([]int64, 4)}
	rect := &sparse.CSR{Rows: 2, Cols: 3, RowPtr: make([]int64, 3)}
	broken := &sparse.CSR{Rows: 2, Cols: 2, RowPtr: []int64{0, 1, 1}}
	for _, tc := range []struct {
		name   string
		a      *sparse.CSR
		labels []int32
		want   error
		node   int
	}{
		{"asymmetric", asym, one(34), ErrAsymmetric, 0},
		{"negative weight", neg, one(3), ErrWeight, 0},
		{"NaN weight", nan, one(3), ErrWeight, 0},
		{"no edges", empty, one(3), ErrNoEdges, -1},
		{"not square", rect, one(2), ErrNotSquare, -1},
		{"malformed", broken, one(2), ErrMalformed, -1},
		{"nil", nil, one(2), ErrMalformed, -1},
		{"short labels", k, one(33), ErrLabels, -1},
		{"negative label", k, append(one(33), -1), ErrLabels, 33},
	} {
		_, err := Modularity(tc.a, tc.labels, 1)
		var ge *GraphError
		if !errors.Is(err, tc.want) || !errors.As(err, &ge) || ge.Node != tc.node {
			t.Errorf("%s: got %v, want %v at node %d", tc.name, err, tc.want, tc.node)
		}
	}
}

// one returns n zero labels.
func one(n int) []int32 { return make([]int32, n) }
