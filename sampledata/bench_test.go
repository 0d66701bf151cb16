package sampledata

import (
	"context"
	"testing"
)

// BenchmarkGenerate times the example atlas at its default size
// (30,000 cells × 2,000 genes) on all processors.
func BenchmarkGenerate(b *testing.B) {
	opt := DefaultOptions()
	for b.Loop() {
		if _, _, err := Generate(context.Background(), opt); err != nil {
			b.Fatal(err)
		}
	}
}
