package indicators

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"testing"
)

// refCCF is a straightforward implementation of the CCF and of the error
// propagation through it, kept to check the optimised one: pixel edges
// and variances stored for every pixel, every (line, grid step, pixel)
// overlap computed by scanning the pixels from the first of the order,
// and errors propagated through a dense Jacobian, pixel by pixel.
type refCCF struct {
	nk     int
	seg    [][]float64 // segment CCFs
	segVar [][]float64
	// jac[s][x] is ∂CCF_s/∂F_x over the grid, x in the global pixel
	// numbering; sig2 the pixel variances.
	jac  [][][]float64
	sig2 []float64
}

// newRefCCF places the lines as documented for CCF (a line is used in an
// order when its hole lies inside the order at every grid velocity; a
// one-order spectrum is cut into chunks equal in ln λ) and computes the CCF
// of each segment.
func newRefCCF(s *Spectrum, m *Mask, v []float64, hole float64, chunks int, readNoise float64) *refCCF {
	nk := len(v)
	h := hole / (2 * C)
	d := make([]float64, nk)
	for k := range v {
		d[k] = DopplerFactor(v[k])
	}
	dlo, dhi := d[0]*(1-h), d[nk-1]*(1+h)
	type use struct {
		order, seg int
		lambda, w  float64
	}
	var uses []use
	var edges [][]float64
	var sig2 []float64
	var offsets []int
	for oi, o := range s.Orders {
		n := len(o.Wavelength)
		e := make([]float64, n+1)
		if n == 1 {
			e[0], e[1] = o.Wavelength[0]*(1-1e-6), o.Wavelength[0]*(1+1e-6)
		} else {
			for x := 1; x < n; x++ {
				e[x] = 0.5 * (o.Wavelength[x-1] + o.Wavelength[x])
			}
			e[0] = o.Wavelength[0] - 0.5*(o.Wavelength[1]-o.Wavelength[0])
			e[n] = o.Wavelength[n-1] + 0.5*(o.Wavelength[n-1]-o.Wavelength[n-2])
		}
		edges = append(edges, e)
		offsets = append(offsets, len(sig2))
		for x := 0; x < n; x++ {
			if o.Err != nil {
				sig2 = append(sig2, o.Err[x]*o.Err[x])
			} else {
				sig2 = append(sig2, math.Max(o.Flux[x], 1)+readNoise*readNoise)
			}
		}
		for l, lam := range m.Wavelength {
			if lam >= e[0]/dlo && lam*dhi <= e[n] {
				uses = append(uses, use{order: oi, seg: oi, lambda: lam, w: m.Weight[l]})
			}
		}
	}
	if len(s.Orders) == 1 && chunks > 1 && len(uses) > 0 {
		lmin, lmax := math.Log(uses[0].lambda), math.Log(uses[len(uses)-1].lambda)
		for i := range uses {
			f := (math.Log(uses[i].lambda) - lmin) / (lmax - lmin + 1e-300)
			uses[i].seg = min(chunks-1, int(f*float64(chunks)))
		}
	}
	// Dense segment numbers.
	segOf := map[int]int{}
	var segs []int
	for _, u := range uses {
		if _, ok := segOf[u.seg]; !ok {
			segOf[u.seg] = len(segs)
			segs = append(segs, u.seg)
		}
	}
	r := &refCCF{nk: nk, sig2: sig2}
	r.seg = make([][]float64, len(segs))
	r.segVar = make([][]float64, len(segs))
	r.jac = make([][][]float64, len(segs))
	for i := range segs {
		r.seg[i] = make([]float64, nk)
		r.segVar[i] = make([]float64, nk)
		r.jac[i] = make([][]float64, len(sig2))
	}
	for _, u := range uses {
		si := segOf[u.seg]
		e := edges[u.order]
		f := s.Orders[u.order].Flux
		off := offsets[u.order]
		for k := 0; k < nk; k++ {
			a, b := u.lambda*d[k]*(1-h), u.lambda*d[k]*(1+h)
			var sum, v2 float64
			for x := 0; x < len(f); x++ {
				l, rr := math.Max(a, e[x]), math.Min(b, e[x+1])
				if rr <= l {
					continue
				}
				ov := (rr - l) / (e[x+1] - e[x])
				sum += f[x] * ov
				v2 += sig2[off+x] * ov * ov
				if r.jac[si][off+x] == nil {
					r.jac[si][off+x] = make([]float64, nk)
				}
				r.jac[si][off+x][k] += u.w * ov
			}
			r.seg[si][k] += u.w * sum
			r.segVar[si][k] += u.w * u.w * v2
		}
	}
	return r
}

// variance returns Σ_x σ_x² (Σ_k g_k Σ_{s in segs} J_skx)².
func (r *refCCF) variance(g []float64, segs []int) float64 {
	var v float64
	for x, s2 := range r.sig2 {
		var hx float64
		for _, s := range segs {
			if j := r.jac[s][x]; j != nil {
				for k := range g {
					hx += g[k] * j[k]
				}
			}
		}
		v += s2 * hx * hx
	}
	return v
}

// randomCCFCase returns a random spectrum and mask whose lines crowd
// together (so that holes of different lines reach the same pixels, also
// across segments), and CCF options.
func randomCCFCase(rng *rand.Rand, kind int) (*Spectrum, *Mask, *CCFOptions) {
	lo := 4000 + 2000*rng.Float64()
	n := 3000 + rng.IntN(3000)
	wl := make([]float64, n)
	switch kind % 3 {
	case 0: // log-linear
		st := (1 + rng.Float64()) * 1e-6
		for i := range wl {
			wl[i] = lo * math.Exp(st*float64(i))
		}
	case 1: // linear
		st := lo * (1 + rng.Float64()) * 1e-6
		for i := range wl {
			wl[i] = lo + st*float64(i)
		}
	default: // irregular, with some pixels several times wider
		x := lo
		for i := range wl {
			wl[i] = x
			f := 0.5 + rng.Float64()
			if rng.IntN(50) == 0 {
				f *= 4
			}
			x += lo * 1.5e-6 * f
		}
	}
	flux := make([]float64, n)
	for i := range flux {
		flux[i] = 1e4 * (0.2 + rng.Float64())
	}
	s := &Spectrum{Name: fmt.Sprintf("random %d", kind)}
	var errs []float64
	if kind%2 == 1 {
		errs = make([]float64, n)
		for i := range errs {
			errs[i] = 50 + 100*rng.Float64()
		}
	}
	if kind%4 >= 2 {
		// Four overlapping orders.
		for k := 0; k < 4; k++ {
			a, b := max(0, k*n/4-300), min(n, (k+1)*n/4+300)
			o := Order{Wavelength: wl[a:b], Flux: flux[a:b]}
			if errs != nil {
				o.Err = errs[a:b]
			}
			s.Orders = append(s.Orders, o)
		}
	} else {
		s.Orders = []Order{{Wavelength: wl, Flux: flux, Err: errs}}
	}
	nl := 20 + rng.IntN(40)
	lam := make([]float64, nl)
	wt := make([]float64, nl)
	span := wl[n-1] - wl[0]
	for i := range lam {
		// Pairs of lines closer than the grid's width.
		if i > 0 && rng.IntN(3) == 0 {
			lam[i] = lam[i-1] + span*1e-5*(1+rng.Float64())
		} else {
			lam[i] = wl[0] + span*rng.Float64()
		}
		wt[i] = 0.1 + rng.Float64()
	}
	sort.Float64s(lam)
	m, err := NewMask(lam, wt, false)
	if err != nil {
		panic(err)
	}
	opts := &CCFOptions{
		Search:    -1,
		Center:    (rng.Float64() - 0.5) * 20e3,
		HalfWidth: 5e3 + 20e3*rng.Float64(),
		Step:      []float64{100, 250, 400, 820}[rng.IntN(4)],
		HoleWidth: []float64{0, 150, 900, 2500}[rng.IntN(4)],
		ReadNoise: []float64{0, 3}[rng.IntN(2)],
		Chunks:    []int{0, 1, 4}[rng.IntN(3)],
		Serial:    rng.IntN(2) == 0,
	}
	return s, m, opts
}

// TestCCFAgainstReference compares the CCF, its per-bin variances and the
// propagated variances with the straightforward implementation above, on
// random spectra (log-linear, linear and irregular wavelengths, one or
// several orders, crowded lines), to 1e-9 relative.
func TestCCFAgainstReference(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 17))
	const tol = 1e-9
	restarted, sweeps := 0, 0
	widths := map[int]bool{}
	for trial := 0; trial < 24+13; trial++ {
		s, m, opts := randomCCFCase(rng, trial)
		if trial >= 24 {
			// Grid steps that make the runs 2, 3, … 14 steps long, so
			// that every unrolled kernel sees runs as long as itself.
			want := trial - 24 + 2
			opts.HoleWidth = medianPixelWidth(s)
			opts.Step = 2 * opts.HoleWidth / (float64(want) - 0.5)
			opts.HalfWidth = max(opts.HalfWidth, 8*opts.Step)
		}
		c, err := computeCCF(s, m, opts, true)
		if err != nil {
			t.Fatalf("trial %d: %v", trial, err)
		}
		chunks := opts.Chunks
		if chunks == 0 {
			chunks = 10
		}
		ref := newRefCCF(s, m, c.V, c.HoleWidth, chunks, opts.ReadNoise)
		if trial%2 == 1 {
			// Runs too short for the widest pixel: the walk starts again
			// with longer runs.
			p := c.plan
			p.w, p.cov = 1, nil
			v := c.V
			c = p.run(true)
			c.V = v
			if p.w > 1 {
				restarted++
			}
		}
		check := func(c *CCF, tag string) {
			if len(ref.seg) != len(c.Segments) {
				t.Fatalf("trial %d%s: %d segments, reference %d", trial, tag, len(c.Segments), len(ref.seg))
			}
			near := func(got, want float64) bool { return math.Abs(got-want) <= tol*math.Abs(want) }
			all := make([]int, len(ref.seg))
			for i := range all {
				all[i] = i
			}
			for k := range c.V {
				var val, vr float64
				for si := range ref.seg {
					val += ref.seg[si][k]
					vr += ref.segVar[si][k]
					if !near(c.Segments[si].Value[k], ref.seg[si][k]) || !near(c.Segments[si].Var[k], ref.segVar[si][k]) {
						t.Errorf("trial %d%s segment %d bin %d: %.15g ± %.15g, reference %.15g ± %.15g", trial, tag, si, k, c.Segments[si].Value[k], c.Segments[si].Var[k], ref.seg[si][k], ref.segVar[si][k])
					}
				}
				if !near(c.Value[k], val) || !near(c.Var[k], vr) {
					t.Errorf("trial %d%s bin %d: %.15g ± %.15g, reference %.15g ± %.15g", trial, tag, k, c.Value[k], c.Var[k], val, vr)
				}
			}
			// The line-by-line sum of the coarse search.
			for k, val := range c.plan.values(false) {
				if !near(val, c.Value[k]) {
					t.Errorf("trial %d%s bin %d: cumulative-flux CCF %.15g, walk %.15g", trial, tag, k, val, c.Value[k])
				}
			}
			g := make([][]float64, propQ)
			for q := range g {
				g[q] = make([]float64, len(c.V))
				for k := range g[q] {
					g[q][k] = rng.NormFloat64()
					if q == 1 {
						g[q][k] = 1 // a smooth gradient too
					}
				}
			}
			sg := make([][]float64, len(c.Segments))
			for i := range sg {
				sg[i] = g[(i+2)%propQ]
			}
			vq, vs := c.plan.propagate(g, sg)
			for q := range g {
				if want := ref.variance(g[q], all); !near(vq[q], want) {
					t.Errorf("trial %d%s quantity %d: variance %.15g, reference %.15g", trial, tag, q, vq[q], want)
				}
			}
			for i := range sg {
				if want := ref.variance(sg[i], []int{i}); !near(vs[i], want) {
					t.Errorf("trial %d%s segment %d: variance %.15g, reference %.15g", trial, tag, i, vs[i], want)
				}
			}
		}
		check(c, "")
		widths[c.plan.w] = true
		// The CCF alone, as ComputeCCF computes it.
		cv := c.plan.run(false)
		cv.V = c.V
		check(cv, " (no covariance)")
		if c.plan.w <= 2 && sweeps < 2 {
			// Longer runs than needed (padded with zeros) take every
			// unrolled kernel, the general band and no band at all.
			sweeps++
			for w := 2; w <= maxBandW+2; w++ {
				p := c.plan
				p.w, p.cov = w, nil
				v := c.V
				cw := p.run(true)
				cw.V = v
				check(cw, fmt.Sprintf(" (runs of %d)", w))
				cv := p.run(false)
				cv.V = v
				check(cv, fmt.Sprintf(" (runs of %d, no covariance)", w))
			}
		}
	}
	for w := 2; w <= 8; w++ {
		if !widths[w] {
			t.Errorf("no case with runs of %d steps", w)
		}
	}
	if restarted == 0 || sweeps == 0 {
		t.Errorf("%d walks started again with longer runs, %d sweeps of run lengths; want some of each", restarted, sweeps)
	}
}
