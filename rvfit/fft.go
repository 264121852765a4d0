package rvfit

import (
	"math"
	"math/bits"
)

// fftPlus computes in place the unnormalised discrete Fourier sum with a
// positive exponent,
//
//	X_k = Σ_m x_m e^{+2πi k m/n},  n = len(x) a power of two,
//
// by the iterative radix-2 Cooley–Tukey algorithm (bit-reversal permutation
// then log₂ n butterfly passes with a precomputed twiddle table). It is
// the FFT of the fast periodogram; it panics if n is not a power of two.
func fftPlus(x []complex128) {
	n := len(x)
	if n&(n-1) != 0 || n == 0 {
		panic("rvfit: fft length not a power of two")
	}
	if n == 1 {
		return
	}
	shift := 64 - bits.TrailingZeros(uint(n))
	for i := 0; i < n; i++ {
		j := int(bits.Reverse64(uint64(i)) >> shift)
		if j > i {
			x[i], x[j] = x[j], x[i]
		}
	}
	// tw[k] = e^{2πi k/n}, k < n/2, computed directly (no recurrence drift).
	tw := make([]complex128, n/2)
	for k := range tw {
		s, c := math.Sincos(2 * math.Pi * float64(k) / float64(n))
		tw[k] = complex(c, s)
	}
	for size := 2; size <= n; size <<= 1 {
		half := size >> 1
		step := n / size
		for start := 0; start < n; start += size {
			a := x[start : start+half]
			b := x[start+half : start+size]
			for k := range a {
				t := b[k] * tw[k*step]
				b[k] = a[k] - t
				a[k] += t
			}
		}
	}
}
