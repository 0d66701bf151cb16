package prep

import (
	"context"
	"sync"
	"testing"

	"lodestone/compute/atlas"
	"lodestone/compute/sparse"
	"lodestone/sampledata"
)

// The atlas benchmarks run the stages on the example atlas at 50,000 cells ×
// 20,000 genes (about 5.6·10^7 counts, the density of a real atlas), held
// as compact counts and read through views, as Prepare reads a file.
var benchAtlas = sync.OnceValues(func() (*atlas.Dataset, error) {
	opt := sampledata.DefaultOptions()
	opt.Cells, opt.Genes = 50_000, 20_000
	d, _, err := sampledata.Generate(context.Background(), opt)
	return d, err
})

// atlasStages returns the benchmark atlas and the inputs of each stage.
func atlasStages(b *testing.B) (d *atlas.Dataset, sub, norm, pca *sparse.View) {
	b.Helper()
	d, err := benchAtlas()
	if err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	opt := DefaultOptions()
	cells, genes, _, err := QC(ctx, d, opt.QC)
	if err != nil {
		b.Fatal(err)
	}
	if sub, err = sparse.NewView(d.Counts, cells, genes, 0); err != nil {
		b.Fatal(err)
	}
	if norm, err = NormalizeView(ctx, sub, opt.Target, 0, nil); err != nil {
		b.Fatal(err)
	}
	sel, err := SelectGenesView(ctx, norm, opt.Genes, 0, nil)
	if err != nil {
		b.Fatal(err)
	}
	selected := make([]int, len(sel.Genes))
	for k, j := range sel.Genes {
		selected[k] = genes[j]
	}
	pca, err = sparse.NewView(d.Counts.SelectRowsCols(cells, selected), nil, nil, 0)
	if err == nil {
		pca, err = pca.WithScale(norm.Scale())
	}
	if err != nil {
		b.Fatal(err)
	}
	b.ReportMetric(float64(d.Counts.NNZ()), "counts")
	b.ResetTimer()
	return d, sub, norm, pca
}

func BenchmarkAtlasQC(b *testing.B) {
	d, _, _, _ := atlasStages(b)
	for b.Loop() {
		if _, _, _, err := QC(context.Background(), d, DefaultQC()); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkAtlasNormalize(b *testing.B) {
	_, sub, _, _ := atlasStages(b)
	for b.Loop() {
		if _, err := NormalizeView(context.Background(), sub, DefaultTarget, 0, nil); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkAtlasGenes(b *testing.B) {
	_, _, norm, _ := atlasStages(b)
	for b.Loop() {
		if _, err := SelectGenesView(context.Background(), norm, DefaultGenes, 0, nil); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkAtlasPCA(b *testing.B) {
	_, _, _, pca := atlasStages(b)
	b.ReportMetric(float64(pca.NNZ()), "selected")
	opt := DefaultPCA()
	opt.Seed = 1
	for b.Loop() {
		if _, err := RunPCAView(context.Background(), pca, opt); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkAtlasPrepare(b *testing.B) {
	d, _, _, _ := atlasStages(b)
	opt := DefaultOptions()
	opt.PCA.Seed = 1
	for b.Loop() {
		if _, err := Prepare(context.Background(), d, opt); err != nil {
			b.Fatal(err)
		}
	}
}
