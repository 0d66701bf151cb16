package window

import (
	"fmt"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/widget"

	"lodestone/compute/atlas"
	"lodestone/compute/pipeline"
)

// atlasPanel summarises the open atlas: its size, its annotation columns
// and their kinds, how the annotation table matched, and what quality
// control, gene selection, PCA and integration did; above the summary, the
// samples' controls (samplesPanel). It follows the atlas state.
type atlasPanel struct {
	st   *atlasState
	text *widget.RichText
	box  fyne.CanvasObject
}

func newAtlasPanel(st *atlasState, samples *samplesPanel) *atlasPanel {
	a := &atlasPanel{st: st, text: widget.NewRichText()}
	a.text.Wrapping = fyne.TextWrapWord
	a.box = container.NewVScroll(container.NewVBox(samples.content(), widget.NewSeparator(), a.text))
	a.show()
	st.on(topicAtlas, a.show)
	st.on(topicColumns, a.show)
	return a
}

// content returns the panel's widgets.
func (a *atlasPanel) content() fyne.CanvasObject { return a.box }

func (a *atlasPanel) show() {
	a.text.ParseMarkdown(atlasSummary(a.st.src.name(), a.st.data, a.st.prep))
}

// atlasSummary writes the summary as Markdown.
func atlasSummary(name string, d *atlas.Dataset, p *pipeline.Prepared) string {
	var b strings.Builder
	fmt.Fprintf(&b, "**%s**\n\n", name)
	kind := "counts"
	if d.Table != nil {
		kind = "numeric table"
	}
	fmt.Fprintf(&b, "- %s cells × %s %s (%s)\n", count(d.Cells()), count(d.Features()), map[bool]string{true: "features", false: "genes"}[d.Table != nil], kind)
	fmt.Fprintf(&b, "- %s cells on the map\n", count(p.Cells()))
	if len(d.Sources) > 0 {
		fmt.Fprintf(&b, "- read from %s\n", strings.Join(d.Sources, ", "))
	}
	for _, n := range d.Notes { // which files gave the cells and the genes, and how
		fmt.Fprintf(&b, "- %s\n", n)
	}
	if j := d.Join; j != nil {
		fmt.Fprintf(&b, "- annotations matched %s cells; %s cells had no row, %s rows named no cell", count(j.Matched), count(j.Unmatched), count(j.Extra))
		if j.DuplicatedCount > 0 {
			fmt.Fprintf(&b, ", %d IDs were duplicated (first row kept)", j.DuplicatedCount)
		}
		b.WriteString("\n")
	}
	b.WriteString("\n**Annotation columns**\n\n")
	for i := range p.Annotations {
		c := &p.Annotations[i]
		switch c.Kind {
		case atlas.Categorical:
			fmt.Fprintf(&b, "- %s — categorical, %d values", c.Name, len(c.Levels))
		default:
			fmt.Fprintf(&b, "- %s — continuous", c.Name)
		}
		if m := c.MissingCount(); m > 0 {
			fmt.Fprintf(&b, ", %d missing", m)
		}
		b.WriteString("\n")
	}
	if r := p.Prep; r != nil {
		if qc := r.QC; qc != nil {
			b.WriteString("\n**Quality control**\n\n")
			fmt.Fprintf(&b, "- kept %s of %s cells and %s of %s genes; %d mitochondrial genes\n",
				count(qc.CellsKept), count(qc.Cells), count(qc.GenesKept), count(qc.Genes), qc.MitoGenes)
			for _, f := range qc.Filters {
				if f.Cells > 0 || f.Genes > 0 {
					fmt.Fprintf(&b, "- %s: %s cells, %s genes removed\n", f.Name, count(f.Cells), count(f.Genes))
				}
			}
		}
		if g := r.Genes; g != nil {
			within := ""
			if g.Batches > 0 {
				within = fmt.Sprintf(" within each of %d samples of %s, combined", g.Batches, p.Settings.Integrate.Columns[0])
			}
			fmt.Fprintf(&b, "\n**Genes**: %s highly variable genes selected%s (normalised dispersion, Zheng et al. 2017)\n", count(len(g.Genes)), within)
		}
		if pca := r.PCA; pca != nil {
			sum := 0.0
			for _, x := range pca.ExplainedVarianceRatio {
				sum += x
			}
			fmt.Fprintf(&b, "\n**PCA**: %d components explain %.1f%% of the variance of the selected genes\n",
				len(pca.ExplainedVarianceRatio), 100*sum)
		}
	}
	if p.Settings.Integrate.On() {
		fmt.Fprintf(&b, "\n**Integration**: %s\n", integrationState(p))
	}
	s := p.Settings
	if p.Graph != nil {
		fmt.Fprintf(&b, "\n**Neighbour graph**: %d neighbours per cell, perplexity %g, seed %d\n", p.Graph.K, s.Perplexity, s.Seed)
	} else {
		b.WriteString("\n*The atlas behind this stored map is being prepared.*\n")
	}
	for _, n := range p.Notes {
		fmt.Fprintf(&b, "\n- note: %s", n)
	}
	return b.String()
}
