package neighbors

import "unsafe"

// prefetchRows asks the processor to bring into cache the stride bytes at
// base + id·stride for every id of ids, without waiting for them. It
// changes nothing but the time later reads take.
//
//go:noescape
func prefetchRows(base unsafe.Pointer, ids []int32, stride int)

// prefetchSpan asks the processor to bring the n ≥ 1 bytes at p into cache.
//
//go:noescape
func prefetchSpan(p unsafe.Pointer, n int)
