package figure

import (
	"bytes"
	"context"
	"errors"
	"image"
	"image/png"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"lodestone/compute/sparse"
)

// randomCSR returns a rows × cols matrix with about density of its entries
// stored, values in (0, 3], some stored zeros, and the same matrix dense.
func randomCSR(rows, cols int, density float64, seed uint64) (*sparse.CSR, [][]float64) {
	rng := rand.New(rand.NewPCG(seed, 11))
	m := &sparse.CSR{Rows: rows, Cols: cols, RowPtr: make([]int64, rows+1)}
	dense := make([][]float64, rows)
	for i := 0; i < rows; i++ {
		dense[i] = make([]float64, cols)
		for j := 0; j < cols; j++ {
			if rng.Float64() < density {
				v := float32(0)
				if rng.IntN(10) > 0 { // a tenth of the stored entries are explicit zeros
					v = float32(3 * (1 - rng.Float64()))
				}
				m.ColIdx = append(m.ColIdx, int32(j))
				m.Val = append(m.Val, v)
				dense[i][j] = float64(v)
			}
		}
		m.RowPtr[i+1] = int64(len(m.ColIdx))
	}
	return m, dense
}

// Expression against a direct computation on the dense matrix: for each
// group and gene, count the positive entries and average all entries over
// the group's cells (exact slow computation). Genes repeat and come out of
// order; cells with code −1 are left out; group 3 has no cells and gets
// NaN.
func TestExpressionMatchesDirect(t *testing.T) {
	for _, tc := range []struct {
		rows, cols int
		density    float64
	}{{300, 40, 0.3}, {200, 2000, 0.9}, {500, 25, 0.02}} {
		X, dense := randomCSR(tc.rows, tc.cols, tc.density, uint64(tc.rows))
		if err := X.Validate(); err != nil {
			t.Fatal(err)
		}
		genes := []int{7, 3, 3, tc.cols - 1, 0, 12, 7}
		names := make([]string, len(genes))
		for j, g := range genes {
			names[j] = "g" + string(rune('A'+g%26))
		}
		groups := []string{"a", "b", "c", "none", "e"}
		codes := make([]int32, tc.rows)
		rng := rand.New(rand.NewPCG(5, 5))
		for i := range codes {
			codes[i] = []int32{-1, 0, 1, 2, 4}[rng.IntN(5)]
		}
		got, err := Expression(context.Background(), X, genes, names, codes, groups)
		if err != nil {
			t.Fatal(err)
		}
		for g := range groups {
			for j, gene := range genes {
				var n, pos, sum float64
				for i := 0; i < tc.rows; i++ {
					if int(codes[i]) != g {
						continue
					}
					n++
					sum += dense[i][gene]
					if dense[i][gene] > 0 {
						pos++
					}
				}
				wantF, wantM := pos/n, sum/n
				if n == 0 {
					if !math.IsNaN(got.Fraction[g][j]) || !math.IsNaN(got.Mean[g][j]) {
						t.Errorf("empty group %d gene %d: got %v, %v, want NaN", g, j, got.Fraction[g][j], got.Mean[g][j])
					}
					continue
				}
				if got.Fraction[g][j] != wantF || math.Abs(got.Mean[g][j]-wantM) > 1e-12*math.Max(1, wantM) {
					t.Errorf("%d×%d group %d gene %d: got (%v, %v), want (%v, %v)", tc.rows, tc.cols, g, gene, got.Fraction[g][j], got.Mean[g][j], wantF, wantM)
				}
			}
		}
		if strings.Join(got.Genes, ",") != strings.Join(names, ",") || strings.Join(got.Groups, ",") != strings.Join(groups, ",") {
			t.Errorf("names %v %v", got.Genes, got.Groups)
		}
	}
}

// Bad input gives an *InputError naming the argument and position, wrapping
// the sentinel.
func TestExpressionErrors(t *testing.T) {
	X, _ := randomCSR(20, 10, 0.5, 1)
	codes := make([]int32, 20)
	ctx := context.Background()
	neg := *X
	neg.Val = append([]float32(nil), X.Val...)
	row7 := int(X.RowPtr[7])
	neg.Val[row7] = -1
	negGene := int(X.ColIdx[row7])
	for _, tc := range []struct {
		name  string
		call  func() error
		want  error
		where string
	}{
		{"nil matrix", func() error {
			_, err := Expression(ctx, nil, []int{1}, []string{"a"}, codes, []string{"g"})
			return err
		}, ErrMatrix, "X"},
		{"short RowPtr", func() error {
			bad := *X
			bad.RowPtr = bad.RowPtr[:5]
			_, err := Expression(ctx, &bad, []int{1}, []string{"a"}, codes, []string{"g"})
			return err
		}, ErrMatrix, "X"},
		{"gene out of range", func() error {
			_, err := Expression(ctx, X, []int{1, 10}, []string{"a", "b"}, codes, []string{"g"})
			return err
		}, ErrIndex, "genes[1]"},
		{"names", func() error { _, err := Expression(ctx, X, []int{1}, nil, codes, []string{"g"}); return err }, ErrLength, "geneNames"},
		{"codes length", func() error {
			_, err := Expression(ctx, X, []int{1}, []string{"a"}, codes[:3], []string{"g"})
			return err
		}, ErrLength, "groupCodes"},
		{"code out of range", func() error {
			c := append([]int32(nil), codes...)
			c[4] = 1
			_, err := Expression(ctx, X, []int{1}, []string{"a"}, c, []string{"g"})
			return err
		}, ErrIndex, "groupCodes[4]"},
		{"negative value", func() error {
			_, err := Expression(ctx, &neg, []int{negGene}, []string{"a"}, codes, []string{"g"})
			return err
		}, ErrValue, "X row[7]"},
	} {
		err := tc.call()
		var ie *InputError
		if !errors.Is(err, tc.want) || !errors.As(err, &ie) || !strings.Contains(err.Error(), tc.where) {
			t.Errorf("%s: error %v, want an *InputError at %s wrapping %v", tc.name, err, tc.where, tc.want)
		}
	}
}

// A cancelled context stops Expression.
func TestExpressionCancelled(t *testing.T) {
	X, _ := randomCSR(5000, 20, 0.3, 2)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	_, err := Expression(ctx, X, []int{1, 2}, []string{"a", "b"}, make([]int32, 5000), []string{"g"})
	if !errors.Is(err, context.Canceled) {
		t.Errorf("error %v, want context.Canceled", err)
	}
}

// smallTable returns a table of 3 genes and 4 groups, the last without
// cells.
func smallTable() *ExpressionTable {
	nan := math.NaN()
	return &ExpressionTable{
		Genes:    []string{"ALPHA1", "BETA-2", "GAMMA <3>"},
		Groups:   []string{"first & best", "second", "third", "empty"},
		Fraction: [][]float64{{1, 0.5, 0}, {0.25, 0, 0.75}, {0.1, 0.9, 0.4}, {nan, nan, nan}},
		Mean:     [][]float64{{2, 0.4, 0}, {0.5, 0, 1.5}, {0.1, 2.2, 0.3}, {nan, nan, nan}},
	}
}

// The expression plot: PNG of the requested size; SVG that parses with the
// names as text; and the SVG drawn by rsvg-convert matches the PNG over the
// grid of tiles (axis-aligned rectangles on whole pixels, so the two
// renderers should agree to rounding: ≤ 0.5 % of pixels inked in one only,
// mean |Δ| ≤ 1 level).
func TestExpressionPlot(t *testing.T) {
	tab := smallTable()
	s := Size{WidthPx: 800, HeightPx: 500, DPI: 300}
	var p, v bytes.Buffer
	if err := WriteExpressionPNG(&p, tab, s); err != nil {
		t.Fatal(err)
	}
	if err := WriteExpressionSVG(&v, tab, s); err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(bytes.NewReader(p.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	if img.Bounds().Dx() != 800 || img.Bounds().Dy() != 500 {
		t.Fatalf("PNG is %v", img.Bounds())
	}
	doc := parseSVG(t, v.Bytes())
	for _, want := range append(append([]string{}, tab.Genes...), tab.Groups...) {
		found := false
		for _, got := range doc.texts {
			found = found || got == want
		}
		if !found {
			t.Errorf("no <text> reads %q", want)
		}
	}
	sc, err := tab.scene(s)
	if err != nil {
		t.Fatal(err)
	}
	// The grid: as wide as the bands behind every other row, from the
	// first band down by one band height per group.
	var grid image.Rectangle
	for _, it := range sc.items {
		if r, ok := it.(*rectItem); ok && r.colour == band {
			grid = image.Rect(int(r.b.x0), int(r.b.y0), int(r.b.x1), int(r.b.y0+float64(len(tab.Groups))*r.b.h()))
			break
		}
	}
	theirs := rsvgRender(t, v.Bytes(), s.WidthPx, s.HeightPx)
	c := compareRenderings(img, theirs, grid)
	share := float64(c.differ) / float64(c.pixels)
	t.Logf("grid %v: inked %d vs %d of %d, in one only %.3f%%, mean |Δ| %.3f", grid, c.inkedA, c.inkedB, c.pixels, 100*share, c.meanAbs)
	if share > 0.005 || c.meanAbs > 1 {
		t.Errorf("renderings differ over the grid: %.3f%% of pixels, mean |Δ| %.3f", 100*share, c.meanAbs)
	}
}

// Tables the plot cannot show are refused with the place named.
func TestExpressionPlotErrors(t *testing.T) {
	s := Size{WidthPx: 800, HeightPx: 500}
	for _, tc := range []struct {
		name  string
		edit  func(*ExpressionTable)
		size  Size
		want  error
		where string
	}{
		{"fraction above 1", func(t *ExpressionTable) { t.Fraction[1][2] = 1.5 }, s, ErrValue, "Fraction[1][2]"},
		{"negative mean", func(t *ExpressionTable) { t.Mean[0][1] = -0.1 }, s, ErrValue, "Mean[0][1]"},
		{"short row", func(t *ExpressionTable) { t.Mean[2] = t.Mean[2][:1] }, s, ErrLength, "Mean[2]"},
		{"missing row", func(t *ExpressionTable) { t.Fraction = t.Fraction[:2] }, s, ErrLength, "Fraction"},
		{"no genes", func(t *ExpressionTable) { t.Genes = nil }, s, ErrLength, "Genes"},
		{"too small", func(t *ExpressionTable) {}, Size{WidthPx: 60, HeightPx: 40}, ErrNoRoom, "Size"},
		{"too large", func(t *ExpressionTable) {}, Size{WidthPx: 20000, HeightPx: 40}, ErrSize, "WidthPx"},
	} {
		tab := smallTable()
		tc.edit(tab)
		err := WriteExpressionPNG(&bytes.Buffer{}, tab, tc.size)
		if !errors.Is(err, tc.want) || !strings.Contains(err.Error(), tc.where) {
			t.Errorf("%s: error %v, want %v at %s", tc.name, err, tc.want, tc.where)
		}
	}
}
