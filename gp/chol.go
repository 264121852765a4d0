package gp

import (
	"math"
	"runtime"
	"sync"

	"spotsift/internal/worker"
)

// cholesky holds the lower Cholesky factor L of an n×n symmetric positive
// definite matrix, A = L Lᵀ, stored row-major in a with row stride ld.
// Only the lower triangle (j ≤ i) is meaningful; the rest is scratch.
//
// The factorisation is a right-looking blocked algorithm (Golub & Van Loan
// 2013, Matrix Computations, 4th ed., §4.2.9, from memory): factor a
// diagonal block, solve for the panel below it, and update the trailing
// matrix with a packed, register-blocked rank-nb product, which is where
// almost all of the n³/3 flops go.
type cholesky struct {
	n, ld int
	a     []float64
}

const (
	cholNB = 48 // block width; tuned for n = 500..2000 (see BenchmarkCholesky)
	cholMR = 4  // micro-kernel rows
	cholNR = 8  // micro-kernel columns
)

// newCholeskyBuffer returns a zeroed buffer for an n×n matrix whose
// padding lets the micro-kernel run over whole tiles.
func newCholeskyBuffer(n int) *cholesky {
	ld := (n + cholNR - 1) / cholNR * cholNR
	rows := (n + cholMR - 1) / cholMR * cholMR
	if ld < cholNR {
		ld = cholNR
	}
	return &cholesky{n: n, ld: ld, a: make([]float64, rows*ld+cholNR)}
}

// at returns L[i,j] for j ≤ i.
func (c *cholesky) at(i, j int) float64 { return c.a[i*c.ld+j] }

// factor overwrites the lower triangle of c.a (holding A) with L. It
// reports false if A is not positive definite, leaving c.a partly
// overwritten.
func (c *cholesky) factor() bool {
	n, ld, a := c.n, c.ld, c.a
	// Below this size goroutines cost more than they save, and callers
	// (fits, Monte Carlo loops) are often parallel already.
	par := parallelRows
	if n < cholParallelMin {
		par = serialRows
	}
	nb := cholNB
	var pack, packJ []float64
	invDiag := make([]float64, nb)
	for j0 := 0; j0 < n; j0 += nb {
		j1 := min(j0+nb, n)
		w := j1 - j0
		// Diagonal block, unblocked (its trailing updates were applied).
		for j := j0; j < j1; j++ {
			rj := a[j*ld+j0 : j*ld+j]
			d := a[j*ld+j] - dot(rj, rj)
			if !(d > 0) || math.IsInf(d, 0) {
				return false
			}
			d = math.Sqrt(d)
			a[j*ld+j] = d
			inv := 1 / d
			for i := j + 1; i < j1; i++ {
				ri := a[i*ld+j0 : i*ld+j]
				a[i*ld+j] = (a[i*ld+j] - dot(ri, rj)) * inv
			}
		}
		if j1 == n {
			break
		}
		// Panel: L[i, j0:j1] = A[i, j0:j1] L_JJ^-T for i ≥ j1, by 4-row
		// tiles and 8-column steps: the update from earlier columns of
		// the panel goes through the micro-kernel, leaving only 8×8
		// triangular solves (w is a multiple of cholNR here).
		if cap(packJ) < w*w {
			packJ = make([]float64, w*w)
		}
		packJ = packJ[:w*w]
		packPanel(packJ, a, ld, j0, j1, j0, w)
		for jj := 0; jj < w; jj++ {
			invDiag[jj] = 1 / a[(j0+jj)*ld+j0+jj]
		}
		rowTiles := (n - j1 + cholMR - 1) / cholMR
		par(0, rowTiles, 4, func(t0, t1 int) {
			for t := t0; t < t1; t++ {
				i := j1 + t*cholMR
				for q := 0; q < w; q += cholNR {
					if q > 0 {
						gemmTile(q, a[i*ld+j0:], ld, packJ[q*w:], a[i*ld+j0+q:], ld)
					}
					// 8×8 triangular solve for the tile's four rows.
					r0 := a[i*ld+j0 : i*ld+j1]
					r1 := a[(i+1)*ld+j0 : (i+1)*ld+j1]
					r2 := a[(i+2)*ld+j0 : (i+2)*ld+j1]
					r3 := a[(i+3)*ld+j0 : (i+3)*ld+j1]
					for jj := q; jj < q+cholNR; jj++ {
						rj := a[(j0+jj)*ld+j0 : (j0+jj)*ld+j0+jj]
						s0, s1, s2, s3 := r0[jj], r1[jj], r2[jj], r3[jj]
						for p := q; p < jj; p++ {
							l := rj[p]
							s0 -= r0[p] * l
							s1 -= r1[p] * l
							s2 -= r2[p] * l
							s3 -= r3[p] * l
						}
						inv := invDiag[jj]
						r0[jj], r1[jj], r2[jj], r3[jj] = s0*inv, s1*inv, s2*inv, s3*inv
					}
				}
			}
		})
		// Trailing update: A[i, k] -= Σ_p L[i, p] L[k, p] over the panel,
		// for j1 ≤ k ≤ i (tiles crossing the diagonal also write the
		// unused upper triangle).
		m := n - j1
		mp := (m + cholNR - 1) / cholNR * cholNR
		if cap(pack) < mp*w {
			pack = make([]float64, mp*w)
		}
		pack = pack[:mp*w]
		packPanel(pack, a, ld, j1, n, j0, w)
		par(0, rowTiles, 8, func(t0, t1 int) {
			for t := t0; t < t1; t++ {
				i := j1 + t*cholMR
				// Columns up to the tile's last row.
				last := min(i+cholMR, n) - j1
				for cb := 0; cb < last; cb += cholNR {
					gemmTile(w, a[i*ld+j0:], ld, pack[cb*w:], a[i*ld+j1+cb:], ld)
				}
			}
		})
	}
	return true
}

// packPanel copies rows r0..r1 of columns c0..c0+w of a into pack as
// column blocks of cholNR: pack[(blk*w + p)*cholNR + q] = a[r0+blk*cholNR+q, c0+p];
// missing rows past r1 are zero.
func packPanel(pack, a []float64, ld, r0, r1, c0, w int) {
	m := r1 - r0
	for blk := 0; blk*cholNR < m; blk++ {
		base := blk * cholNR * w
		for q := 0; q < cholNR; q++ {
			r := r0 + blk*cholNR + q
			if r >= r1 {
				for p := 0; p < w; p++ {
					pack[base+p*cholNR+q] = 0
				}
				continue
			}
			row := a[r*ld+c0 : r*ld+c0+w]
			for p, v := range row {
				pack[base+p*cholNR+q] = v
			}
		}
	}
}

// gemmTileGo is the portable micro-kernel:
//
//	c[i*ldc + j] -= Σ_p a[i*lda + p] b[p*cholNR + j],  i < cholMR, j < cholNR
func gemmTileGo(k int, a []float64, lda int, b []float64, c []float64, ldc int) {
	var acc [cholMR][cholNR]float64
	a0 := a[:k]
	a1 := a[lda : lda+k]
	a2 := a[2*lda : 2*lda+k]
	a3 := a[3*lda : 3*lda+k]
	for p := 0; p < k; p++ {
		bp := b[p*cholNR : p*cholNR+cholNR : p*cholNR+cholNR]
		x0, x1, x2, x3 := a0[p], a1[p], a2[p], a3[p]
		for j := 0; j < cholNR; j++ {
			bj := bp[j]
			acc[0][j] += x0 * bj
			acc[1][j] += x1 * bj
			acc[2][j] += x2 * bj
			acc[3][j] += x3 * bj
		}
	}
	for i := 0; i < cholMR; i++ {
		ci := c[i*ldc : i*ldc+cholNR]
		for j := range ci {
			ci[j] -= acc[i][j]
		}
	}
}

// cholParallelMin is the smallest matrix factorised on several goroutines.
const cholParallelMin = 320

func serialRows(lo, hi, _ int, f func(a, b int)) { f(lo, hi) }

// parallelRows splits [lo, hi) into chunks for up to GOMAXPROCS
// goroutines when the range is at least minChunk×2 long.
func parallelRows(lo, hi, minChunk int, f func(a, b int)) {
	m := hi - lo
	workers := runtime.GOMAXPROCS(0)
	if workers < 2 || m < 2*minChunk {
		f(lo, hi)
		return
	}
	workers = min(workers, m/minChunk)
	// Interleave chunks so triangular work is balanced.
	chunk := max(minChunk, m/(4*workers))
	var wg worker.Group
	var mu sync.Mutex
	next := lo
	for range workers {
		wg.Go(func() {
			for {
				mu.Lock()
				s := next
				next += chunk
				mu.Unlock()
				if s >= hi {
					return
				}
				f(s, min(s+chunk, hi))
			}
		})
	}
	wg.Rethrow()
}

func dot(x, y []float64) float64 {
	y = y[:len(x)]
	var s0, s1, s2, s3 float64
	i := 0
	for ; i+4 <= len(x); i += 4 {
		s0 += x[i] * y[i]
		s1 += x[i+1] * y[i+1]
		s2 += x[i+2] * y[i+2]
		s3 += x[i+3] * y[i+3]
	}
	for ; i < len(x); i++ {
		s0 += x[i] * y[i]
	}
	return (s0 + s1) + (s2 + s3)
}

// solveLower solves L z = b in place (b becomes z).
func (c *cholesky) solveLower(b []float64) {
	for i := 0; i < c.n; i++ {
		ri := c.a[i*c.ld : i*c.ld+i]
		b[i] = (b[i] - dot(ri, b[:i])) / c.a[i*c.ld+i]
	}
}

// solveUpper solves Lᵀ x = z in place.
func (c *cholesky) solveUpper(b []float64) {
	for i := c.n - 1; i >= 0; i-- {
		b[i] /= c.a[i*c.ld+i]
		bi := b[i]
		ri := c.a[i*c.ld : i*c.ld+i]
		for j, v := range ri {
			b[j] -= v * bi
		}
	}
}

// mulLower returns dst = L z.
func (c *cholesky) mulLower(dst, z []float64) {
	for i := 0; i < c.n; i++ {
		dst[i] = dot(c.a[i*c.ld:i*c.ld+i+1], z[:i+1])
	}
}

// logDet returns ln det A = 2 Σ ln L_ii.
func (c *cholesky) logDet() float64 {
	var s float64
	for i := 0; i < c.n; i++ {
		s += math.Log(c.a[i*c.ld+i])
	}
	return 2 * s
}
