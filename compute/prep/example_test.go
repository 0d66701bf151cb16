package prep

import (
	"context"
	"math"
	"reflect"
	"slices"
	"testing"

	"lodestone/sampledata"
)

// On the example atlas, the compact path (counts held as counts, values
// computed as they are read) equals the float path it replaced (the kept
// counts copied as float32, normalised into a float32 matrix, genes selected
// and principal components taken from it) bit for bit: every log-normalised
// value, the gene selection and its scores, and the principal component
// scores the map is computed from. QC from the atlas's tally equals QC of
// every entry.
func TestExampleCompactEqualsFloatPath(t *testing.T) {
	if testing.Short() {
		t.Skip("prepares the 30,000-cell example atlas twice")
	}
	ctx := context.Background()
	d, _, err := sampledata.Generate(ctx, sampledata.DefaultOptions())
	if err != nil {
		t.Fatal(err)
	}
	opt := DefaultOptions()
	opt.PCA.Seed = 1
	res, err := Prepare(ctx, d, opt)
	if err != nil {
		t.Fatal(err)
	}

	// The float path.
	counts := d.Counts.ToCSR()
	norm, sel, p := floatStages(t, ctx, counts, res, opt)

	sameValues(t, res.Normalized, norm)
	if !slices.Equal(res.Genes.Genes, sel.Genes) || !slices.Equal(res.Genes.Score, sel.Score) ||
		!slices.Equal(res.Genes.Mean, sel.Mean) || !slices.Equal(res.Genes.Dispersion, sel.Dispersion) {
		t.Error("the gene selection differs from the float path")
	}
	for k, v := range p.Scores.Data {
		if math.Float32bits(v) != math.Float32bits(res.Features.Data[k]) {
			t.Fatalf("principal component score %d: %v, float path %v", k, res.Features.Data[k], v)
		}
	}
	if n := res.Normalized.NNZ(); n < 10_000_000 {
		t.Errorf("only %d values compared", n)
	}

	// QC from the tally gathered while the atlas was built equals QC of
	// every entry.
	if d.Counts.Tally == nil {
		t.Fatal("the example atlas has no tally")
	}
	plain := *d
	counts2 := *d.Counts
	counts2.Tally = nil
	plain.Counts = &counts2
	cells, genes, rep, err := QC(ctx, &plain, opt.QC)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(cells, res.Cells) || !slices.Equal(genes, res.KeptGenes) || !reflect.DeepEqual(rep, res.QC) {
		t.Error("QC of every entry differs from QC from the tally")
	}
}
