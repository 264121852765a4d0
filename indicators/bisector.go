package indicators

import (
	"fmt"
	"math"
)

// BisectorOptions set the depth zones of the bisector span. A nil
// *BisectorOptions means the zero value: zones 10–40 % and 60–90 % of the
// line depth, sampled every 1 %.
type BisectorOptions struct {
	// TopLo, TopHi bound the upper zone and BottomLo, BottomHi the lower
	// zone, as fractions of the line depth measured from the continuum
	// (0 continuum, 1 core). Zero values mean 0.10, 0.40, 0.60 and 0.90
	// (Queloz et al. 2001; some authors use 0.55 for BottomLo). Each must
	// lie in (0, 1) with Lo < Hi.
	TopLo, TopHi, BottomLo, BottomHi float64
	// Step is the spacing of the depth levels inside each zone; zero means
	// 0.01. Levels run from Lo to Hi inclusive, so the zone mean is the
	// trapezoid-free discrete mean over ⌊(Hi − Lo)/Step⌋ + 1 levels.
	Step float64
}

func (o *BisectorOptions) withDefaults() (BisectorOptions, error) {
	var b BisectorOptions
	if o != nil {
		b = *o
	}
	def := func(x *float64, v float64) {
		if *x == 0 {
			*x = v
		}
	}
	def(&b.TopLo, 0.10)
	def(&b.TopHi, 0.40)
	def(&b.BottomLo, 0.60)
	def(&b.BottomHi, 0.90)
	def(&b.Step, 0.01)
	ok := func(lo, hi float64) bool { return lo > 0 && hi < 1 && lo < hi }
	if !ok(b.TopLo, b.TopHi) || !ok(b.BottomLo, b.BottomHi) || !(b.Step > 0) || b.Step > 0.5 {
		return b, fmt.Errorf("%w: bisector zones %+v", ErrBadParameter, b)
	}
	return b, nil
}

// levels returns the depth levels of a zone.
func zoneLevels(lo, hi, step float64) []float64 {
	n := int(math.Floor((hi-lo)/step+1e-9)) + 1
	out := make([]float64, n)
	for i := range out {
		out[i] = lo + float64(i)*step
	}
	return out
}

// Bisector returns the bisector of an absorption profile f(v) normalised to
// a continuum of 1 with core depth D: for each fractional depth d (0 at the
// continuum, 1 at the core), the flux level 1 − d·D is crossed at v_L(d) on
// the blue side and v_R(d) on the red side of the lowest point (linear
// interpolation between samples), and
//
//	b(d) = (v_L(d) + v_R(d))/2.
//
// v must be increasing. A level that the profile does not reach on both
// sides gives an error wrapping ErrNoLine.
func Bisector(v, f []float64, depth float64, d []float64) ([]float64, error) {
	if len(v) != len(f) {
		return nil, ErrMismatch
	}
	if len(v) < 3 || !(depth > 0) {
		return nil, fmt.Errorf("%w: profile of %d points, depth %v", ErrNoLine, len(v), depth)
	}
	core := 0
	for i := range f {
		if f[i] < f[core] {
			core = i
		}
	}
	out := make([]float64, len(d))
	for j, dj := range d {
		y := 1 - dj*depth
		l := core
		for l > 0 && f[l] < y {
			l--
		}
		r := core
		for r < len(f)-1 && f[r] < y {
			r++
		}
		if f[l] < y || f[r] < y || l == core || r == core {
			return nil, fmt.Errorf("%w: depth level %.3g not crossed on both sides", ErrNoLine, dj)
		}
		// Crossing between l and l+1 (blue), r−1 and r (red).
		vl := crossing(v, f, l, y)
		vr := crossing(v, f, r-1, y)
		out[j] = 0.5 * (vl + vr)
	}
	return out, nil
}

// BIS returns the bisector span (bisector inverse slope) of a normalised
// profile f(v) with core depth D (Queloz et al. 2001, A&A 379, 279):
//
//	BIS = mean b(d) over the top zone − mean b(d) over the bottom zone,
//
// with the zones of opts (nil: 10–40 % and 60–90 %). BIS > 0 when the upper
// bisector is redder than the lower part. Units are those of v.
func BIS(v, f []float64, depth float64, opts *BisectorOptions) (float64, error) {
	o, err := opts.withDefaults()
	if err != nil {
		return 0, err
	}
	top, err := Bisector(v, f, depth, zoneLevels(o.TopLo, o.TopHi, o.Step))
	if err != nil {
		return 0, err
	}
	bot, err := Bisector(v, f, depth, zoneLevels(o.BottomLo, o.BottomHi, o.Step))
	if err != nil {
		return 0, err
	}
	return mean(top) - mean(bot), nil
}

func mean(x []float64) float64 {
	var s float64
	for _, v := range x {
		s += v
	}
	return s / float64(len(x))
}

// crossing returns the velocity between v[i] and v[i+1] where the profile
// crosses the level y, from the cubic through the four samples i−1 … i+2
// (the straight line through i and i+1 at the ends of the profile). Cubic
// interpolation makes the bisector of a sampled symmetric profile vanish to
// O(h⁴) instead of O(h²) in the sampling step h, whatever the phase of the
// samples.
func crossing(v, f []float64, i int, y float64) float64 {
	t := (y - f[i]) / (f[i+1] - f[i]) // linear estimate in [0, 1]
	if i == 0 || i+2 >= len(f) {
		return v[i] + t*(v[i+1]-v[i])
	}
	// Catmull–Rom-free Lagrange cubic on the uniform parameter t of nodes
	// −1, 0, 1, 2.
	p0, p1, p2, p3 := f[i-1], f[i], f[i+1], f[i+2]
	poly := func(t float64) (float64, float64) {
		a := -p0/6 + p1/2 - p2/2 + p3/6
		b := p0/2 - p1 + p2/2
		c := -p0/3 - p1/2 + p2 - p3/6
		return ((a*t+b)*t+c)*t + p1, (3*a*t+2*b)*t + c
	}
	lo, hi := 0.0, 1.0
	for it := 0; it < 40; it++ {
		val, der := poly(t)
		r := val - y
		// Keep a bracket, as the cubic is monotone between the two samples
		// for any reasonable profile; fall back to bisection otherwise.
		if (r < 0) == (f[i+1] > f[i]) {
			lo = t
		} else {
			hi = t
		}
		nt := t - r/der
		if der == 0 || nt <= lo || nt >= hi || math.IsNaN(nt) {
			nt = 0.5 * (lo + hi)
		}
		if math.Abs(nt-t) < 1e-13 {
			t = nt
			break
		}
		t = nt
	}
	// v is uniform (or nearly); interpolate it linearly in t.
	return v[i] + t*(v[i+1]-v[i])
}

// crossingGrad is crossing with derivatives: it returns the crossing
// velocity, the index j0 of the first of the four samples it depends on,
// ∂v/∂f[j0+m] for m = 0…3 and ∂v/∂y (implicit differentiation of
// p(t) = y).
func crossingGrad(v, f []float64, i int, y float64) (vc float64, j0 int, df [4]float64, dy float64) {
	dv := v[i+1] - v[i]
	if i == 0 || i+2 >= len(f) {
		t := (y - f[i]) / (f[i+1] - f[i])
		d := f[i+1] - f[i]
		// v = v_i + t·dv, t = (y − f_i)/(f_{i+1} − f_i).
		df[0] = dv * (-(1 - t) / d)
		df[1] = dv * (-t / d)
		return v[i] + t*dv, i, df, dv / d
	}
	vc = crossing(v, f, i, y)
	t := (vc - v[i]) / dv
	p0, p1, p2, p3 := f[i-1], f[i], f[i+1], f[i+2]
	a := -p0/6 + p1/2 - p2/2 + p3/6
	b := p0/2 - p1 + p2/2
	c := -p0/3 - p1/2 + p2 - p3/6
	der := (3*a*t+2*b)*t + c
	l := [4]float64{
		-t * (t - 1) * (t - 2) / 6,
		(t + 1) * (t - 1) * (t - 2) / 2,
		-(t + 1) * t * (t - 2) / 2,
		(t + 1) * t * (t - 1) / 6,
	}
	for m := range l {
		df[m] = -dv * l[m] / der
	}
	return vc, i - 1, df, dv / der
}

// bisGrad returns BIS (as BIS does), its gradient with respect to each
// value of the normalised profile f, and its derivative with respect to the
// depth D (through the levels 1 − d·D).
func bisGrad(v, f []float64, depth float64, opts *BisectorOptions) (float64, []float64, float64, error) {
	o, err := opts.withDefaults()
	if err != nil {
		return 0, nil, 0, err
	}
	if len(v) != len(f) || len(v) < 3 || !(depth > 0) {
		return 0, nil, 0, fmt.Errorf("%w: profile of %d points, depth %v", ErrNoLine, len(v), depth)
	}
	core := 0
	for i := range f {
		if f[i] < f[core] {
			core = i
		}
	}
	gf := make([]float64, len(f))
	var bis, dD float64
	for z, zone := range [][]float64{zoneLevels(o.TopLo, o.TopHi, o.Step), zoneLevels(o.BottomLo, o.BottomHi, o.Step)} {
		sign := 1.0
		if z == 1 {
			sign = -1
		}
		coef := sign * 0.5 / float64(len(zone))
		for _, dj := range zone {
			y := 1 - dj*depth
			l := core
			for l > 0 && f[l] < y {
				l--
			}
			r := core
			for r < len(f)-1 && f[r] < y {
				r++
			}
			if f[l] < y || f[r] < y || l == core || r == core {
				return 0, nil, 0, fmt.Errorf("%w: depth level %.3g not crossed on both sides", ErrNoLine, dj)
			}
			vl, jl, dfl, dyl := crossingGrad(v, f, l, y)
			vr, jr, dfr, dyr := crossingGrad(v, f, r-1, y)
			bis += coef * (vl + vr)
			for m := 0; m < 4; m++ {
				if jl+m >= 0 && jl+m < len(f) {
					gf[jl+m] += coef * dfl[m]
				}
				if jr+m >= 0 && jr+m < len(f) {
					gf[jr+m] += coef * dfr[m]
				}
			}
			dD += coef * (dyl + dyr) * (-dj)
		}
	}
	return bis, gf, dD, nil
}
