package sampledata

import (
	"context"
	"errors"
	"math"
	"reflect"
	"runtime"
	"slices"
	"sort"
	"strings"
	"sync"
	"testing"

	"lodestone/compute/atlas"
	"lodestone/compute/sparse"
)

// The medium atlas has the default genes and enough cells for every state to
// hold several hundred; most tests share it.
var (
	mediumOnce  sync.Once
	mediumData  *atlas.Dataset
	mediumTruth *Truth
	mediumErr   error
)

func medium(t *testing.T) (*atlas.Dataset, *Truth) {
	t.Helper()
	mediumOnce.Do(func() {
		mediumData, mediumTruth, mediumErr = Generate(context.Background(), Options{Cells: 8000, Genes: 2000, Seed: 7})
	})
	if mediumErr != nil {
		t.Fatalf("Generate: %v", mediumErr)
	}
	return mediumData, mediumTruth
}

// cellSums returns each cell's total count, its count in the given genes
// and its number of detected genes.
func cellSums(d *atlas.Dataset, genes []int) (total, part []float64, detected []int) {
	in := make([]bool, d.Features())
	for _, g := range genes {
		in[g] = true
	}
	n := d.Cells()
	total, part, detected = make([]float64, n), make([]float64, n), make([]int, n)
	for i := range n {
		cols, vals := csr(d).Row(i)
		for k, g := range cols {
			total[i] += float64(vals[k])
			if in[g] {
				part[i] += float64(vals[k])
			}
		}
		detected[i] = len(cols)
	}
	return total, part, detected
}

// healthy returns a mask of the cells not in truth.LowQuality.
func healthy(n int, truth *Truth) []bool {
	ok := make([]bool, n)
	for i := range ok {
		ok[i] = true
	}
	for _, i := range truth.LowQuality {
		ok[i] = false
	}
	return ok
}

// sampleStats returns the mean, standard deviation, skewness and excess
// kurtosis of x.
func sampleStats(x []float64) (mean, sd, skew, kurt float64) {
	n := float64(len(x))
	for _, v := range x {
		mean += v
	}
	mean /= n
	var m2, m3, m4 float64
	for _, v := range x {
		d := v - mean
		m2 += d * d
		m3 += d * d * d
		m4 += d * d * d * d
	}
	m2, m3, m4 = m2/n, m3/n, m4/n
	return mean, math.Sqrt(m2), m3 / math.Pow(m2, 1.5), m4/(m2*m2) - 3
}

func TestDeterministic(t *testing.T) {
	opt := Options{Cells: 1500, Genes: 400, Seed: 3}
	ref, refTruth, err := Generate(context.Background(), opt)
	if err != nil {
		t.Fatal(err)
	}
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for _, run := range []struct{ procs, threads int }{{1, 0}, {4, 0}, {2, 1}, {2, 3}, {3, 7}} {
		runtime.GOMAXPROCS(run.procs)
		o := opt
		o.Threads = run.threads
		d, truth, err := Generate(context.Background(), o)
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(d, ref) || !reflect.DeepEqual(truth, refTruth) {
			t.Errorf("GOMAXPROCS=%d Threads=%d: atlas differs from the first run", run.procs, run.threads)
		}
	}
}

func TestPrefixOfCells(t *testing.T) {
	// Every cell has its own stream, so a smaller atlas is the start of a
	// larger one with the same genes and seed.
	small, _, err := Generate(context.Background(), Options{Cells: 300, Genes: 300, Seed: 5})
	if err != nil {
		t.Fatal(err)
	}
	large, _, err := Generate(context.Background(), Options{Cells: 900, Genes: 300, Seed: 5})
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(small.Counts, large.Counts.SelectRowsCols(seq(300), seq(300))) {
		t.Error("the first 300 cells of a 900-cell atlas differ from the 300-cell atlas")
	}
	other, _, err := Generate(context.Background(), Options{Cells: 300, Genes: 300, Seed: 6})
	if err != nil {
		t.Fatal(err)
	}
	if reflect.DeepEqual(small.Counts, other.Counts) {
		t.Error("seeds 5 and 6 gave the same counts")
	}
}

func seq(n int) []int {
	s := make([]int, n)
	for i := range s {
		s[i] = i
	}
	return s
}

func TestShapeAndAnnotations(t *testing.T) {
	d, truth := medium(t)
	n, g := d.Cells(), d.Features()
	if n != 8000 || g != 2000 || d.Counts.Rows != n || d.Counts.Cols != g {
		t.Fatalf("shape %d×%d (matrix %d×%d), want 8000×2000", n, g, d.Counts.Rows, d.Counts.Cols)
	}
	if err := d.Counts.Validate(); err != nil {
		t.Fatal(err)
	}
	if d.Table != nil || len(d.GeneSymbols) != g || len(d.GeneIDs) != g {
		t.Fatalf("table %v, %d symbols, %d IDs", d.Table != nil, len(d.GeneSymbols), len(d.GeneIDs))
	}
	for name, ids := range map[string][]string{"cell IDs": d.CellIDs, "gene IDs": d.GeneIDs, "gene symbols": d.GeneSymbols} {
		if len(uniq(ids)) != len(ids) {
			t.Errorf("%s are not unique", name)
		}
	}
	want := []struct {
		name   string
		kind   atlas.Kind
		levels int
	}{
		{ColumnDay, atlas.Categorical, 5}, {ColumnLineage, atlas.Categorical, 4},
		{ColumnState, atlas.Categorical, 9}, {ColumnBatch, atlas.Categorical, 2},
		{ColumnMaturation, atlas.Continuous, 0},
	}
	if len(d.Annotations) != len(want) {
		t.Fatalf("%d annotation columns, want %d", len(d.Annotations), len(want))
	}
	for k, w := range want {
		c := &d.Annotations[k]
		if c.Name != w.name || c.Kind != w.kind || len(c.Levels) != w.levels || c.Len() != n || c.MissingCount() != 0 {
			t.Errorf("column %d: %q %v, %d levels, %d values, %d missing; want %q %v, %d levels, %d values",
				k, c.Name, c.Kind, len(c.Levels), c.Len(), c.MissingCount(), w.name, w.kind, w.levels, n)
			continue
		}
		for _, count := range c.Counts() {
			if w.kind == atlas.Categorical && count == 0 {
				t.Errorf("column %q: a level has no cells: %v", c.Name, c.Counts())
			}
		}
		for _, code := range c.Codes {
			if code < 0 || int(code) >= len(c.Levels) {
				t.Fatalf("column %q: code %d out of range", c.Name, code)
			}
		}
	}
	for i, v := range d.Column(ColumnMaturation).Values {
		if !(v >= 0 && v <= 1) {
			t.Fatalf("cell %d: maturation %v outside [0, 1]", i, v)
		}
	}
	if len(truth.LibrarySize) != n || len(truth.MitoFraction) != n || len(truth.LogFold) != g ||
		len(truth.Dispersion) != g || len(truth.BatchFactor) != g {
		t.Error("truth arrays have the wrong lengths")
	}
}

func uniq(s []string) map[string]bool {
	m := map[string]bool{}
	for _, x := range s {
		m[x] = true
	}
	return m
}

func TestCountsAreCounts(t *testing.T) {
	d, _ := medium(t)
	if d.Counts.IsReal() {
		t.Fatal("counts held as real values")
	}
	for k, v := range csr(d).Val {
		if !(v >= 1) || v != float32(math.Trunc(float64(v))) {
			t.Fatalf("stored value %d is %v, want a positive whole number", k, v)
		}
	}
	if nnz := d.Counts.NNZ(); nnz == 0 || nnz == int64(d.Cells()*d.Features()) {
		t.Fatalf("%d stored entries", nnz)
	}
}

func TestLibrarySizes(t *testing.T) {
	d, truth := medium(t)
	total, _, _ := cellSums(d, nil)
	ok := healthy(d.Cells(), truth)
	batch := d.Column(ColumnBatch).Codes
	for b := range 2 {
		var logL, logT, resid []float64
		for i := range ok {
			if ok[i] && int(batch[i]) == b {
				logL = append(logL, math.Log(truth.LibrarySize[i]))
				logT = append(logT, math.Log(total[i]))
				resid = append(resid, total[i]-truth.LibrarySize[i])
			}
		}
		n := float64(len(logL))
		// The drawn library sizes are log-normal: log L is normal with the
		// generator's mean and sd, so (standard results for a normal sample)
		// the sample mean has standard error s/√n, the sample sd s/√(2n),
		// the skewness √(6/n) and the excess kurtosis √(24/n).
		mean, sd, skew, kurt := sampleStats(logL)
		s := truth.LibraryLogSD
		if math.Abs(mean-truth.LibraryLogMean[b]) > 5*s/math.Sqrt(n) || math.Abs(sd-s) > 5*s/math.Sqrt(2*n) ||
			math.Abs(skew) > 5*math.Sqrt(6/n) || math.Abs(kurt) > 5*math.Sqrt(24/n) {
			t.Errorf("run %d: log library size mean %.4f sd %.4f skew %.3f kurtosis %.3f; want %.4f, %.4f, 0, 0",
				b+1, mean, sd, skew, kurt, truth.LibraryLogMean[b], s)
		}
		// The counts of a cell add up to L on average: the gene means sum
		// to L, so T − L has mean zero given L.
		rm, rsd, _, _ := sampleStats(resid)
		if math.Abs(rm) > 5*rsd/math.Sqrt(n) {
			t.Errorf("run %d: total counts exceed library sizes by %.2f on average (± %.2f)", b+1, rm, 5*rsd/math.Sqrt(n))
		}
		// The realised totals are therefore roughly log-normal too: log T is
		// log L plus independent count noise of sd σ_n (measured as the sd
		// of log T − log L), so its sd is √(s² + σ_n²), its mean is shifted
		// by Jensen's inequality by about −σ_n²/2 (allowed: σ_n²), and its
		// skewness stays near zero; standard errors as above.
		var noise []float64
		for k := range logL {
			noise = append(noise, logT[k]-logL[k])
		}
		_, nsd, _, _ := sampleStats(noise)
		tMean, tSD, tSkew, _ := sampleStats(logT)
		if math.Abs(tMean-truth.LibraryLogMean[b]) > 5*math.Hypot(s, nsd)/math.Sqrt(n)+nsd*nsd ||
			math.Abs(tSD-math.Hypot(s, nsd)) > 5*math.Hypot(s, nsd)/math.Sqrt(2*n) ||
			math.Abs(tSkew) > 5*math.Sqrt(6/n) {
			t.Errorf("run %d: log total counts mean %.4f sd %.4f skew %.3f; want %.4f, %.4f, 0 (count noise sd %.3f)",
				b+1, tMean, tSD, tSkew, truth.LibraryLogMean[b], math.Hypot(s, nsd), nsd)
		}
	}
	if truth.LibraryLogMean[0] == truth.LibraryLogMean[1] {
		t.Error("the two runs have the same library sizes")
	}
}

func TestMitochondrialGenes(t *testing.T) {
	d, truth := medium(t)
	var mito []int
	for g, s := range d.GeneSymbols {
		if strings.HasPrefix(s, MitoPrefix) {
			mito = append(mito, g)
		}
	}
	if len(mito) != mitoGenes || !slices.Equal(mito, truth.Mito) {
		t.Fatalf("genes named %q: %v; truth says %v", MitoPrefix, mito, truth.Mito)
	}
	total, mt, _ := cellSums(d, truth.Mito)
	ok := healthy(d.Cells(), truth)
	// Healthy cells: the mitochondrial-like genes' expected count is L·f,
	// so MT − L·f has mean zero.
	var resid, share, f, lqShare []float64
	for i := range ok {
		if ok[i] {
			resid = append(resid, mt[i]-truth.LibrarySize[i]*truth.MitoFraction[i])
			share = append(share, mt[i]/total[i])
			f = append(f, math.Log(truth.MitoFraction[i]))
		} else {
			lqShare = append(lqShare, mt[i]/total[i])
		}
	}
	n := float64(len(resid))
	rm, rsd, _, _ := sampleStats(resid)
	if math.Abs(rm) > 5*rsd/math.Sqrt(n) {
		t.Errorf("mitochondrial-like counts exceed L·f by %.3f on average (± %.3f)", rm, 5*rsd/math.Sqrt(n))
	}
	// log f is normal with the generator's parameters (standard errors as in
	// TestLibrarySizes).
	fm, fsd, _, _ := sampleStats(f)
	if math.Abs(fm-truth.MitoLogMean) > 5*truth.MitoLogSD/math.Sqrt(n) || math.Abs(fsd-truth.MitoLogSD) > 5*truth.MitoLogSD/math.Sqrt(2*n) {
		t.Errorf("log mitochondrial share mean %.4f sd %.4f, want %.4f, %.4f", fm, fsd, truth.MitoLogMean, truth.MitoLogSD)
	}
	// "A few percent" in healthy cells, several times more in damaged ones.
	hm, lm := median(share), median(lqShare)
	if hm < 0.01 || hm > 0.06 || lm < 4*hm {
		t.Errorf("median mitochondrial-like share %.3f in healthy cells, %.3f in low-quality cells", hm, lm)
	}
}

func median(x []float64) float64 {
	s := slices.Clone(x)
	sort.Float64s(s)
	return s[len(s)/2]
}

func TestQualityRule(t *testing.T) {
	d, truth := medium(t)
	_, _, detected := cellSums(d, nil)
	ok := healthy(d.Cells(), truth)
	var below int
	for i, h := range ok {
		switch {
		case !h && detected[i] >= QCMinGenes:
			t.Errorf("low-quality cell %d has %d detected genes", i, detected[i])
		case h && detected[i] < QCMinGenes:
			below++
		}
	}
	// Design: the rule removes the damaged cells and at most 0.5 % of the
	// healthy ones (the low tail of the library sizes).
	if healthyN := d.Cells() - len(truth.LowQuality); float64(below) > 0.005*float64(healthyN) {
		t.Errorf("%d of %d healthy cells have fewer than %d detected genes", below, healthyN, QCMinGenes)
	}
	// The number of damaged cells is binomial(n, lowQualityShare).
	n, p := float64(d.Cells()), lowQualityShare
	if got := float64(len(truth.LowQuality)); math.Abs(got-n*p) > 5*math.Sqrt(n*p*(1-p)) {
		t.Errorf("%v low-quality cells, want about %.0f", got, n*p)
	}
}

func TestProgrammes(t *testing.T) {
	d, truth := medium(t)
	if len(truth.StateProgrammes) != len(states) {
		t.Fatalf("%d state programmes, want %d", len(truth.StateProgrammes), len(states))
	}
	owner := map[int]string{}
	claim := func(what string, genes []int) {
		for _, g := range genes {
			if prev, ok := owner[g]; ok {
				t.Errorf("gene %d is in both %s and %s", g, prev, what)
			}
			owner[g] = what
		}
	}
	for name, genes := range truth.StateProgrammes {
		// At the default gene count a programme has 30 to 60 genes.
		if len(genes) < programmeMin || len(genes) > programmeMax {
			t.Errorf("state %s: programme of %d genes", name, len(genes))
		}
		claim(name, genes)
	}
	for name, genes := range truth.LineageProgrammes {
		claim(name, genes)
	}
	claim("maturation", truth.MaturationGenes)
	claim("housekeeping", truth.Housekeeping)
	claim("mitochondrial", truth.Mito)

	// Normalised expression: each cell's counts divided by its total.
	total, _, _ := cellSums(d, nil)
	state := d.Column(ColumnState)
	n, g := d.Cells(), d.Features()
	sum := make([][]float64, len(state.Levels)) // per state, per gene
	for s := range sum {
		sum[s] = make([]float64, g)
	}
	all := make([]float64, g)
	for i := range n {
		cols, vals := csr(d).Row(i)
		s := state.Codes[i]
		for k, c := range cols {
			x := float64(vals[k]) / total[i]
			sum[s][c] += x
			all[c] += x
		}
	}
	counts := state.Counts()
	for s, name := range state.Levels {
		for _, gene := range truth.StateProgrammes[name] {
			in := sum[s][gene] / float64(counts[s])
			out := (all[gene] - sum[s][gene]) / float64(n-counts[s])
			if !(in > out) {
				t.Errorf("state %s: programme gene %d (%s) has mean %.3g in the state and %.3g elsewhere",
					name, gene, d.GeneSymbols[gene], in, out)
			}
		}
	}
}

func TestLineageProgrammesRise(t *testing.T) {
	d, truth := medium(t)
	total, _, _ := cellSums(d, nil)
	lineage := d.Column(ColumnLineage)
	mat := d.Column(ColumnMaturation).Values
	for l, name := range lineage.Levels[1:] {
		genes := truth.LineageProgrammes[name]
		in := map[int]bool{}
		for _, g := range genes {
			in[g] = true
		}
		// Mean normalised expression of the lineage programme in the
		// lineage's less and more mature halves (split at 0.5).
		var early, late, nEarly, nLate float64
		for i := range d.Cells() {
			if int(lineage.Codes[i]) != l+1 {
				continue
			}
			cols, vals := csr(d).Row(i)
			var x float64
			for k, c := range cols {
				if in[int(c)] {
					x += float64(vals[k]) / total[i]
				}
			}
			if mat[i] < 0.5 {
				early, nEarly = early+x, nEarly+1
			} else {
				late, nLate = late+x, nLate+1
			}
		}
		if !(late/nLate > early/nEarly) {
			t.Errorf("lineage %s: programme mean %.4g in mature cells, %.4g in young ones", name, late/nLate, early/nEarly)
		}
	}
}

func TestTimeCourse(t *testing.T) {
	d, _ := medium(t)
	day, lineage, state := d.Column(ColumnDay), d.Column(ColumnLineage), d.Column(ColumnState)
	mat := d.Column(ColumnMaturation).Values
	nd := len(day.Levels)
	prog, cells, matSum, committed := make([]float64, nd), make([]float64, nd), make([]float64, nd), make([]float64, nd)
	for i := range d.Cells() {
		k := day.Codes[i]
		cells[k]++
		if lineage.Codes[i] == 0 {
			prog[k]++
			if mat[i] >= commitAt || state.Codes[i] != seedbedState {
				t.Fatalf("progenitor %d: maturation %v, state %s", i, mat[i], state.Levels[state.Codes[i]])
			}
			continue
		}
		matSum[k] += mat[i]
		committed[k]++
		p := &paths[lineage.Codes[i]-1]
		if mat[i] < commitAt || !slices.Contains(p.states, int(state.Codes[i])) {
			t.Fatalf("cell %d of lineage %s: maturation %v, state %s", i, lineage.Levels[lineage.Codes[i]], mat[i], state.Levels[state.Codes[i]])
		}
	}
	for k := 1; k < nd; k++ {
		if !(prog[k]/cells[k] < prog[k-1]/cells[k-1]) {
			t.Errorf("progenitor share does not fall from %s (%.3f) to %s (%.3f)", day.Levels[k-1], prog[k-1]/cells[k-1], day.Levels[k], prog[k]/cells[k])
		}
		if !(matSum[k]/committed[k] > matSum[k-1]/committed[k-1]) {
			t.Errorf("mean maturation does not rise from %s to %s", day.Levels[k-1], day.Levels[k])
		}
	}
	for k := range nd {
		if prog[k] == 0 {
			t.Errorf("no progenitors on %s", day.Levels[k])
		}
	}
}

func TestBatchEffect(t *testing.T) {
	d, truth := medium(t)
	// The capture factor of run 2 is log-normal: its log has sd
	// captureFactorSD, whose sample sd has standard error s/√(2n). The
	// handling genes get a fold change in [handlingFoldMin, handlingFoldMax)
	// on top.
	handling := map[int]bool{}
	for _, g := range truth.HandlingGenes {
		handling[g] = true
	}
	if want := scaled(handlingGenes, d.Features(), minRampGenes); len(handling) != want {
		t.Errorf("%d handling genes, want %d", len(handling), want)
	}
	var logF, logH []float64
	for _, g := range seq(d.Features() - mitoGenes) {
		if handling[g] {
			logH = append(logH, math.Log(truth.BatchFactor[g]))
			continue
		}
		logF = append(logF, math.Log(truth.BatchFactor[g]))
	}
	_, sd, _, _ := sampleStats(logF)
	if n := float64(len(logF)); math.Abs(sd-captureFactorSD) > 5*captureFactorSD/math.Sqrt(2*n) {
		t.Errorf("log capture factor sd %.4f, want %.4f", sd, captureFactorSD)
	}
	// Each handling gene's log factor is its fold plus a capture log
	// factor: at least handlingFoldMin − 5 capture sds.
	for i, v := range logH {
		if v < handlingFoldMin-5*captureFactorSD || v > handlingFoldMax+5*captureFactorSD {
			t.Errorf("handling gene %d: log factor %.3f outside [%.2f, %.2f] ± 5 sd", truth.HandlingGenes[i], v, handlingFoldMin, handlingFoldMax)
		}
	}
	// Runs are independent of states, so for well-expressed genes the log
	// ratio of the runs' mean normalised expression follows log factor (up
	// to a constant): their correlation is high.
	total, _, _ := cellSums(d, nil)
	batch := d.Column(ColumnBatch)
	sum := [2][]float64{make([]float64, d.Features()), make([]float64, d.Features())}
	for i := range d.Cells() {
		cols, vals := csr(d).Row(i)
		for k, c := range cols {
			sum[batch.Codes[i]][c] += float64(vals[k]) / total[i]
		}
	}
	nb := batch.Counts()
	var x, y []float64
	for g := range d.Features() - mitoGenes {
		a, b := sum[0][g]/float64(nb[0]), sum[1][g]/float64(nb[1])
		if a > 1e-3 && b > 1e-3 {
			x = append(x, math.Log(truth.BatchFactor[g]))
			y = append(y, math.Log(b/a))
		}
	}
	if r := correlation(x, y); len(x) < 50 || r < 0.9 {
		t.Errorf("%d well-expressed genes: correlation of observed run ratio with the batch factor %.3f", len(x), r)
	}
}

func correlation(x, y []float64) float64 {
	mx, sx, _, _ := sampleStats(x)
	my, sy, _, _ := sampleStats(y)
	var c float64
	for i := range x {
		c += (x[i] - mx) * (y[i] - my)
	}
	return c / float64(len(x)) / (sx * sy)
}

func TestGeneSymbols(t *testing.T) {
	d, truth := medium(t)
	for g, s := range d.GeneSymbols {
		isMito := slices.Contains(truth.Mito, g)
		if strings.HasPrefix(s, "MT") != isMito {
			t.Errorf("gene %d: symbol %q", g, s)
		}
		if !isMito && (len(s) > maxSymbolLen || strings.Trim(s, "ABCDEFGHIJKLMNOPQRSTUVWXYZ123456789") != "") {
			t.Errorf("gene %d: symbol %q is not an invented word", g, s)
		}
	}
	// Symbols depend only on the gene's index, not on the seed or the size.
	small, _, err := Generate(context.Background(), Options{Cells: 10, Genes: 500, Seed: 99})
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(small.GeneSymbols[:500-mitoGenes], d.GeneSymbols[:500-mitoGenes]) ||
		!slices.Equal(small.GeneSymbols[500-mitoGenes:], d.GeneSymbols[2000-mitoGenes:]) {
		t.Error("gene symbols change with the size or seed of the atlas")
	}
}

func TestOptionErrors(t *testing.T) {
	for _, tc := range []struct {
		opt   Options
		field string
	}{
		{Options{Cells: 0, Genes: 2000}, "Cells"},
		{Options{Cells: -5, Genes: 2000}, "Cells"},
		{Options{Cells: maxCells + 1, Genes: 2000}, "Cells"},
		{Options{Cells: 10, Genes: minGenes - 1}, "Genes"},
		{Options{Cells: 10, Genes: maxGenes + 1}, "Genes"},
	} {
		d, truth, err := Generate(context.Background(), tc.opt)
		var oe *OptionError
		if d != nil || truth != nil || !errors.Is(err, ErrOption) || !errors.As(err, &oe) || oe.Field != tc.field {
			t.Errorf("%+v: got %v, want an OptionError for %s", tc.opt, err, tc.field)
		}
	}
	// The smallest allowed gene count works.
	if _, _, err := Generate(context.Background(), Options{Cells: 50, Genes: minGenes}); err != nil {
		t.Errorf("%d genes: %v", minGenes, err)
	}
}

func TestCancelAndProgress(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	var last int64
	opt := Options{Cells: 20000, Genes: 300, Seed: 1, Progress: func(done, total int64) {
		last = done
		cancel()
	}, Threads: 1}
	d, truth, err := Generate(ctx, opt)
	if !errors.Is(err, context.Canceled) || d != nil || truth != nil {
		t.Fatalf("cancelled run returned %v", err)
	}
	if last >= 20000 {
		t.Errorf("progress reached %d of 20000 after cancelling", last)
	}

	var reports []int64
	opt = Options{Cells: 5000, Genes: 300, Seed: 1, Threads: 1, Progress: func(done, total int64) {
		if total != 5000 {
			t.Errorf("progress total %d, want 5000", total)
		}
		reports = append(reports, done)
	}}
	if _, _, err := Generate(context.Background(), opt); err != nil {
		t.Fatal(err)
	}
	if len(reports) < 2 || !slices.IsSorted(reports) || reports[len(reports)-1] != 5000 {
		t.Errorf("progress reports %v", reports)
	}
}

func TestDefaultAtlas(t *testing.T) {
	if testing.Short() {
		t.Skip("skipping the full-size atlas in short mode")
	}
	opt := DefaultOptions()
	d, truth, err := Generate(context.Background(), opt)
	if err != nil {
		t.Fatal(err)
	}
	if d.Cells() != 30000 || d.Features() != 2000 {
		t.Fatalf("default atlas is %d×%d", d.Cells(), d.Features())
	}
	// A few hundred damaged cells: binomial(30000, lowQualityShare).
	n, p := 30000.0, lowQualityShare
	if got := float64(len(truth.LowQuality)); math.Abs(got-n*p) > 5*math.Sqrt(n*p*(1-p)) {
		t.Errorf("%v low-quality cells, want about %.0f", got, n*p)
	}
	_, _, detected := cellSums(d, nil)
	for _, i := range truth.LowQuality {
		if detected[i] >= QCMinGenes {
			t.Errorf("low-quality cell %d has %d detected genes", i, detected[i])
		}
	}
}

// csrOf caches the CSR form of the datasets' counts.
var csrOf sync.Map

// csr returns d's counts as a CSR matrix with float32 values.
func csr(d *atlas.Dataset) *sparse.CSR {
	if m, ok := csrOf.Load(d); ok {
		return m.(*sparse.CSR)
	}
	m := d.Counts.ToCSR()
	csrOf.Store(d, m)
	return m
}
