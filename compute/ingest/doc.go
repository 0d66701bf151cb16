// Package ingest reads a scientist's files into an atlas.Dataset.
//
// Open takes a file or a folder and recognises what it holds by content,
// not by name: a Matrix Market counts matrix (NISTIR 5935, coordinate
// format) with its cell and gene label files and an optional table of
// per-cell annotations, or a dense numeric table (CSV after RFC 4180, or
// TSV with the same quoting). Any file may be gzip compressed (RFC 1952,
// recognised by its magic bytes); it is inflated on a goroutine of its own
// so that inflating and parsing overlap.
//
// The readers behind Open are exported for callers that hold the pieces:
// ReadMatrixMarket, ReadLabels, ReadTable and ReadAnnotations read from an
// io.Reader; WriteMatrixMarket, WriteLabels and WriteAnnotations write
// files the readers read back.
//
// # Errors
//
// Problems with a file's contents are *ParseError values naming the file,
// the line and the field (column), which wrap one of the Err… sentinel
// errors; test for them with errors.Is, as with encoding/csv. Choices
// Open cannot make (two Matrix Market files in one folder, no label file of
// the right length) are errors wrapping ErrAmbiguous or ErrLabelCount that
// list what was found. A cancelled context stops every reader within about
// a megabyte of input and returns the context's error. No reader panics on
// bad input, and none returns a partial result with an error.
//
// # Memory and speed
//
// Counts are stored as cells × genes in a compact sparse.Counts: 16-bit
// column indices (32-bit beyond 65,536 genes), one byte per count below 255
// and a side list for larger ones, float32 values only when the file holds
// values that are not counts. ReadMatrixMarket preallocates from the size
// line and fills the final arrays directly, so a file grouped by row needs
// nothing beyond its final size, and one that is not needs 4 bytes more per
// entry while it is read; it orients the matrix (genes × cells files are
// common) while reading, with no transposed copy. Entry lines are parsed by
// hand from a large buffer without allocating; benchmarks are in
// bench_test.go.
package ingest
