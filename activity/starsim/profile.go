package starsim

import (
	"fmt"
	"math"
)

// Profile is a disk-integrated line profile on a uniform velocity grid,
// normalised to a continuum of 1.
type Profile struct {
	// Velocity holds the grid in km/s, uniform and increasing.
	Velocity []float64
	// Flux holds the normalised flux, 1 − depth·A(v).
	Flux []float64
}

// GaussFit is a Gaussian fitted to an absorption profile,
//
//	F(v) = C0 − A exp(−(v − V0)²/(2σ²))
type GaussFit struct {
	C0, A  float64 // continuum and depth (normalised flux units)
	V0     float64 // centre, km/s
	Sigma  float64 // km/s
	Chi2   float64 // sum of squared residuals
	Rounds int     // Gauss–Newton iterations used
}

// FWHM returns 2√(2 ln 2) σ in km/s.
func (g GaussFit) FWHM() float64 { return fwhmSig * g.Sigma }

// Contrast returns A/C0.
func (g GaussFit) Contrast() float64 { return g.A / g.C0 }

// FitGaussian fits F(v) = C0 − A exp(−(v − V0)²/(2σ²)) to the profile by
// least squares (Gauss–Newton with Levenberg damping, started from the
// moments of 1 − F), as a cross-correlation function is fitted for its RV,
// FWHM and contrast (Baranne et al. 1996, A&AS 119, 373; from memory).
//
// It returns an error wrapping ErrFit when the profile has no absorption or
// the fit does not converge in 100 rounds.
func FitGaussian(p *Profile) (GaussFit, error) {
	v, f := p.Velocity, p.Flux
	var s0, s1, s2 float64
	for i := range v {
		a := 1 - f[i]
		if a > 0 {
			s0 += a
			s1 += a * v[i]
		}
	}
	if !(s0 > 0) {
		return GaussFit{}, fmt.Errorf("%w: no absorption", ErrFit)
	}
	m := s1 / s0
	fmin := math.Inf(1)
	for i := range v {
		a := 1 - f[i]
		if a > 0 {
			s2 += a * (v[i] - m) * (v[i] - m)
		}
		fmin = math.Min(fmin, f[i])
	}
	x := [4]float64{1, 1 - fmin, m, math.Sqrt(s2 / s0)}
	chi2 := func(x [4]float64) float64 {
		var c float64
		for i := range v {
			u := (v[i] - x[2]) / x[3]
			r := f[i] - (x[0] - x[1]*math.Exp(-0.5*u*u))
			c += r * r
		}
		return c
	}
	cur := chi2(x)
	lambda := 1e-3
	for round := 1; round <= 100; round++ {
		var JtJ [4][4]float64
		var Jtr [4]float64
		for i := range v {
			u := (v[i] - x[2]) / x[3]
			e := math.Exp(-0.5 * u * u)
			r := f[i] - (x[0] - x[1]*e)
			J := [4]float64{1, -e, -x[1] * e * u / x[3], -x[1] * e * u * u / x[3]}
			for a := 0; a < 4; a++ {
				Jtr[a] += J[a] * r
				for b := 0; b < 4; b++ {
					JtJ[a][b] += J[a] * J[b]
				}
			}
		}
		improved := false
		for try := 0; try < 20; try++ {
			var M [4][4]float64
			for a := 0; a < 4; a++ {
				M[a] = JtJ[a]
				M[a][a] *= 1 + lambda
			}
			dx, ok := solve4(M, Jtr)
			if !ok {
				lambda *= 10
				continue
			}
			var y [4]float64
			for a := range y {
				y[a] = x[a] + dx[a]
			}
			if y[3] <= 0 {
				lambda *= 10
				continue
			}
			if c := chi2(y); c <= cur {
				small := math.Abs(dx[2]) < 1e-12*math.Max(1, y[3]) && math.Abs(dx[3]) < 1e-12*y[3]
				x, cur = y, c
				lambda = math.Max(lambda/10, 1e-12)
				improved = true
				if small {
					return GaussFit{C0: x[0], A: x[1], V0: x[2], Sigma: x[3], Chi2: cur, Rounds: round}, nil
				}
				break
			}
			lambda *= 10
		}
		if !improved {
			// No step lowers χ²: at the minimum to rounding.
			return GaussFit{C0: x[0], A: x[1], V0: x[2], Sigma: x[3], Chi2: cur, Rounds: round}, nil
		}
	}
	return GaussFit{}, fmt.Errorf("%w: no convergence in 100 rounds", ErrFit)
}

// solve4 solves M x = b by Gaussian elimination with partial pivoting.
func solve4(M [4][4]float64, b [4]float64) ([4]float64, bool) {
	for c := 0; c < 4; c++ {
		p := c
		for r := c + 1; r < 4; r++ {
			if math.Abs(M[r][c]) > math.Abs(M[p][c]) {
				p = r
			}
		}
		if M[p][c] == 0 {
			return b, false
		}
		M[c], M[p] = M[p], M[c]
		b[c], b[p] = b[p], b[c]
		for r := c + 1; r < 4; r++ {
			k := M[r][c] / M[c][c]
			for j := c; j < 4; j++ {
				M[r][j] -= k * M[c][j]
			}
			b[r] -= k * b[c]
		}
	}
	var x [4]float64
	for r := 3; r >= 0; r-- {
		s := b[r]
		for j := r + 1; j < 4; j++ {
			s -= M[r][j] * x[j]
		}
		x[r] = s / M[r][r]
	}
	return x, true
}

// Bisector returns the bisector velocity (km/s) at the fractional depth d
// measured from the continuum (d = 0 continuum, 1 core): the mid-point of
// the two velocities where the profile crosses 1 − d·D, D = 1 − min F,
// found by linear interpolation outward from the core (docs/methods.md §3). It
// returns NaN when a side never reaches that level.
func (p *Profile) Bisector(d float64) float64 {
	v, f := p.Velocity, p.Flux
	imin := 0
	for i := range f {
		if f[i] < f[imin] {
			imin = i
		}
	}
	D := 1 - f[imin]
	level := 1 - d*D
	left, right := math.NaN(), math.NaN()
	for i := imin; i > 0; i-- {
		if f[i-1] >= level {
			t := (level - f[i]) / (f[i-1] - f[i])
			left = v[i] + t*(v[i-1]-v[i])
			break
		}
	}
	for i := imin; i < len(f)-1; i++ {
		if f[i+1] >= level {
			t := (level - f[i]) / (f[i+1] - f[i])
			right = v[i] + t*(v[i+1]-v[i])
			break
		}
	}
	return (left + right) / 2
}

// BIS returns the bisector inverse slope in km/s: the mean bisector over
// depths [0.10, 0.40] minus the mean over [0.60, 0.90], each zone sampled
// at 31 evenly spaced depths (Queloz et al. 2001, A&A 379, 279; zone limits
// from memory, docs/methods.md §3). BIS > 0 when the upper bisector is redder.
func (p *Profile) BIS() float64 {
	zone := func(lo, hi float64) float64 {
		const n = 31
		var s float64
		for k := 0; k < n; k++ {
			s += p.Bisector(lo + (hi-lo)*float64(k)/(n-1))
		}
		return s / n
	}
	return zone(0.10, 0.40) - zone(0.60, 0.90)
}
