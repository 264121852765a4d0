package indicators

import (
	"fmt"
	"math"
	"runtime"
	"sort"
	"sync"

	"spotsift/internal/worker"
)

// CCFOptions set the velocity grid and hole width of a cross-correlation.
// A nil *CCFOptions means the zero value, whose fields are documented below.
type CCFOptions struct {
	// Center is the centre of the velocity search (or, when Search < 0, of
	// the grid itself), in m/s. The zero value is 0.
	Center float64
	// Search is the half-width in m/s of a coarse search for the line
	// (2 km/s steps, the 200 heaviest mask lines) that centres the grid and
	// estimates the line width. The zero value means 200 km/s; a negative
	// value skips the search and centres the grid on Center.
	Search float64
	// HalfWidth is the half-width of the grid in m/s. The zero value means
	// max(20 km/s, 3 × the FWHM found by the coarse search), or 20 km/s
	// without a search.
	HalfWidth float64
	// Step is the grid step in m/s; the zero value means 250 m/s. The grid
	// centre is rounded to a multiple of Step, so that spectra of one star
	// share a grid.
	Step float64
	// HoleWidth is the width of each mask hole in m/s, constant in
	// velocity. The zero value means the median velocity width of the
	// spectrum's pixels.
	HoleWidth float64
	// ReadNoise is the detector noise per pixel in electrons, added in
	// quadrature to the photon noise of spectra without flux errors (it is
	// ignored when Order.Err is given); zero means none.
	ReadNoise float64
	// Serial reports whether the CCF and its error propagation run on the
	// calling goroutine only; by default they use two goroutines. Set it
	// when many spectra are measured in parallel already. Results do not
	// depend on it.
	Serial bool
	// Chunks is the number of pseudo-orders, equal in ln λ, that a
	// one-order spectrum is cut into for per-order RVs and the chromatic
	// slope. The zero value means 10; 1 disables the split. Multi-order
	// spectra always use their orders.
	Chunks int
}

// CCF is a cross-correlation function of a spectrum with a weighted mask,
//
//	CCF(v) = Σ_orders Σ_l w_l Σ_x F_x · overlap_x,l(v),
//
// where overlap_x,l(v) is the fraction of pixel x's wavelength interval
// covered by the hole [λ_l D(v)(1 − Δ/2c), λ_l D(v)(1 + Δ/2c)], D the
// relativistic Doppler factor and Δ the hole width in velocity (Baranne et
// al. 1996, A&AS 119, 373; Pepe et al. 2002, A&A 388, 632; from memory).
// Only lines whose hole stays inside one order over the whole grid are used,
// so that the continuum of the CCF is flat.
type CCF struct {
	// V holds the grid velocities in m/s, increasing and uniform.
	V []float64
	// Value holds the CCF summed over orders; Var its photon-noise variance
	// per bin, Σ w_l² Σ_x σ_x² overlap², ignoring the correlation between
	// bins (which the errors of Measure do take into account).
	Value, Var []float64
	// Segments holds the CCF of each order (or pseudo-order), bluest first.
	Segments []SegmentCCF
	// Lines is the number of (line, order) pairs used.
	Lines int
	// HoleWidth and PixelWidth are the hole width and the median pixel
	// width, in m/s.
	HoleWidth, PixelWidth float64

	plan *ccfPlan
}

// SegmentCCF is the CCF of one order or pseudo-order.
type SegmentCCF struct {
	// Order is the spectral order the lines lie in.
	Order int
	// Wavelength is the weight-averaged rest wavelength of its lines in Å.
	Wavelength float64
	// Lines is the number of mask lines used.
	Lines int
	// Value and Var are as in CCF.
	Value, Var []float64
}

// placement is one mask line placed in one order.
type placement struct {
	order, seg, start int32
	lambda, weight    float64
}

// ccfOrder holds the pixel geometry of one order.
type ccfOrder struct {
	edges, invw, flux, sig2 []float64
	offset                  int // index of pixel 0 in the global pixel numbering
}

// ccfPlan is everything needed to recompute a CCF or propagate errors
// through it.
type ccfPlan struct {
	orders []ccfOrder
	places []placement // sorted by segment
	dk     []float64   // Doppler factors of the grid
	h      float64     // half hole width over c
	npix   int
	// serial reports whether run and propagate stay on the calling
	// goroutine.
	serial bool
	// slab holds the orders' arrays when they came from getSlab.
	slab    *[]float64
	allSig2 []float64
	span    int // see maxSpan
}

// ComputeCCF cross-correlates s with the mask m on the grid set by opts
// (nil: defaults). The mask is converted to the spectrum's air or vacuum
// scale when the two differ. It returns an error wrapping ErrNoMaskLines
// when no line of the mask falls inside the spectrum over the grid, and the
// validation errors of Spectrum.Validate.
func ComputeCCF(s *Spectrum, m *Mask, opts *CCFOptions) (*CCF, error) {
	if err := s.validate(true); err != nil {
		return nil, err
	}
	return computeCCF(s, m, opts)
}

// computeCCF is ComputeCCF for a validated spectrum.
func computeCCF(s *Spectrum, m *Mask, opts *CCFOptions) (*CCF, error) {
	if m == nil || m.Len() == 0 {
		return nil, fmt.Errorf("%s: %w", s.Name, ErrNoMaskLines)
	}
	var o CCFOptions
	if opts != nil {
		o = *opts
	}
	if o.Step == 0 {
		o.Step = 250
	}
	if o.Chunks == 0 {
		o.Chunks = 10
	}
	if !(o.Step > 0) || o.HalfWidth < 0 || o.HoleWidth < 0 || o.Chunks < 0 || math.IsNaN(o.Center) || math.IsNaN(o.Search) {
		return nil, fmt.Errorf("%w: CCF options %+v", ErrBadParameter, o)
	}
	m = m.onScale(s.Vacuum)
	if o.ReadNoise < 0 || math.IsNaN(o.ReadNoise) || math.IsInf(o.ReadNoise, 0) {
		return nil, fmt.Errorf("%w: read noise %v", ErrBadParameter, o.ReadNoise)
	}
	orders, slab := prepareOrdersPooled(s, o.ReadNoise)
	pixw := medianPixelWidth(s)
	hole := o.HoleWidth
	if hole == 0 {
		hole = pixw
	}
	center := o.Center
	half := o.HalfWidth
	if o.Search >= 0 {
		search := o.Search
		if search == 0 {
			search = 200e3
		}
		vc, fwhm, err := coarseSearch(orders, m, center, search, math.Max(2000, hole), hole)
		if err != nil {
			releaseSlab(slab)
			return nil, fmt.Errorf("%s: %w", s.Name, err)
		}
		center = vc
		if half == 0 {
			half = math.Max(20e3, 3*fwhm)
		}
	}
	if half == 0 {
		half = 20e3
	}
	center = math.Round(center/o.Step) * o.Step
	nhalf := int(math.Round(half / o.Step))
	if nhalf < 3 || nhalf > 100000 {
		return nil, fmt.Errorf("%w: grid of %d steps", ErrBadParameter, 2*nhalf+1)
	}
	v := make([]float64, 2*nhalf+1)
	for k := range v {
		v[k] = center + float64(k-nhalf)*o.Step
	}
	plan, err := newPlan(orders, m, v, hole, o.Chunks, len(s.Orders) == 1)
	if err != nil {
		releaseSlab(slab)
		return nil, fmt.Errorf("%s: %w", s.Name, err)
	}
	plan.slab = slab
	plan.serial = o.Serial
	// All orders' variances are one contiguous array.
	plan.allSig2 = (*slab)[:plan.npix]
	c := plan.run()
	c.V = v
	c.HoleWidth = hole
	c.PixelWidth = pixw
	return c, nil
}

func prepareOrders(s *Spectrum, readNoise float64) []ccfOrder {
	orders, _ := prepareOrdersPooled(s, readNoise)
	return orders
}

// slabs recycles the pixel-geometry arrays of prepareOrdersPooled. Unlike
// a sync.Pool it survives garbage collections: these arrays are megabytes,
// and fresh memory costs more to obtain (zeroing, page faults) than the
// arithmetic that fills it. It keeps at most GOMAXPROCS arrays.
var slabs struct {
	sync.Mutex
	free []*[]float64
}

func getSlab() *[]float64 {
	slabs.Lock()
	defer slabs.Unlock()
	if n := len(slabs.free); n > 0 {
		s := slabs.free[n-1]
		slabs.free = slabs.free[:n-1]
		return s
	}
	return new([]float64)
}

// prepareOrdersPooled computes pixel edges, inverse widths and variances
// into one array taken from getSlab; the caller may hand the returned slab
// back with releaseSlab once nothing refers to the orders any more.
//
// Without flux errors the variance is photon noise plus detector noise,
// max(F, 1) + readNoise².
func prepareOrdersPooled(s *Spectrum, readNoise float64) ([]ccfOrder, *[]float64) {
	rn2 := readNoise * readNoise
	out := make([]ccfOrder, len(s.Orders))
	var total int
	for i := range s.Orders {
		total += len(s.Orders[i].Wavelength)
	}
	slab := getSlab()
	need := 3*total + len(s.Orders)
	if cap(*slab) < need {
		*slab = make([]float64, need)
	}
	buf := (*slab)[:need]
	sig2 := buf[:total]
	rest := buf[total:]
	off := 0
	for i := range s.Orders {
		ord := &s.Orders[i]
		wl := ord.Wavelength
		n := len(wl)
		e := rest[: n+1 : n+1]
		iw := rest[n+1 : 2*n+1 : 2*n+1]
		rest = rest[2*n+1:]
		if n == 1 {
			e[0], e[1] = wl[0]*(1-1e-6), wl[0]*(1+1e-6)
		} else {
			for x := 1; x < n; x++ {
				e[x] = 0.5 * (wl[x-1] + wl[x])
			}
			e[0] = wl[0] - 0.5*(wl[1]-wl[0])
			e[n] = wl[n-1] + 0.5*(wl[n-1]-wl[n-2])
		}
		for x := range iw {
			iw[x] = 1 / (e[x+1] - e[x])
		}
		s2 := sig2[off : off+n : off+n]
		if ord.Err != nil {
			for x, v := range ord.Err {
				s2[x] = v * v
			}
		} else {
			for x, f := range ord.Flux {
				s2[x] = math.Max(f, 1) + rn2
			}
		}
		out[i] = ccfOrder{edges: e, invw: iw, flux: ord.Flux, sig2: s2, offset: off}
		off += n
	}
	return out, slab
}

func releaseSlab(slab *[]float64) {
	if slab == nil {
		return
	}
	slabs.Lock()
	defer slabs.Unlock()
	if len(slabs.free) < runtime.GOMAXPROCS(0) {
		slabs.free = append(slabs.free, slab)
	}
}

// medianPixelWidth returns the median of c·Δλ/λ over (a sample of) pixels.
func medianPixelWidth(s *Spectrum) float64 {
	var w []float64
	for _, o := range s.Orders {
		n := len(o.Wavelength)
		step := max(1, n/2000)
		for x := 1; x < n; x += step {
			w = append(w, C*(o.Wavelength[x]-o.Wavelength[x-1])/o.Wavelength[x])
		}
	}
	if len(w) == 0 {
		return 1000
	}
	sort.Float64s(w)
	return w[len(w)/2]
}

// newPlan places the mask lines in the orders: a line is used in an order
// when its hole lies inside the order at every grid velocity.
func newPlan(orders []ccfOrder, m *Mask, v []float64, hole float64, chunks int, single bool) (*ccfPlan, error) {
	p := &ccfPlan{orders: orders, h: hole / (2 * C)}
	p.dk = make([]float64, len(v))
	for k := range v {
		p.dk[k] = DopplerFactor(v[k])
	}
	dlo := p.dk[0] * (1 - p.h)
	dhi := p.dk[len(v)-1] * (1 + p.h)
	for oi, o := range orders {
		e := o.edges
		lo := sort.SearchFloat64s(m.Wavelength, e[0]/dlo)
		for l := lo; l < m.Len() && m.Wavelength[l]*dhi <= e[len(e)-1]; l++ {
			lam := m.Wavelength[l]
			start := sort.SearchFloat64s(e, lam*dlo) - 1
			if start < 0 {
				start = 0
			}
			p.places = append(p.places, placement{order: int32(oi), start: int32(start), lambda: lam, weight: m.Weight[l]})
		}
		p.npix = o.offset + len(o.flux)
	}
	if len(p.places) == 0 {
		return nil, ErrNoMaskLines
	}
	if single && chunks > 1 {
		lmin, lmax := math.Log(p.places[0].lambda), math.Log(p.places[len(p.places)-1].lambda)
		for i := range p.places {
			f := (math.Log(p.places[i].lambda) - lmin) / (lmax - lmin + 1e-300)
			p.places[i].seg = int32(min(chunks-1, int(f*float64(chunks))))
		}
	} else {
		for i := range p.places {
			p.places[i].seg = p.places[i].order
		}
		sort.SliceStable(p.places, func(a, b int) bool { return p.places[a].seg < p.places[b].seg })
	}
	// Renumber segments densely.
	seg, last := int32(-1), int32(-1)
	for i := range p.places {
		if p.places[i].seg != last {
			last = p.places[i].seg
			seg++
		}
		p.places[i].seg = seg
	}
	return p, nil
}

// run computes the CCF of every segment and their sum.
func (p *ccfPlan) run() *CCF {
	nv := len(p.dk)
	nseg := int(p.places[len(p.places)-1].seg) + 1
	c := &CCF{Value: make([]float64, nv), Var: make([]float64, nv), Segments: make([]SegmentCCF, nseg), Lines: len(p.places), plan: p}
	for s := range c.Segments {
		c.Segments[s].Value = make([]float64, nv)
		c.Segments[s].Var = make([]float64, nv)
	}
	wsum := make([]float64, nseg)
	// Two goroutines, each owning whole segments.
	split := len(p.places)
	if nseg > 1 && !p.serial {
		split = len(p.places) / 2
		for split < len(p.places) && p.places[split].seg == p.places[split-1].seg {
			split++
		}
	}
	var wg worker.Group
	if split < len(p.places) {
		wg.Go(func() { p.runPlaces(c, wsum, p.places[split:]) })
	}
	p.runPlaces(c, wsum, p.places[:split])
	wg.Rethrow()
	for s := range c.Segments {
		c.Segments[s].Wavelength /= wsum[s]
		for k := 0; k < nv; k++ {
			c.Value[k] += c.Segments[s].Value[k]
			c.Var[k] += c.Segments[s].Var[k]
		}
	}
	return c
}

// runPlaces accumulates the CCF of the given placements into their
// segments.
func (p *ccfPlan) runPlaces(c *CCF, wsum []float64, places []placement) {
	lo, hi := 1-p.h, 1+p.h
	for _, pl := range places {
		o := &p.orders[pl.order]
		e, iw, f, s2 := o.edges, o.invw, o.flux, o.sig2
		sg := &c.Segments[pl.seg]
		sg.Order = int(pl.order)
		sg.Lines++
		sg.Wavelength += pl.weight * pl.lambda
		wsum[pl.seg] += pl.weight
		w, w2 := pl.weight, pl.weight*pl.weight
		x0 := int(pl.start)
		val, vr := sg.Value, sg.Var
		for k, d := range p.dk {
			a := pl.lambda * d * lo
			b := pl.lambda * d * hi
			for e[x0+1] <= a {
				x0++
			}
			var sum, v2 float64
			for x := x0; e[x] < b; x++ {
				l, r := e[x], e[x+1]
				if a > l {
					l = a
				}
				if b < r {
					r = b
				}
				ov := (r - l) * iw[x]
				sum += f[x] * ov
				v2 += s2[x] * ov * ov
			}
			val[k] += w * sum
			vr[k] += w2 * v2
		}
	}
}

// propagate returns the photon-noise variances of linear functionals of the
// CCF: quantity q has gradient g[q][k] = ∂Q/∂CCF(v_k) with respect to the
// summed CCF, and segment s has gradient sg[s][k] with respect to its own
// CCF. Because the CCF is linear in the pixel fluxes,
//
//	Var Q = Σ_x σ_x² (Σ_k g_k ∂CCF_k/∂F_x)²
//
// exactly, including the correlation between neighbouring CCF bins. It
// needs exactly propQ quantities. The lines are cut into two halves at a
// segment boundary, walked on two goroutines (one after the other when
// the plan is serial, with the same result to the bit), and the pixels
// both halves touch are summed before they are squared.
func (p *ccfPlan) propagate(g [][]float64, sg [][]float64) (vq, vs []float64) {
	if len(g) != propQ {
		panic("indicators: propagate needs propQ gradients")
	}
	vs = make([]float64, len(sg))
	// Fill the lazily computed fields before the goroutines read them.
	p.maxSpan()
	p.sig2()
	slots := [][]float64{g[0], g[1], g[2], g[3], g[4], g[5], nil}
	const seg = 6
	n := len(p.places)
	split := n / 2
	for split > 0 && split < n && p.places[split].seg == p.places[split-1].seg {
		split++
	}
	if split <= 0 || split >= n {
		a, _ := p.propagateSlots(slots, seg, sg, vs, p.places, 0, 0)
		return a[:propQ], vs
	}
	// The zone of pixels both halves may touch: from the first pixel of
	// the second half to the last the first half can reach.
	first := p.places[split]
	zlo := p.orders[first.order].offset + int(first.start)
	zhi := zlo
	dhi := p.dk[len(p.dk)-1] * (1 + p.h)
	for _, pl := range p.places[:split] {
		o := &p.orders[pl.order]
		zhi = max(zhi, o.offset+searchEdges(o.edges, pl.lambda*dhi)+2)
	}
	var accB, zoneB []float64
	var wg worker.Group
	second := func() { accB, zoneB = p.propagateSlots(slots, seg, sg, vs, p.places[split:], zlo, zhi) }
	if p.serial {
		second()
	} else {
		wg.Go(second)
	}
	accA, zoneA := p.propagateSlots(slots, seg, sg, vs, p.places[:split], zlo, zhi)
	wg.Rethrow()
	const ns = 8
	sig2 := p.sig2()
	vq = make([]float64, propQ)
	for q := range vq {
		vq[q] = accA[q] + accB[q]
	}
	for x := zlo; x < zhi; x++ {
		i := (x - zlo) * ns
		for q := range vq {
			v := zoneA[i+q] + zoneB[i+q]
			vq[q] += sig2[x] * v * v
		}
	}
	return vq, vs
}

// propagateSlots propagates the gradients g (nil: an unused slot) through
// the CCF of the given placements in one walk over the (line, velocity,
// pixel) overlaps, in groups of four slots per pixel. When sg is not nil,
// slot seg holds instead the gradient of the current segment's own CCF
// (sg[s]), whose variances are added to vs. It returns the variance of each
// slot (0 for seg and unused slots) over the pixels outside [zlo, zhi), and
// the unsquared values of the pixels inside (slot seg excepted, which is
// squared as usual), zhi − zlo rows of slots.
//
// Lines are visited in increasing pixel order, so a pixel below the first
// pixel a line can touch is final: it is squared, summed and cleared as the
// walk moves on.
func (p *ccfPlan) propagateSlots(g [][]float64, seg int, sg [][]float64, vs []float64, places []placement, zlo, zhi int) ([]float64, []float64) {
	ns := (max(len(g), seg+1) + 3) &^ 3
	ngr := ns / 4
	if ngr > 2 {
		panic("indicators: propagateSlots takes at most eight slots")
	}
	zone := make([]float64, (zhi-zlo)*ns)
	// Only the pixels between the current line's first pixel and the last
	// pixel touched so far are live: a ring buffer of them (a power of two
	// above the widest line's span) keeps the scratch in the fastest cache.
	span := p.maxSpan()
	ring := 1
	for ring < 2*span+2 {
		ring <<= 1
	}
	mask := ring - 1
	h := make([]float64, ring*ns)
	sig2 := p.sig2()
	acc := make([]float64, ns)
	lo, hi := 1-p.h, 1+p.h
	nk := len(p.dk)
	gk := make([]float64, nk*ns)
	if sg == nil {
		seg = -1
	}
	low := 0     // pixels below low are flushed
	touched := 0 // pixels at and above touched are untouched (zero)
	curSeg := -1
	// acc8 sums the slots' squares; the segment slot's sum is moved out
	// at each segment change (flushSeg) and at the end.
	var acc8 [8]float64
	flushTo := func(x1 int) {
		for x := max(low, 0); x < min(x1, touched); x++ {
			i := (x & mask) * ns
			s2 := sig2[x]
			if x >= zlo && x < zhi {
				if seg >= 0 {
					acc8[seg] += s2 * h[i+seg] * h[i+seg]
					h[i+seg] = 0
				}
				copy(zone[(x-zlo)*ns:(x-zlo+1)*ns], h[i:i+ns])
				clear(h[i : i+ns])
				continue
			}
			h0 := (*[4]float64)(h[i : i+4])
			a0 := (*[4]float64)(acc8[0:4])
			a0[0] += s2 * h0[0] * h0[0]
			a0[1] += s2 * h0[1] * h0[1]
			a0[2] += s2 * h0[2] * h0[2]
			a0[3] += s2 * h0[3] * h0[3]
			*h0 = [4]float64{}
			if ngr > 1 {
				h1 := (*[4]float64)(h[i+4 : i+8])
				a1 := (*[4]float64)(acc8[4:8])
				a1[0] += s2 * h1[0] * h1[0]
				a1[1] += s2 * h1[1] * h1[1]
				a1[2] += s2 * h1[2] * h1[2]
				a1[3] += s2 * h1[3] * h1[3]
				*h1 = [4]float64{}
			}
		}
		if x1 > low {
			low = x1
		}
	}
	// flushSeg squares and clears the segment slot over [low, touched)
	// and moves the segment's finished sum to vs.
	flushSeg := func() {
		for x := low; x < touched; x++ {
			i := (x&mask)*ns + seg
			v := h[i]
			acc8[seg] += sig2[x] * v * v
			h[i] = 0
		}
		vs[curSeg] += acc8[seg]
		acc8[seg] = 0
	}
	for _, pl := range places {
		o := &p.orders[pl.order]
		e, iw := o.edges, o.invw
		off := o.offset
		if int(pl.seg) != curSeg {
			if seg >= 0 && curSeg >= 0 {
				flushSeg()
			}
			curSeg = int(pl.seg)
			for k := 0; k < nk; k++ {
				for q, gq := range g {
					if gq != nil {
						gk[k*ns+q] = gq[k]
					}
				}
				if seg >= 0 {
					gk[k*ns+seg] = sg[curSeg][k]
				}
			}
		}
		if low == 0 && touched == 0 {
			low = off + int(pl.start)
		}
		flushTo(off + int(pl.start))
		w := pl.weight
		x0 := int(pl.start)
		for k, d := range p.dk {
			a := pl.lambda * d * lo
			b := pl.lambda * d * hi
			for e[x0+1] <= a {
				x0++
			}
			g0 := (*[4]float64)(gk[k*ns : k*ns+4])
			x := x0
			for ; e[x] < b; x++ {
				l, r := e[x], e[x+1]
				if a > l {
					l = a
				}
				if b < r {
					r = b
				}
				t := w * (r - l) * iw[x]
				i := ((off + x) & mask) * ns
				h0 := (*[4]float64)(h[i : i+4])
				h0[0] += t * g0[0]
				h0[1] += t * g0[1]
				h0[2] += t * g0[2]
				h0[3] += t * g0[3]
				if ngr > 1 {
					g1 := (*[4]float64)(gk[k*ns+4 : k*ns+8])
					h1 := (*[4]float64)(h[i+4 : i+8])
					h1[0] += t * g1[0]
					h1[1] += t * g1[1]
					h1[2] += t * g1[2]
					h1[3] += t * g1[3]
				}
			}
			if off+x > touched {
				touched = off + x
			}
		}
	}
	if seg >= 0 && curSeg >= 0 {
		flushSeg()
	}
	flushTo(p.npix)
	if seg >= 0 {
		acc8[seg] = 0
	}
	copy(acc, acc8[:ns])
	return acc, zone
}

// maxSpan returns the largest number of pixels one placed line touches
// over the velocity grid (computed once).
func (p *ccfPlan) maxSpan() int {
	if p.span > 0 {
		return p.span
	}
	dhi := p.dk[len(p.dk)-1] * (1 + p.h)
	for _, pl := range p.places {
		e := p.orders[pl.order].edges
		end := searchEdges(e, pl.lambda*dhi) + 1
		p.span = max(p.span, end-int(pl.start)+1)
	}
	return p.span
}

// propQ is the number of CCF quantities whose errors propagate computes.
const propQ = 6

// sig2 returns the pixel variances in the global pixel numbering.
func (p *ccfPlan) sig2() []float64 {
	if p.allSig2 != nil {
		return p.allSig2
	}
	var all []float64
	for _, o := range p.orders {
		all = append(all, o.sig2...)
	}
	p.allSig2 = all
	return all
}

// coarseSearch finds the velocity of the CCF minimum on a coarse grid and
// the FWHM of a Gaussian fitted there.
func coarseSearch(orders []ccfOrder, m *Mask, center, search, step, hole float64) (vc, fwhm float64, err error) {
	// Use the heaviest lines only: the search needs the position, not
	// precision.
	sub := m
	if m.Len() > 200 {
		idx := make([]int, m.Len())
		for i := range idx {
			idx[i] = i
		}
		sort.Slice(idx, func(a, b int) bool { return m.Weight[idx[a]] > m.Weight[idx[b]] })
		idx = idx[:200]
		sort.Ints(idx)
		sub = &Mask{Vacuum: m.Vacuum, Wavelength: make([]float64, len(idx)), Weight: make([]float64, len(idx))}
		for i, j := range idx {
			sub.Wavelength[i], sub.Weight[i] = m.Wavelength[j], m.Weight[j]
		}
	}
	n := int(math.Ceil(search / step))
	v := make([]float64, 2*n+1)
	for k := range v {
		v[k] = center + float64(k-n)*step
	}
	// The coarse grid is wide; if lines drop out at its edges, narrow it.
	var p *ccfPlan
	for {
		p, err = newPlan(orders, sub, v, math.Max(hole, step), 1, true)
		if err == nil || len(v) < 41 {
			break
		}
		v = v[len(v)/8 : len(v)-len(v)/8]
	}
	if err != nil {
		// Fall back to all lines.
		if p, err = newPlan(orders, m, v, math.Max(hole, step), 1, true); err != nil {
			return 0, 0, err
		}
	}
	c := p.run()
	res, ferr := fitGaussian(v, c.Value, nil)
	if ferr != nil {
		imin := 0
		for k := range c.Value {
			if c.Value[k] < c.Value[imin] {
				imin = k
			}
		}
		return v[imin], 10e3, nil
	}
	return res.theta[2], 2.3548200450309493 * res.theta[3], nil
}
