// Package prep turns a counts matrix into the features the embedding works
// on: per-cell quality control, normalisation of each cell to a common number
// of counts followed by log(1+x), selection of highly variable genes and a
// principal component analysis of the selected genes.
//
// Every stage works on the sparse matrix as stored: nothing here builds a
// dense cells × genes matrix. Every long stage takes a context.Context and
// stops soon after it is cancelled, reports progress, and spreads its work
// over all processors (or a given number of threads). Results are
// deterministic for a given seed and thread count.
//
// Prepare runs the whole chain for a Dataset; QC, Normalize, SelectGenes,
// RunPCA and DensePCA are the stages it is made of.
package prep
