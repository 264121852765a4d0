//go:build !amd64 || purego

package gp

// gemmTile is the portable micro-kernel on this platform.
func gemmTile(k int, a []float64, lda int, b []float64, c []float64, ldc int) {
	gemmTileGo(k, a, lda, b, c, ldc)
}

// hasFastKernel reports whether an assembly micro-kernel is in use.
const hasFastKernel = false
