package markers

import (
	"cmp"
	"math"
	"slices"

	"lodestone/compute/sparse"
)

// dictionary numbers the log-normalised values of the small counts of every
// cell in the order of the values: a cell's counts 1 … counts, in a cell
// whose factor is that of class k, have the values V[ID[k·counts+c−1]].
// Cells share a factor when they share a library size, so an atlas of
// counts has few classes (its distinct library sizes), and the values of
// most of its entries are in the dictionary: a comparison sorts their
// numbers, which are shorter than the values' bits, and reads exp(v)−1 from
// E instead of computing it.
type dictionary struct {
	counts  int       // the counts 1 … counts of each class are numbered
	classOf []int32   // per cell: its class
	id      []int32   // per class and count: the number of its value
	v       []float32 // per number: the value, ascending
	e       []float64 // per number: math.Expm1 of the value
	bits    uint      // bits of the largest number
}

// dictionaryEntries bounds the classes × counts of a dictionary.
const dictionaryEntries = 1 << 23

// newDictionary returns the dictionary of the factors scale (one per cell),
// or nil when there are none.
func newDictionary(scale []float64) *dictionary {
	if len(scale) == 0 {
		return nil
	}
	classes := slices.Clone(scale)
	slices.Sort(classes)
	classes = slices.Compact(classes)
	d := &dictionary{counts: max(4, min(64, dictionaryEntries/len(classes)))}
	d.classOf = make([]int32, len(scale))
	for c, s := range scale {
		k, _ := slices.BinarySearch(classes, s)
		d.classOf[c] = int32(k)
	}
	type entry struct {
		v   float32
		pos int32
	}
	all := make([]entry, 0, len(classes)*d.counts)
	for _, s := range classes {
		for c := 1; c <= d.counts; c++ {
			all = append(all, entry{sparse.LogNorm(float32(c), s), int32(len(all))})
		}
	}
	slices.SortFunc(all, func(a, b entry) int { return cmp.Compare(a.v, b.v) })
	d.id = make([]int32, len(all))
	for i, en := range all {
		if i == 0 || en.v != all[i-1].v {
			d.v = append(d.v, en.v)
			d.e = append(d.e, math.Expm1(float64(en.v)))
		}
		d.id[en.pos] = int32(len(d.v) - 1)
	}
	for 1<<d.bits < len(d.v) {
		d.bits++
	}
	return d
}
