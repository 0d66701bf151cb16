package neighbors

// haveAVX2 reports whether the processor and the operating system support
// the AVX2 and FMA instructions of the assembly kernels.
var haveAVX2 = detectAVX2()

// detectAVX2 checks CPUID leaf 1 (FMA, OSXSAVE, AVX), XCR0 (the OS saves
// the XMM and YMM registers) and CPUID leaf 7 (AVX2), following Intel's
// guidance for detecting AVX2 support.
func detectAVX2() bool {
	maxLeaf, _, _, _ := cpuid(0, 0)
	if maxLeaf < 7 {
		return false
	}
	_, _, ecx1, _ := cpuid(1, 0)
	const (
		fma     = 1 << 12
		osxsave = 1 << 27
		avx     = 1 << 28
	)
	if ecx1&(fma|osxsave|avx) != fma|osxsave|avx {
		return false
	}
	if xcr0, _ := xgetbv(); xcr0&6 != 6 {
		return false
	}
	_, ebx7, _, _ := cpuid(7, 0)
	return ebx7&(1<<5) != 0
}

// cpuid executes the CPUID instruction for the given leaf and subleaf.
func cpuid(leaf, sub uint32) (eax, ebx, ecx, edx uint32)

// xgetbv returns extended control register 0.
func xgetbv() (eax, edx uint32)

// sqDistAVX2 returns Σ_{j<n} (a_j − b_j)² for n ≥ 1, in eight lanes.
//
//go:noescape
func sqDistAVX2(a, b *float32, n int) float32

// sqDistRowsAVX2 sets out[r] = Σ_{j<dim} (q_j − rows[r·dim+j])² for r < n,
// dim ≥ 1, with the same arithmetic as sqDistAVX2.
//
//go:noescape
func sqDistRowsAVX2(q, rows *float32, dim int, out *float32, n int)

// sqDistTileAVX2 computes the 4×16 squared distances between four query
// rows (q, stride dim, dim ≥ 1) and a tile of 16 rows stored transposed
// (element (j, r) at tile[16·j+r]), writes them to out row by row, and sets
// bit r of mask[i] when distance (i, r) ≤ thr[i]. Each distance is the sum
// of (q_j − t_j)² in order of j, as in sqDistTileGo.
//
//go:noescape
func sqDistTileAVX2(q *float32, dim int, tile, thr, out *float32, mask *uint32)
