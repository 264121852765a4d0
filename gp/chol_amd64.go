//go:build amd64 && !purego

package gp

// gemmTileFMA is the AVX2/FMA micro-kernel of chol_amd64.s, with the
// contract of gemmTileGo. a, b and c must hold the whole tile.
//
//go:noescape
func gemmTileFMA(k int, a *float64, lda int, b *float64, c *float64, ldc int)

func cpuid(eaxArg, ecxArg uint32) (eax, ebx, ecx, edx uint32)

func xgetbv() (eax, edx uint32)

// hasFastKernel reports whether the CPU and OS support AVX2 and FMA
// (CPUID leaf 1 ECX bits 12, 27, 28; leaf 7 EBX bit 5; XCR0 bits 1–2).
var hasFastKernel = detectFMA()

func detectFMA() bool {
	maxID, _, _, _ := cpuid(0, 0)
	if maxID < 7 {
		return false
	}
	_, _, ecx1, _ := cpuid(1, 0)
	const fma, osxsave, avx = 1 << 12, 1 << 27, 1 << 28
	if ecx1&fma == 0 || ecx1&osxsave == 0 || ecx1&avx == 0 {
		return false
	}
	if xcr0, _ := xgetbv(); xcr0&6 != 6 {
		return false
	}
	_, ebx7, _, _ := cpuid(7, 0)
	return ebx7&(1<<5) != 0
}

// gemmTile dispatches to the assembly micro-kernel when available.
func gemmTile(k int, a []float64, lda int, b []float64, c []float64, ldc int) {
	if !hasFastKernel || k == 0 {
		gemmTileGo(k, a, lda, b, c, ldc)
		return
	}
	// Bounds the assembly relies on.
	_ = a[3*lda+k-1]
	_ = b[k*cholNR-1]
	_ = c[3*ldc+cholNR-1]
	gemmTileFMA(k, &a[0], lda, &b[0], &c[0], ldc)
}
