// Package rvtest generates synthetic radial-velocity data sets for the tests
// and benchmarks of rvfit and its users: realistic ground-based sampling,
// Keplerian signals and white noise. It does not import rvfit, so its
// Keplerian model (Newton's method on Kepler's equation) is an independent
// check of rvfit's.
package rvtest

import (
	"math"
	"math/rand/v2"
	"sort"
	"testing"
)

// Planet is one Keplerian signal: period P (d), semi-amplitude K (m/s),
// eccentricity E, argument of periastron Omega of the star's orbit (rad)
// and time of periastron Tp (d).
type Planet struct {
	P, K, E, Omega, Tp float64
}

// RV returns the planet's radial velocity (m/s) at time t (d),
// v = K[cos(ν+ω) + e cos ω], solving Kepler's equation by Newton's method
// to |ΔE| < 1e-15 (Danby 1988 starter, from memory).
func (p Planet) RV(t float64) float64 {
	M := math.Mod(2*math.Pi*(t-p.Tp)/p.P, 2*math.Pi)
	E := M + 0.85*p.E*math.Copysign(1, math.Sin(M))
	for i := 0; i < 200; i++ {
		dE := (E - p.E*math.Sin(E) - M) / (1 - p.E*math.Cos(E))
		E -= dE
		if math.Abs(dE) < 1e-15 {
			break
		}
	}
	nu := 2 * math.Atan2(math.Sqrt(1+p.E)*math.Sin(E/2), math.Sqrt(1-p.E)*math.Cos(E/2))
	return p.K * (math.Cos(nu+p.Omega) + p.E*math.Cos(p.Omega))
}

// NightlyTimes returns n sorted epochs (BJD_TDB d) starting near t0,
// spread over baseline days as a ground-based observer would take them: at
// most one per night, near the same sidereal time (which drifts by about
// 4 minutes per solar day), with a seasonal gap of a third of each year
// and random nights lost. rng drives all choices.
func NightlyTimes(rng *rand.Rand, n int, t0, baseline float64) []float64 {
	nights := int(baseline)
	var cand []float64
	for d := 0; d < nights; d++ {
		// Seasonal visibility: the target is up 8 months of each year.
		phase := math.Mod(float64(d), 365.25) / 365.25
		if phase > 2.0/3 {
			continue
		}
		// Same sidereal time each night: one epoch per sidereal day
		// (0.99726957 d), give or take an hour.
		cand = append(cand, t0+float64(d)*0.99726957+0.08*(rng.Float64()-0.5))
	}
	rng.Shuffle(len(cand), func(i, j int) { cand[i], cand[j] = cand[j], cand[i] })
	if n > len(cand) {
		n = len(cand)
	}
	out := append([]float64(nil), cand[:n]...)
	sort.Float64s(out)
	return out
}

// Synthetic returns velocities at times t: the sum of the planets' signals
// plus offset, plus Gaussian noise of standard deviation
// sqrt(sigma² + jitter²) per epoch; it also returns the per-epoch errors
// sigma (all equal to the sigma given).
func Synthetic(rng *rand.Rand, t []float64, planets []Planet, offset, sigma, jitter float64) (rv, rvErr []float64) {
	rv = make([]float64, len(t))
	rvErr = make([]float64, len(t))
	sd := math.Sqrt(sigma*sigma + jitter*jitter)
	for i, ti := range t {
		v := offset
		for _, p := range planets {
			v += p.RV(ti)
		}
		rv[i] = v + sd*rng.NormFloat64()
		rvErr[i] = sigma
	}
	return rv, rvErr
}

// BenchSeries returns the deterministic n-epoch series of the GLS
// benchmark (identical to the "large" set of
// testdata/rvfit/make_gls_ref.py): golden-ratio times over 2000 d from
// BJD 2458000, errors in [1, 2) m/s and two sinusoids plus a
// pseudo-random term.
func BenchSeries(n int) (t, y, dy []float64) {
	t = make([]float64, n)
	y = make([]float64, n)
	dy = make([]float64, n)
	for i := range t {
		fi := float64(i)
		tt := 2000 * math.Mod(fi*0.6180339887498949, 1)
		t[i] = 2458000 + tt
		dy[i] = 1 + math.Mod(fi*0.7548776662466927, 1)
		y[i] = 3*math.Sin(2*math.Pi*tt/23.7) + 1.5*math.Cos(2*math.Pi*tt/3.1+0.3) + math.Sin(12.9898*fi)*2
	}
	return t, y, dy
}

// CheckGradient compares grad, the analytic gradient of f at x, with
// Richardson-extrapolated central differences of f (steps h_i and h_i/2,
// h_i = 1e-3·scale[i]; error O(h⁴), common practice) and reports every
// component that differs by more than rel relative to the larger of
// |grad_i| and 1e-3 of the largest component (a component that is zero
// where the others are large is checked against that floor). It returns
// the largest relative difference found.
func CheckGradient(t testing.TB, name string, f func([]float64) float64, grad, x, scale []float64, rel float64) float64 {
	t.Helper()
	gmax := 0.0
	for _, g := range grad {
		gmax = math.Max(gmax, math.Abs(g))
	}
	worst := 0.0
	v := append([]float64(nil), x...)
	d := func(i int, h float64) float64 {
		v[i] = x[i] + h
		fp, hp := f(v), v[i]-x[i] // the step actually taken
		v[i] = x[i] - h
		fm, hm := f(v), x[i]-v[i]
		v[i] = x[i]
		return (fp - fm) / (hp + hm)
	}
	for i := range x {
		h := 1e-3 * scale[i]
		fd := (4*d(i, h/2) - d(i, h)) / 3
		den := math.Max(math.Abs(grad[i]), 1e-3*gmax)
		if den == 0 {
			den = 1
		}
		r := math.Abs(fd-grad[i]) / den
		worst = math.Max(worst, r)
		if r > rel || math.IsNaN(r) {
			t.Errorf("%s: ∂/∂x[%d] analytic %.12g, finite difference %.12g (relative %.2g)", name, i, grad[i], fd, r)
		}
	}
	return worst
}
