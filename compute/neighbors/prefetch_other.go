//go:build !amd64

package neighbors

import "unsafe"

// prefetchRows does nothing where no prefetch instruction is wired in.
func prefetchRows(base unsafe.Pointer, ids []int32, stride int) {}

// prefetchSpan does nothing where no prefetch instruction is wired in.
func prefetchSpan(p unsafe.Pointer, n int) {}
