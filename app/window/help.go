package window

// readingTheMap is the text of Help ▸ Reading the map.
const readingTheMap = `## What the map shows

Each dot is one cell. Cells that are close in the map have similar gene expression: the map is
drawn so that each cell keeps its nearest neighbours (by expression) near it.

## What the map does not show

- **Sizes are not quantitative.** A compact island is not necessarily a homogeneous population,
  and a large, spread-out one is not necessarily a varied one: the method evens out density.
- **Distances between groups are not quantitative.** A wide gap is not a measured difference,
  and two islands side by side are not necessarily related.
- **The picture depends on the settings**: the attraction dial, the neighbourhood size
  (perplexity), the genes and principal components used, and the random seed. Check a finding at
  more than one setting, and in the data itself.
- **This is a tool for exploration, not for diagnosis.** Use it to form questions and to choose
  what to test, not to decide about patients or samples.

## The attraction dial

The dial sets how strongly each cell is pulled towards its neighbours compared with how strongly
all cells push each other apart (the exaggeration of t-SNE). At 1 the map stresses **separate
groups**: cells fall into many tight, well separated islands. Turned up (4, 10, 30…) the pull wins,
gaps close and **continuous paths** — gradual changes such as development — become visible, at
the cost of finer separations. At ∞ the map becomes the spectral layout (Laplacian eigenmap) of
the neighbour graph, which shows only the broadest structure. Each turn re-forms the map from
where it stands, so you can watch groups merge and split.

## The grain

Beside the dial, the grain sets how fast the pull between two cells of the map fades with their
distance (the tail of the similarity kernel, α in "Heavy-tailed kernels reveal a finer cluster
structure in t-SNE visualisations", ECML PKDD 2019). At 1 the map is ordinary t-SNE. Towards
**finer groups** (below 1) the tail gets heavier: groups that t-SNE draws as one island split into
their parts, and islands move further apart. Towards **smoother** (above 1) the kernel tends to a
Gaussian: small groups flow together. The grain and the dial work together; at ∞ the spectral
layout does not depend on the grain. Like the dial, a change re-forms the map from where it stands.

## Fidelity

The scores beside the map say how well it keeps each cell's neighbours: *kept neighbours* is the
share of each cell's 15 nearest neighbours (by expression) that are also among its 15 nearest
neighbours in the map; *trustworthiness* (Venna & Kaski 2001) penalises cells that look close in
the map but are far apart in the data. Both are computed on a sample of cells and are local: they
look at neighbourhoods only. *dCor*, the distance correlation (Székely, Rizzo & Bakirov 2007),
is global: it compares all distances between the sampled cells in the data with those in the map
(1 when the map keeps them up to scale, near 0 when the two are unrelated). The largest distances
weigh most in it, so **a few far cells can dominate dCor**: one remote group can raise or lower it
whatever the map does with the rest. Read it as a check on the large scale, beside the local scores.

## Several samples

An atlas that pools donors, runs or protocols may show each cell state once per sample: technical
differences (depth, chemistry, handling) shift whole samples, and the map then shows samples
where you look for states. Paint by the sample column to see it. In the Atlas tab, name that
column (*samples are in column*): the status line then says how mixed the samples are among each
cell's neighbours in the map — 0 when every cell's neighbours come from its own sample, 1 when they
are as mixed as if the samples had been shuffled (the local inverse Simpson's index of Korsunsky et
al. 2019) — the Atlas tab says it for the map and for the components, and the Sweep tab for each
of its maps. Name a cell-type column too to see how well types stay apart (0 is the goal).

*Integrate the samples* corrects the principal components by Harmony (Korsunsky et al. 2019):
cells are grouped into soft clusters that are pushed to hold every sample in its usual share, and
within each cluster each sample's shift is removed. The strength θ sets how hard the clusters are
pushed to mix. The neighbours, the map, Leiden clusters and fidelity then use the corrected
components; marker genes and gene paint stay on the measured expression.

**Integration can hide real differences between samples.** It cannot tell a technical shift from
biology that differs between samples: a state present in one donor only (a disease state, a
treated sample) may be drawn into the states the others share. Check a finding with and without
integration, and in each sample on its own.
`
