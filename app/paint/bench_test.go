package paint

import (
	"math"
	"math/rand/v2"
	"sort"
	"sync"
	"testing"
	"time"

	"lodestone/compute/sparse"
	"lodestone/internal/cputime"
)

// benchView is a log-normalised view of 200,000 cells × 20,000 genes with
// 1,100 counts per cell (2.2·10^8 counts, the density of a real atlas),
// genes spread at random, library sizes (whole counts) of 800 to 3,800,
// built once.
var benchView = sync.OnceValue(func() *sparse.View {
	const cells, genes, perCell = 200_000, 20_000, 1_100
	rng := rand.New(rand.NewPCG(1, 2))
	b := sparse.NewCountsBuilder(cells, genes, cells*perCell)
	scale := make([]float64, cells)
	for i := range cells {
		// Geometric gaps give about perCell genes, ascending.
		for j := rng.IntN(2 * genes / perCell); j < genes; j += 1 + rng.IntN(2*genes/perCell) {
			b.Add(j, float32(1+rng.IntN(4)))
		}
		b.EndRow()
		scale[i] = 1e4 / float64(800+rng.IntN(3000)) // a library size in counts
	}
	v, err := sparse.NewView(b.Counts(), nil, nil, 0)
	if err == nil {
		v, err = v.WithScale(scale)
	}
	if err != nil {
		panic(err)
	}
	return v
})

// BenchmarkGenePaint200k paints the map by one gene: its column read by a
// search in every cell's row, then the ramp (99th percentile) and colours.
// ns/cell times a million estimates the time at a million cells.
func BenchmarkGenePaint200k(b *testing.B) {
	v := benchView()
	n, g := v.Dims()
	b.ResetTimer()
	start := cputime.Used()
	gene := 0
	for b.Loop() {
		GenePaint("g", GeneValues(v, gene%g))
		gene += 7919
	}
	cputime.Report(b, start)
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(n), "ns/cell")
}

// geneMajor is the alternative to searching every row: a copy of the counts
// by gene (cell index and count of every entry, 5 bytes each), built once.
type geneMajor struct {
	ptr   []int64
	cells []int32
	count []uint8
}

func buildGeneMajor(v *sparse.View) *geneMajor {
	x, rows, _ := v.Source()
	_, g := v.Dims()
	t := &geneMajor{ptr: make([]int64, g+1)}
	for _, c := range x.Col16 {
		t.ptr[c+1]++
	}
	for j := range g {
		t.ptr[j+1] += t.ptr[j]
	}
	next := append([]int64(nil), t.ptr[:g]...)
	t.cells = make([]int32, x.NNZ())
	t.count = make([]uint8, x.NNZ())
	for i, r := range rows {
		for k := x.RowPtr[r]; k < x.RowPtr[r+1]; k++ {
			c := x.Col16[k]
			t.cells[next[c]], t.count[next[c]] = int32(i), x.Small[k]
			next[c]++
		}
	}
	return t
}

// BenchmarkGeneMajorBuild200k builds the copy by gene that painting by a
// gene would need instead of a search in every row.
func BenchmarkGeneMajorBuild200k(b *testing.B) {
	v := benchView()
	b.ResetTimer()
	start := cputime.Used()
	var t *geneMajor
	for b.Loop() {
		t = buildGeneMajor(v)
	}
	cputime.Report(b, start)
	b.ReportMetric(float64(len(t.cells))*5/(1<<20), "MiB")
}

// BenchmarkGeneMajorPaint200k paints by a gene read from that copy.
func BenchmarkGeneMajorPaint200k(b *testing.B) {
	v := benchView()
	t := buildGeneMajor(v)
	n, g := v.Dims()
	scale := v.Scale()
	b.ResetTimer()
	start := cputime.Used()
	gene := 0
	for b.Loop() {
		j := gene % g
		values := make([]float64, n)
		for k := t.ptr[j]; k < t.ptr[j+1]; k++ {
			c := t.cells[k]
			values[c] = float64(sparse.LogNorm(float32(t.count[k]), scale[c]))
		}
		GenePaint("g", values)
		gene += 7919
	}
	cputime.Report(b, start)
}

// bench1MView is a log-normalised view of 1,000,000 cells × 30,000 genes
// with about 1,100 counts per cell (1.1·10⁹ counts, 3.4 GB, the size of
// the atlas of `lodestone bench --sections counts --sizes 1000000`): genes
// stored at random with counts of 1 to 4, at densities that differ from
// one block of 1,000 genes to the next (log-normal, as genes' abundances
// do), and 20 genes spread over the columns (every 1,500th) stored in 95 %
// of the cells with counts of 1 to 40, the most expressed genes of a real
// atlas. Built once (about half a minute on 2 cores).
var bench1MView = sync.OnceValue(func() *sparse.View {
	const cells, genes, perCell, every, block = 1_000_000, 30_000, 1_100, 1_500, 1_000
	rng := rand.New(rand.NewPCG(3, 4))
	// gaps[b]: genes are stored 1 + IntN(gaps[b]) apart in block b, on
	// average (gaps[b]+1)/2, so the block holds 2000/(gaps[b]+1) a cell.
	var gaps [genes / block]int
	var weight [genes / block]float64
	var sum float64
	for b := range weight {
		weight[b] = math.Exp(rng.NormFloat64())
		sum += weight[b]
	}
	for b := range gaps {
		share := perCell * weight[b] / sum // genes a cell stores in block b
		gaps[b] = max(1, int(2*block/share-1+0.5))
	}
	b := sparse.NewCountsBuilder(cells, genes, cells*(perCell+50))
	scale := make([]float64, cells)
	next := func(j int) int { return j + 1 + rng.IntN(gaps[min(j/block, len(gaps)-1)]) }
	for i := range cells {
		j := rng.IntN(gaps[0])
		for h := 0; h < genes; h += every {
			for ; j < h; j = next(j) {
				b.Add(j, float32(1+rng.IntN(4)))
			}
			if rng.IntN(20) != 0 {
				b.Add(h, float32(1+rng.IntN(40)))
			}
			if j == h {
				j = next(j)
			}
		}
		for ; j < genes; j = next(j) {
			b.Add(j, float32(1+rng.IntN(4)))
		}
		b.EndRow()
		scale[i] = 1e4 / float64(800+rng.IntN(3000))
	}
	v, err := sparse.NewView(b.Counts(), nil, nil, 0)
	if err == nil {
		v, err = v.WithScale(scale)
	}
	if err != nil {
		panic(err)
	}
	return v
})

// BenchmarkGenePaint1M paints a million cells by a gene, as the window
// does when a gene is chosen: the gene's column read by a search in every
// cell's row (read-ms), then its ramp and colours (paint-ms), for the gene
// stored in the most cells and a gene of median reach, as `lodestone bench
// --sections counts` picks them (target: ≤ 200 ms for any gene, with the
// map's redraw). It needs about 3.5 GB:
//
//	go test -run '^$' -bench GenePaint1M -benchtime 5x -count 5 ./app/paint
func BenchmarkGenePaint1M(b *testing.B) {
	v := bench1MView()
	x, _, _ := v.Source()
	byReach := make([]int, len(x.Tally.ColRows))
	for j := range byReach {
		byReach[j] = j
	}
	sort.SliceStable(byReach, func(a, c int) bool { return x.Tally.ColRows[byReach[a]] > x.Tally.ColRows[byReach[c]] })
	for _, tc := range []struct {
		name string
		gene int
	}{{"most", byReach[0]}, {"median", byReach[len(byReach)/2]}} {
		b.Run(tc.name, func(b *testing.B) {
			start := cputime.Used()
			var read, paint time.Duration
			for b.Loop() {
				t0 := time.Now()
				values := GeneValues(v, tc.gene)
				t1 := time.Now()
				GenePaint("g", values)
				read += t1.Sub(t0)
				paint += time.Since(t1)
			}
			cputime.Report(b, start)
			b.ReportMetric(float64(read.Microseconds())/1000/float64(b.N), "read-ms")
			b.ReportMetric(float64(paint.Microseconds())/1000/float64(b.N), "paint-ms")
			b.ReportMetric(float64(x.Tally.ColRows[tc.gene])/float64(x.Rows), "share")
		})
	}
}
