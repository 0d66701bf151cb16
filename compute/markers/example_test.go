package markers_test

import (
	"context"
	"testing"

	"lodestone/compute/atlas"
	"lodestone/compute/markers"
	"lodestone/compute/prep"
	"lodestone/sampledata"
)

// TestExampleStatesFindTheirProgrammes ranks the genes of each state of the
// example atlas against all other cells: the generator knows which genes
// it raised in each state (sampledata.Truth.StateProgrammes), and the top
// markers must come from that programme.
func TestExampleStatesFindTheirProgrammes(t *testing.T) {
	opt := sampledata.DefaultOptions()
	opt.Cells = 6000
	ctx := context.Background()
	d, truth, err := sampledata.Generate(ctx, opt)
	if err != nil {
		t.Fatal(err)
	}
	res, err := prep.Prepare(ctx, d, prep.DefaultOptions())
	if err != nil {
		t.Fatal(err)
	}
	expr, err := markers.NewExpression(ctx, res.Normalized)
	if err != nil {
		t.Fatal(err)
	}
	var state *atlas.Column
	for i := range d.Annotations {
		if d.Annotations[i].Name == sampledata.ColumnState {
			state = &d.Annotations[i]
		}
	}
	const top = 10
	for level, name := range state.Levels {
		programme := map[int]bool{}
		for _, g := range truth.StateProgrammes[name] {
			programme[g] = true
		}
		in := make([]bool, len(res.Cells))
		n := 0
		for i, c := range res.Cells {
			if state.Codes[c] == int32(level) {
				in[i] = true
				n++
			}
		}
		if n == 0 {
			continue
		}
		ranked, err := expr.Rank(ctx, in, nil, markers.Options{})
		if err != nil {
			t.Fatal(err)
		}
		hits := 0
		for _, r := range ranked[:top] {
			if programme[res.KeptGenes[r.Gene]] {
				hits++
			}
		}
		t.Logf("state %-12s %4d cells: %d of the top %d markers in its programme", name, n, hits, top)
		if hits < 8 {
			t.Errorf("state %s: only %d of the top %d markers belong to its programme", name, hits, top)
		}
	}
}
