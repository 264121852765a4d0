package rvfit

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sync"

	"spotsift/internal/worker"
)

// EnsembleOptions controls SampleEnsemble. The zero value (or nil) gives
// the defaults.
type EnsembleOptions struct {
	// Steps is the number of ensemble steps; zero means 2000.
	Steps int
	// A is the stretch-move scale a > 1; zero means 2 (Goodman & Weare
	// 2010's standard value, from memory).
	A float64
	// Seed seeds the sampler's single PCG stream.
	Seed uint64
	// Workers is the number of goroutines evaluating log-probabilities;
	// zero means GOMAXPROCS. The chain does not depend on it.
	Workers int
}

// Chain holds an ensemble run: Samples[(step·NWalkers + walker)·Dim + i]
// is parameter i of a walker after a step, LogProb the matching log
// probability.
type Chain struct {
	NWalkers, NSteps, Dim int
	Samples               []float64
	LogProb               []float64
	// AcceptanceFraction is the fraction of accepted proposals.
	AcceptanceFraction float64
}

// At returns the position of walker w after step s (not a copy).
func (c *Chain) At(s, w int) []float64 {
	o := (s*c.NWalkers + w) * c.Dim
	return c.Samples[o : o+c.Dim : o+c.Dim]
}

// Trace returns parameter i as one series per walker, from step burn on,
// every thin-th step.
func (c *Chain) Trace(i, burn, thin int) [][]float64 {
	out := make([][]float64, c.NWalkers)
	for w := range out {
		for s := burn; s < c.NSteps; s += thin {
			out[w] = append(out[w], c.At(s, w)[i])
		}
	}
	return out
}

// SampleEnsemble draws from the density exp(logp) with the affine-invariant
// ensemble sampler of Goodman & Weare (2010, Comm. App. Math. Comp. Sci. 5,
// 65) in its parallel two-half form (Foreman-Mackey et al. 2013, PASP 125,
// 306, from memory; docs/methods.md §9). Each walker X_k of one half moves
// towards or away from a random walker X_j of the other half:
//
//	z = ((a − 1)u + 1)²/a,  u ~ U(0, 1)     (density ∝ 1/√z on [1/a, a])
//	Y = X_j + z (X_k − X_j)
//	accept with probability min(1, z^(d−1) p(Y)/p(X_k))
//
// init holds the starting walkers (an even number ≥ 2·d, all at finite
// log-probability and not all equal); they are copied. All random numbers
// of a half-step are drawn from one stream in walker order before the
// log-probabilities are evaluated in parallel, so the chain is the same
// for any number of workers. logp must be safe for concurrent use.
//
// Errors: ErrBadWalkers for a bad ensemble, ErrBadOption for bad options;
// a panic in logp is returned as an error wrapping worker.ErrPanic (the
// internal package's), not raised.
func SampleEnsemble(logp func([]float64) float64, init [][]float64, opts *EnsembleOptions) (*Chain, error) {
	var o EnsembleOptions
	if opts != nil {
		o = *opts
	}
	if o.Steps == 0 {
		o.Steps = 2000
	}
	if o.A == 0 {
		o.A = 2
	}
	if o.Steps < 0 || !(o.A > 1) {
		return nil, fmt.Errorf("%w: steps %d, a = %g", ErrBadOption, o.Steps, o.A)
	}
	L := len(init)
	if L == 0 {
		return nil, fmt.Errorf("%w: no walkers", ErrBadWalkers)
	}
	d := len(init[0])
	if L%2 != 0 || L < 2*d {
		return nil, fmt.Errorf("%w: %d walkers for %d parameters (want an even number ≥ %d)", ErrBadWalkers, L, d, 2*d)
	}
	c := &Chain{NWalkers: L, NSteps: o.Steps, Dim: d, Samples: make([]float64, o.Steps*L*d), LogProb: make([]float64, o.Steps*L)}
	cur := make([][]float64, L)
	lp := make([]float64, L)
	distinct := false
	for w, x := range init {
		if len(x) != d {
			return nil, fmt.Errorf("%w: walker %d has %d parameters, want %d", ErrBadWalkers, w, len(x), d)
		}
		cur[w] = append([]float64(nil), x...)
		for i := range x {
			if x[i] != init[0][i] {
				distinct = true
			}
		}
	}
	if !distinct {
		return nil, fmt.Errorf("%w: all walkers start at one point", ErrBadWalkers)
	}
	nw := workers(o.Workers)
	evalAll := func(xs [][]float64, dst []float64) error {
		var wg worker.Group
		var next int
		var mu sync.Mutex
		for g := 0; g < min(nw, len(xs)); g++ {
			wg.Go(func() {
				for {
					mu.Lock()
					i := next
					next++
					mu.Unlock()
					if i >= len(xs) {
						return
					}
					dst[i] = logp(xs[i])
				}
			})
		}
		return wg.Wait()
	}
	if err := evalAll(cur, lp); err != nil {
		return nil, fmt.Errorf("the log-probability of the starting walkers: %w", err)
	}
	for w, v := range lp {
		if math.IsInf(v, 0) || math.IsNaN(v) {
			return nil, fmt.Errorf("%w: walker %d starts at log-probability %g", ErrBadWalkers, w, v)
		}
	}
	rng := rand.New(rand.NewPCG(o.Seed, 0x9e3779b97f4a7c15))
	half := L / 2
	prop := make([][]float64, half)
	for i := range prop {
		prop[i] = make([]float64, d)
	}
	plp := make([]float64, half)
	zs := make([]float64, half)
	us := make([]float64, half)
	accepted := 0
	for s := 0; s < o.Steps; s++ {
		for h := 0; h < 2; h++ {
			self, other := h*half, (1-h)*half
			for k := 0; k < half; k++ {
				j := other + rng.IntN(half)
				z := (o.A-1)*rng.Float64() + 1
				z = z * z / o.A
				zs[k] = z
				us[k] = rng.Float64()
				xk, xj := cur[self+k], cur[j]
				for i := 0; i < d; i++ {
					prop[k][i] = xj[i] + z*(xk[i]-xj[i])
				}
			}
			if err := evalAll(prop, plp); err != nil {
				return nil, fmt.Errorf("step %d: the log-probability: %w", s, err)
			}
			for k := 0; k < half; k++ {
				q := float64(d-1)*math.Log(zs[k]) + plp[k] - lp[self+k]
				if !math.IsNaN(q) && math.Log(us[k]) < q {
					copy(cur[self+k], prop[k])
					lp[self+k] = plp[k]
					accepted++
				}
			}
		}
		for w := 0; w < L; w++ {
			copy(c.At(s, w), cur[w])
			c.LogProb[s*L+w] = lp[w]
		}
	}
	if o.Steps > 0 {
		c.AcceptanceFraction = float64(accepted) / float64(o.Steps*L)
	}
	return c, nil
}

// AutocorrTime returns the integrated autocorrelation time of one
// parameter from an ensemble of chains (one per walker, equal lengths):
//
//	ρ(τ) = mean over walkers of the normalised autocorrelation (FFT,
//	       chain means removed)
//	τ_int(M) = 1 + 2 Σ_{τ=1..M} ρ(τ),  M the smallest with M ≥ c·τ_int(M)
//
// (Sokal 1997, NATO ASI B 361, 131; windowing with c = 5 as in the
// automated window of public implementations; docs/methods.md §9). c ≤ 0 means
// 5. It returns the estimate together with an error wrapping
// ErrChainTooShort when the window never closes within the chain or the
// chain is shorter than 50 τ_int (the estimate is then unreliable).
func AutocorrTime(chains [][]float64, c float64) (float64, error) {
	if c <= 0 {
		c = 5
	}
	if len(chains) == 0 || len(chains[0]) < 4 {
		return 0, fmt.Errorf("%w: need at least 4 steps", ErrChainTooShort)
	}
	n := len(chains[0])
	m := 1
	for m < 2*n {
		m <<= 1
	}
	rho := make([]float64, n)
	buf := make([]complex128, m)
	used := 0
	for _, ch := range chains {
		if len(ch) != n {
			return 0, fmt.Errorf("%w: chains of unequal length", ErrMismatch)
		}
		mu := 0.0
		for _, v := range ch {
			mu += v
		}
		mu /= float64(n)
		for i := range buf {
			buf[i] = 0
		}
		for i, v := range ch {
			buf[i] = complex(v-mu, 0)
		}
		fftPlus(buf)
		for i := range buf {
			r, im := real(buf[i]), imag(buf[i])
			buf[i] = complex(r*r+im*im, 0)
		}
		fftPlus(buf) // inverse up to conjugation: the power spectrum is real and even
		acf0 := real(buf[0])
		if acf0 <= 0 {
			continue // a constant chain carries no information
		}
		for t := 0; t < n; t++ {
			rho[t] += real(buf[t]) / acf0
		}
		used++
	}
	if used == 0 {
		return 0, fmt.Errorf("%w: all chains constant", ErrChainTooShort)
	}
	tau := 1.0
	for M := 1; M < n; M++ {
		tau += 2 * rho[M] / float64(used)
		if float64(M) >= c*tau {
			if float64(n) < 50*tau {
				return tau, fmt.Errorf("%w: %d steps is less than 50 τ_int = %.3g", ErrChainTooShort, n, 50*tau)
			}
			return tau, nil
		}
	}
	return tau, fmt.Errorf("%w: autocorrelation window did not close in %d steps (τ ≳ %.3g)", ErrChainTooShort, n, tau)
}

// GelmanRubin returns the potential scale reduction factor R̂ of m ≥ 2
// chains of equal length n ≥ 2:
//
//	B = n/(m−1) Σ_j (θ̄_j − θ̄)²,  W = (1/m) Σ_j s_j²  (s_j² with n−1)
//	V̂ = (n−1)/n W + B/n,  R̂ = sqrt(V̂/W)
//
// (Gelman & Rubin 1992, Stat. Sci. 7, 457, from memory; docs/methods.md §9).
// Values near 1 (below 1.01 for split chains, Vehtari et al. 2021) say the
// chains agree. It returns NaN for fewer than 2 chains or steps.
func GelmanRubin(chains [][]float64) float64 {
	m := len(chains)
	if m < 2 || len(chains[0]) < 2 {
		return math.NaN()
	}
	n := len(chains[0])
	means := make([]float64, m)
	grand := 0.0
	W := 0.0
	for j, ch := range chains {
		if len(ch) != n {
			return math.NaN()
		}
		mu := 0.0
		for _, v := range ch {
			mu += v
		}
		mu /= float64(n)
		means[j] = mu
		grand += mu
		s := 0.0
		for _, v := range ch {
			s += (v - mu) * (v - mu)
		}
		W += s / float64(n-1)
	}
	grand /= float64(m)
	W /= float64(m)
	B := 0.0
	for _, mu := range means {
		B += (mu - grand) * (mu - grand)
	}
	B *= float64(n) / float64(m-1)
	V := float64(n-1)/float64(n)*W + B/float64(n)
	return math.Sqrt(V / W)
}
