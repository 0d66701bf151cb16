package paint

import (
	"cmp"
	"context"
	"slices"

	"lodestone/canvas/figure"
	"lodestone/compute/markers"
)

// TopMarkers is how many genes the expression plot of markers shows.
const TopMarkers = 12

// GeneLabel names a gene for people: "symbol (ID)", or the ID alone when the
// gene has no symbol of its own (empty, or equal to the ID).
func GeneLabel(symbol, id string) string {
	if symbol == id || symbol == "" {
		return id
	}
	return symbol + " (" + id + ")"
}

// GeneName names a gene shortly, as the markers table and the expression
// plot do: by its symbol, or its ID when the symbol is empty.
func GeneName(symbol, id string) string {
	if symbol != "" {
		return symbol
	}
	return id
}

// ExpressionPlot returns the table and the size of the expression plot of
// ranked markers (figure.WriteExpressionPNG, WriteExpressionSVG): up to n
// genes that are higher in the group (LogFoldChange > 0), in markers.Rank's
// order (decreasing z, then decreasing fold change, then gene index, so the
// order of res does not matter), named by GeneName from ids and symbols
// (indexed by gene), across the groups named by names, with codes giving
// each cell's group (−1 for none). x holds the expression (cells × genes)
// the markers were ranked on. The window's plot and the headless figure
// command both draw through it. Errors are those of figure.Expression.
func ExpressionPlot(ctx context.Context, x figure.Matrix, res []markers.Result, n int, ids, symbols []string,
	codes []int32, names []string) (*figure.ExpressionTable, figure.Size, error) {
	byZ := slices.Clone(res)
	slices.SortFunc(byZ, func(a, b markers.Result) int {
		switch {
		case a.Z != b.Z:
			return cmp.Compare(b.Z, a.Z)
		case a.LogFoldChange != b.LogFoldChange:
			return cmp.Compare(b.LogFoldChange, a.LogFoldChange)
		}
		return cmp.Compare(a.Gene, b.Gene)
	})
	var genes []int
	var labels []string
	for _, r := range byZ {
		if len(genes) == n {
			break
		}
		if r.LogFoldChange > 0 {
			genes = append(genes, r.Gene)
			labels = append(labels, GeneName(symbols[r.Gene], ids[r.Gene]))
		}
	}
	t, err := figure.Expression(ctx, x, genes, labels, codes, names)
	if err != nil {
		return nil, figure.Size{}, err
	}
	return t, figure.Size{WidthPx: 200 + 70*len(genes), HeightPx: 260 + 36*len(names), DPI: 150}, nil
}
