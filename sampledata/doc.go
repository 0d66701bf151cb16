// Package sampledata generates Lodestone's example atlas: an invented,
// simulated single-cell time course with known structure, for trying the
// program and for testing the stages that should find that structure.
//
// # The scenario (invented)
//
// The atlas simulates the regrowth of the brine comb, a salt-excreting crest
// on the gill arch of a fictional shore amphibian, the glasscrest newt, in
// the ten days after a moult. Neither the animal nor its cells exist. A
// progenitor pool (state seedbed) branches into three lineages:
//
//	veilward   veil-sprout → veil-spread → veil-sheet   (cells that cover the comb)
//	brinewell  brine-bud → brine-swell → brine-gland    (cells that pump salt)
//	keelcord   keel-thread → keel-cord                  (cells that stiffen it)
//
// Cells are sampled on days 2, 4, 6, 8 and 10 and sequenced in two runs
// ("run 1", "run 2"). Run 2 was handled differently: its cells carry a
// handling response and a different capture of each gene, so that a map of
// the raw atlas shows every state twice, once per run, until the runs are
// integrated (the batch column names them). Progenitors are found on every day, fewer on later
// days; committed cells are further along their lineage on later days.
// About 1.2 % of the cells are damaged: few detected genes (fewer than
// QCMinGenes) and a high share of mitochondrial-like counts.
//
// # The model
//
// Every cell has a maturation t in [0, 1]: progenitors lie in [0, 0.12),
// committed cells in [0.12, 1], drawn from a Beta law whose mean grows with
// the day. Each state has a programme of 30–60 genes (at 2,000 genes) whose
// activity is a bell curve in t centred where the state peaks; a cell's state
// is the one whose programme peaks nearest to its t, so neighbouring states
// blend and the data has both discrete groups and continuous paths.
// Progenitors are primed towards their future lineage, so the seedbed runs
// continuously into each branch. Each lineage also has genes that rise
// steadily along it, and a few genes rise with maturation everywhere.
//
// Counts are negative binomial with gene-specific sizes r_g (variance
// μ + μ²/r) around gene-programme means. For cell c and nuclear gene g,
//
//	μ_cg = L_c (1 − f_c) · a_bg exp(Σ_s A_s(t_c) λ_sg) / Σ_h a_bh exp(Σ_s A_s(t_c) λ_sh)
//
// where L_c is the cell's log-normal library size (its median is lower in
// run 2, which captured fewer molecules), f_c its log-normal share of
// mitochondrial-like counts (about 3 %), a_bg the gene's abundance in run b
// (run 2 multiplies it by a per-gene log-normal capture factor with log-sd
// 0.25, and raises a set of 40 handling genes by log fold changes of 1.5–2.5
// in every state: the batch effect), A_s(t)
// the activity of programme s at maturation t and λ_sg the gene's log fold
// change in that programme (1.5–3 for state programmes). The twelve
// mitochondrial-like genes, named with MitoPrefix, share L_c f_c between
// them. Housekeeping genes are high and steady; most other genes are low.
//
// # Determinism
//
// Every cell draws from its own random stream, keyed by the seed and the
// cell's index, and the gene parameters from a stream keyed by the seed, so
// Generate fills cells in parallel and still returns the same atlas, bit for
// bit, for every number of threads. Gene symbols are invented words drawn
// from a fixed stream: gene g has the same symbol in every atlas.
package sampledata
