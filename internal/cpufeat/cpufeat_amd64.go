package cpufeat

// AVX2FMA reports whether the processor and the operating system support the
// AVX2 and FMA instructions.
var AVX2FMA = detectAVX2FMA()

// detectAVX2FMA checks CPUID leaf 1 (FMA, OSXSAVE, AVX), XCR0 (the OS saves
// the XMM and YMM registers) and CPUID leaf 7 (AVX2), following Intel's
// guidance for detecting AVX2 support.
func detectAVX2FMA() bool {
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
