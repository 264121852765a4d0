package rvfit

import (
	"math"
	"math/bits"
	"math/cmplx"

	"spotsift/internal/worker"
)

// nufftSpread is the half-width (grid points each side) of the Gaussian
// spreading kernel, and nufftRatio the oversampling of the FFT grid.
// (Greengard & Lee 2004, SIAM Rev. 46, 443, from memory). The FFT length
// is the next power of two above 1.25 M, so 1.25 ≤ R < 2.5; with 16 points
// per side the measured power errors are ≲ 3e-10 (gls_test.go).
const (
	nufftSpread = 16
	nufftRatio  = 1.25
)

// nufftPlan evaluates type-1 sums
//
//	F_q(k) = Σ_i c_q,i e^{i k x_i},  k = kLo, …, kLo+M−1
//
// for several coefficient vectors q sharing the same points x_i, by
// spreading onto an oversampled grid with a periodised Gaussian, one FFT
// per vector, and deconvolution:
//
//	F(k) ≈ √(π/τ) e^{k²τ} (1/M_r) Σ_m f_τ(2πm/M_r) e^{i k 2πm/M_r}
//	τ = π·Msp / (M² R (R − ½))
type nufftPlan struct {
	m, mr int
	tau   float64
	kLo   int
}

func newNUFFTPlan(m int) *nufftPlan {
	// Centre the modes: k ∈ [−h, M−h).
	p := &nufftPlan{m: m, kLo: -(m / 2)}
	p.mr = 1 << bits.Len(uint(max(int(math.Ceil(nufftRatio*float64(m))), 4*nufftSpread)-1))
	r := float64(p.mr) / float64(m)
	p.tau = math.Pi * nufftSpread / (float64(m) * float64(m) * r * (r - 0.5))
	return p
}

// transform returns F_q(k) for k = kLo+j, j = 0..M−1, for every coefficient
// vector in c, the FFTs running on nw goroutines.
func (p *nufftPlan) transform(x []float64, c [][]complex128, nw int) [][]complex128 {
	nq := len(c)
	grids := make([][]complex128, nq)
	for q := range grids {
		grids[q] = make([]complex128, p.mr)
	}
	h := 2 * math.Pi / float64(p.mr)
	inv4t := 1 / (4 * p.tau)
	// E3[l] = exp(−(l h)²/(4τ)) for l = −Msp+1..Msp.
	var e3 [2 * nufftSpread]float64
	for l := -nufftSpread + 1; l <= nufftSpread; l++ {
		e3[l+nufftSpread-1] = math.Exp(-float64(l*l) * h * h * inv4t)
	}
	for i, xi := range x {
		xi = math.Mod(xi, 2*math.Pi)
		if xi < 0 {
			xi += 2 * math.Pi
		}
		m0 := int(xi / h)
		xi0 := xi - float64(m0)*h
		// Fast Gaussian gridding: exp(−(ξ−lh)²/4τ) = E1·E2^l·E3(l).
		e1 := math.Exp(-xi0 * xi0 * inv4t)
		e2 := math.Exp(xi0 * h * 2 * inv4t)
		var wgt [2 * nufftSpread]float64
		pw := e1
		for l := 0; l <= nufftSpread; l++ {
			wgt[l+nufftSpread-1] = pw * e3[l+nufftSpread-1]
			pw *= e2
		}
		pw = e1 / e2
		for l := -1; l > -nufftSpread; l-- {
			wgt[l+nufftSpread-1] = pw * e3[l+nufftSpread-1]
			pw /= e2
		}
		for q := 0; q < nq; q++ {
			ci := c[q][i]
			if ci == 0 {
				continue
			}
			gq := grids[q]
			for l := -nufftSpread + 1; l <= nufftSpread; l++ {
				m := m0 + l
				if m < 0 {
					m += p.mr
				} else if m >= p.mr {
					m -= p.mr
				}
				gq[m] += ci * complex(wgt[l+nufftSpread-1], 0)
			}
		}
	}
	out := make([][]complex128, nq)
	var wg worker.Group
	jobs := make(chan int)
	for w := 0; w < min(nw, nq); w++ {
		wg.Go(func() {
			for q := range jobs {
				g := grids[q]
				fftPlus(g) // Σ_m g_m e^{+2πi k m/M_r}
				res := make([]complex128, p.m)
				norm := math.Sqrt(math.Pi/p.tau) / float64(p.mr)
				for j := range res {
					k := p.kLo + j
					idx := k
					if idx < 0 {
						idx += p.mr
					}
					res[j] = g[idx] * complex(norm*math.Exp(float64(k*k)*p.tau), 0)
				}
				out[q] = res
			}
		})
	}
	wg.Feed(jobs, nq)
	wg.Rethrow()
	return out
}

// fastSums fills the GLS sums with the NUFFT: for f_k = f0 + kΔf,
//
//	Σ c_i e^{i2πf_k t_i} = Σ (c_i e^{i2π(f0 + hΔf) t_i}) e^{i(k−h)x_i},
//	x_i = 2πΔf t_i,
//
// and the squared terms use the doubled frequencies 2f_k (points 2x_i).
func (d *glsData) fastSums(g Grid, nw int) *glsSums {
	n := len(d.t)
	p := newNUFFTPlan(g.N)
	shift := g.FMin - float64(p.kLo)*g.DF // frequency of mode k − h = 0 ... k = 0 ↔ kLo
	x := make([]float64, n)
	x2 := make([]float64, n)
	coef := make([][]complex128, d.nInst+1)
	for q := range coef {
		coef[q] = make([]complex128, n)
	}
	coef2 := [][]complex128{make([]complex128, n)}
	for i, ti := range d.t {
		x[i] = math.Mod(2*math.Pi*g.DF*ti, 2*math.Pi)
		x2[i] = math.Mod(4*math.Pi*g.DF*ti, 2*math.Pi)
		ph := cmplx.Exp(complex(0, math.Mod(2*math.Pi*shift*ti, 2*math.Pi)))
		ph2 := cmplx.Exp(complex(0, math.Mod(4*math.Pi*shift*ti, 2*math.Pi)))
		w := d.w[i]
		coef[d.inst[i]][i] = complex(w, 0) * ph
		coef[d.nInst][i] = complex(w*d.y[i], 0) * ph
		coef2[0][i] = complex(w, 0) * ph2
	}
	// Both point sets in one batch would need two plans; run them as two
	// transforms, the first with nInst+1 vectors.
	var F, F2 [][]complex128
	if nw > 1 && d.nInst == 1 {
		var wg worker.Group
		wg.Go(func() { F2 = p.transform(x2, coef2, 1) })
		F = p.transform(x, coef, nw-1)
		wg.Rethrow()
	} else {
		F = p.transform(x, coef, nw)
		F2 = p.transform(x2, coef2, nw)
	}
	s := newGLSSums(d.nInst, g.N)
	Wt := 0.0
	for _, w := range d.w {
		Wt += w
	}
	for k := 0; k < g.N; k++ {
		for j := 0; j < d.nInst; j++ {
			s.C[j][k] = real(F[j][k])
			s.S[j][k] = imag(F[j][k])
		}
		s.YC[k] = real(F[d.nInst][k])
		s.YS[k] = imag(F[d.nInst][k])
		s.CC[k] = 0.5 * (Wt + real(F2[0][k]))
		s.CS[k] = 0.5 * imag(F2[0][k])
	}
	return s
}
