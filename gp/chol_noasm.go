package gp

func gemmTile(k int, a []float64, lda int, b []float64, c []float64, ldc int) {
	gemmTileGo(k, a, lda, b, c, ldc)
}
