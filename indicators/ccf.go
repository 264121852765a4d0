package indicators

import (
	"fmt"
	"math"
	"slices"
	"sort"

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
	order, seg int32
	// start and end bound the pixels [start, end) of the order the hole
	// can overlap over the whole grid.
	start, end     int32
	lambda, weight float64
}

// ccfOrder is one order's pixels. Pixel x spans [edge(x), edge(x+1)), the
// edges halfway between neighbouring pixel centres (the outer edges
// mirrored); they are computed when needed rather than stored, since the
// CCF reads each pixel once.
type ccfOrder struct {
	wl, flux, err []float64
	rn2           float64 // detector variance, without flux errors
	offset        int     // index of pixel 0 in the global pixel numbering
}

func (o *ccfOrder) n() int { return len(o.wl) }

// edge returns the lower edge of pixel x, 0 ≤ x ≤ n (edge(n) is the upper
// edge of the last pixel).
func (o *ccfOrder) edge(x int) float64 {
	wl := o.wl
	n := len(wl)
	if x > 0 && x < n {
		return 0.5 * (wl[x-1] + wl[x])
	}
	if n == 1 {
		if x == 0 {
			return wl[0] * (1 - 1e-6)
		}
		return wl[0] * (1 + 1e-6)
	}
	if x == 0 {
		return wl[0] - 0.5*(wl[1]-wl[0])
	}
	return wl[n-1] + 0.5*(wl[n-1]-wl[n-2])
}

// sig2 returns the variance of pixel x: Err² when flux errors are given,
// else photon noise plus detector noise, max(F, 1) + readNoise².
func (o *ccfOrder) sig2(x int) float64 {
	if o.err != nil {
		return o.err[x] * o.err[x]
	}
	return math.Max(o.flux[x], 1) + o.rn2
}

// search returns the pixel x with edge(x) ≤ λ < edge(x+1), clamped to
// [0, n−1].
func (o *ccfOrder) search(lambda float64) int {
	lo, hi := 0, o.n()
	for hi-lo > 1 {
		m := (lo + hi) / 2
		if o.edge(m) <= lambda {
			lo = m
		} else {
			hi = m
		}
	}
	return lo
}

// searchNear is search started from pixel x: a linear guess from the
// width of pixel x (exact for pixel widths that vary slowly), corrected by
// a few steps, else a binary search.
func (o *ccfOrder) searchNear(lambda float64, x int) int {
	n := o.n()
	x = min(max(x, 0), n-1)
	e0, e1 := o.edge(x), o.edge(x+1)
	f := math.Floor((lambda - e0) / (e1 - e0))
	if !(math.Abs(f) < float64(n)) {
		return o.search(lambda)
	}
	x = min(max(x+int(f), 0), n-1)
	for range 8 {
		switch {
		case x > 0 && o.edge(x) > lambda:
			x--
		case x < n-1 && o.edge(x+1) <= lambda:
			x++
		default:
			return x
		}
	}
	return o.search(lambda)
}

func prepareOrders(s *Spectrum, readNoise float64) []ccfOrder {
	out := make([]ccfOrder, len(s.Orders))
	off := 0
	for i := range s.Orders {
		ord := &s.Orders[i]
		out[i] = ccfOrder{wl: ord.Wavelength, flux: ord.Flux, err: ord.Err, rn2: readNoise * readNoise, offset: off}
		off += len(ord.Wavelength)
	}
	return out
}

// ccfPlan is everything needed to recompute a CCF or propagate errors
// through it.
type ccfPlan struct {
	orders []ccfOrder
	places []placement // sorted by segment, by wavelength within an order
	dk     []float64   // Doppler factors of the grid
	h      float64     // half hole width over c
	nseg   int
	// nshared is the number of (pixel, pair of neighbouring lines) whose
	// windows hold the pixel.
	nshared int
	// w is the number of grid steps walk gives each (line, pixel) pair:
	// at least the most steps whose holes reach one pixel (run starts
	// again with more when it is not).
	w int
	// serial reports whether run stays on the calling goroutine.
	serial bool
	// cov is the photon-noise covariance of the segments' CCFs, filled by
	// run(true) (or by propagate when needed).
	cov *ccfAcc
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
	return computeCCF(s, m, opts, false)
}

// computeCCF is ComputeCCF for a validated spectrum; with cov it also
// builds the covariance its errors are propagated with, in the same walk.
func computeCCF(s *Spectrum, m *Mask, opts *CCFOptions, cov bool) (*CCF, error) {
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
	orders := prepareOrders(s, o.ReadNoise)
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
		vc, fwhm, err := coarseSearch(orders, m, center, search, math.Max(2000, hole), hole, o.Serial)
		if err != nil {
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
		return nil, fmt.Errorf("%s: %w", s.Name, err)
	}
	plan.serial = o.Serial
	c := plan.run(cov)
	c.V = v
	c.HoleWidth = hole
	c.PixelWidth = pixw
	return c, nil
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

// maxPixelWidth returns the largest c·Δλ/λ of a sample of about 2000
// pixels per order.
func maxPixelWidth(orders []ccfOrder) float64 {
	var w float64
	for i := range orders {
		o := &orders[i]
		n := o.n()
		for x := 0; x < n; x += max(1, n/2000) {
			e0, e1 := o.edge(x), o.edge(x+1)
			w = max(w, C*(e1-e0)/e0)
		}
	}
	return w
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
	for oi := range orders {
		o := &orders[oi]
		n := o.n()
		top := o.edge(n)
		lo := sort.SearchFloat64s(m.Wavelength, o.edge(0)/dlo)
		// The lines are sorted: each search starts from the last.
		xs, xe := 0, 0
		for l := lo; l < m.Len() && m.Wavelength[l]*dhi <= top; l++ {
			lam := m.Wavelength[l]
			xs = o.searchNear(lam*dlo, xs)
			xe = o.searchNear(lam*dhi, max(xe, xs))
			start := max(0, xs-1)
			// One pixel beyond the last the hole reaches, for the
			// rounding of λ·D·(1 + h) against λ·(D·(1 + h)).
			end := min(n, xe+2)
			p.places = append(p.places, placement{order: int32(oi), start: int32(start), end: int32(end), lambda: lam, weight: m.Weight[l]})
		}
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
		// Orders are placed in turn, so the placements are sorted by
		// order already.
		for i := range p.places {
			p.places[i].seg = p.places[i].order
		}
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
	p.nseg = int(seg) + 1
	// Pixels in the windows of two lines, to size the shared-pixel lists.
	for i := 1; i < len(p.places); i++ {
		if a, b := &p.places[i-1], &p.places[i]; a.order == b.order && a.end > b.start {
			p.nshared += int(a.end - b.start)
		}
	}
	// Runs: the grid steps whose hole centres lie within half a pixel
	// plus half a hole of a pixel's centre, in velocity, from a sample of
	// pixel widths (a wider pixel makes run start again with longer runs).
	step := v[1] - v[0]
	p.w = int((1.05*maxPixelWidth(orders)+hole)/step) + 1
	return p, nil
}

// ccfAcc accumulates the CCF of every segment and, optionally, the
// photon-noise covariance of those CCFs. The CCF is linear in the pixel
// fluxes, CCF_s(v_k) = Σ_x J_skx F_x with J_skx = Σ_{l in s} w_l
// overlap_x,l(v_k), so
//
//	Cov(CCF_s(v_k), CCF_s'(v_k')) = Σ_x σ_x² J_skx J_s'k'x.
//
// One line reaches one pixel over a short run of grid steps (the pixel
// width plus the hole width, in steps), so the terms of one line with
// itself fill a band of the covariance, kept per segment; the terms
// between two lines that reach the same pixel are kept as those pixels'
// runs (shared), and summed into quadratic forms once the gradients are
// known (propagate).
type ccfAcc struct {
	nk, nseg int
	// w is the number of grid steps of a run (see walk); rows of val, vr
	// and band run past the grid by w, so that a run never needs cutting.
	w int
	// val and vr hold segment s's CCF and its per-bin variance at
	// [s*(nk+w) + k].
	val, vr []float64
	cov     bool
	// band[(s*(nk+w) + k)*w + j] is the covariance of bins k and k + j of
	// segment s from each line with itself; nil when w > maxBandW, where
	// every pixel is kept in shared instead.
	band []float64
	// The pixels reached by more than one line (by any line when band is
	// nil): their variance and the run of each line (values w_l
	// overlap_x,l(v_k), k = k0 …).
	shared []sharedPixel
	runs   []sharedRun
	vals   []float64
}

type sharedPixel struct {
	sig2        float64
	first, nrun int32
}

type sharedRun struct{ seg, k0, n, off int32 }

func newAcc(nk, nseg, w int, cov bool) *ccfAcc {
	rows := nseg * (nk + w)
	a := &ccfAcc{nk: nk, nseg: nseg, w: w, val: make([]float64, rows), vr: make([]float64, rows), cov: cov}
	if cov && w <= maxBandW {
		a.band = make([]float64, rows*w)
	}
	return a
}

// maxBandW is the longest run kept as a band: the band costs w²/2
// products per (line, pixel) pair, keeping the pixel's run and using it in
// the quadratic forms about 8w, so beyond this (pixels many grid steps
// wide) every pixel's runs are kept.
const maxBandW = 12

// keep appends a pixel of variance s2 whose runs (line index, first
// step, offset in tb) are rs; runs stop at the grid's end and, without a
// band, after their last non-zero value.
func (a *ccfAcc) keep(s2 float64, rs []pixRun, tb []float64, places []placement) {
	a.shared = append(a.shared, sharedPixel{sig2: s2, first: int32(len(a.runs)), nrun: int32(len(rs))})
	for _, r := range rs {
		n := min(a.w, a.nk-r.k0)
		if a.band == nil {
			for n > 0 && tb[r.off+n-1] == 0 {
				n--
			}
		}
		a.runs = append(a.runs, sharedRun{seg: places[r.line].seg, k0: int32(r.k0), n: int32(n), off: int32(len(a.vals))})
		a.vals = append(a.vals, tb[r.off:r.off+n]...)
	}
}

// pixRun is one line's run at one pixel: the line, the first step, and
// the values' offset in a scratch slice.
type pixRun struct{ line, k0, off int }

// add adds b's sums to a's (b's shared pixels after a's).
func (a *ccfAcc) add(b *ccfAcc) {
	for i := range a.val {
		a.val[i] += b.val[i]
		a.vr[i] += b.vr[i]
	}
	if !a.cov {
		return
	}
	if a.band != nil {
		for i, v := range b.band {
			a.band[i] += v
		}
	}
	nr, nv := int32(len(a.runs)), int32(len(a.vals))
	for _, sp := range b.shared {
		sp.first += nr
		a.shared = append(a.shared, sp)
	}
	for _, r := range b.runs {
		r.off += nv
		a.runs = append(a.runs, r)
	}
	a.vals = append(a.vals, b.vals...)
}

// run computes the CCF of every segment and their sum, and with cov the
// covariance propagate needs, in one walk over the pixels. The pixels are
// cut in two at the first pixel of the middle line; the halves are walked
// on two goroutines (one after the other when the plan is serial) into
// separate sums added in a fixed order, so the result does not depend on
// Serial.
func (p *ccfPlan) run(cov bool) *CCF {
	nv := len(p.dk)
	c := &CCF{Value: make([]float64, nv), Var: make([]float64, nv), Segments: make([]SegmentCCF, p.nseg), Lines: len(p.places), plan: p}
	wsum := make([]float64, p.nseg)
	for _, pl := range p.places {
		sg := &c.Segments[pl.seg]
		sg.Order = int(pl.order)
		sg.Lines++
		sg.Wavelength += pl.weight * pl.lambda
		wsum[pl.seg] += pl.weight
	}
	mid := p.places[len(p.places)/2]
	cut := p.orders[mid.order].offset + int(mid.start)
	var a, b *ccfAcc
	for {
		a, b = newAcc(nv, p.nseg, p.w, cov), newAcc(nv, p.nseg, p.w, cov)
		if cov && p.w <= maxBandW {
			// Room for the shared pixels: all in a, which b's join.
			n := p.nshared + p.nshared/8
			a.shared = make([]sharedPixel, 0, n)
			a.runs = make([]sharedRun, 0, 2*n)
			a.vals = make([]float64, 0, 2*n*p.w)
		}
		var needA, needB int
		if p.serial {
			needB = p.walkRange(b, cut, math.MaxInt)
			needA = p.walkRange(a, 0, cut)
		} else {
			var wg worker.Group
			wg.Go(func() { needB = p.walkRange(b, cut, math.MaxInt) })
			needA = p.walkRange(a, 0, cut)
			wg.Rethrow()
		}
		if needA == 0 && needB == 0 {
			break
		}
		// A pixel wider than the run length allowed for: start again
		// with longer runs.
		p.w = max(p.w+1, needA, needB)
	}
	a.add(b)
	if cov {
		p.cov = a
	}
	sv := nv + p.w
	for s := range c.Segments {
		sg := &c.Segments[s]
		sg.Wavelength /= wsum[s]
		sg.Value = a.val[s*sv : s*sv+nv : s*sv+nv]
		sg.Var = a.vr[s*sv : s*sv+nv : s*sv+nv]
		if a.band != nil {
			// The per-bin variance is the band's diagonal.
			for k := range sg.Var {
				sg.Var[k] = a.band[(s*sv+k)*p.w]
			}
		}
		for k := 0; k < nv; k++ {
			c.Value[k] += sg.Value[k]
			c.Var[k] += sg.Var[k]
		}
	}
	return c
}

// walkRange walks the pixels of global numbers [lo, hi) of every order.
func (p *ccfPlan) walkRange(a *ccfAcc, lo, hi int) int {
	for i := 0; i < len(p.places); {
		j := i
		for j < len(p.places) && p.places[j].order == p.places[i].order {
			j++
		}
		o := &p.orders[p.places[i].order]
		xlo, xhi := max(0, lo-o.offset), min(o.n(), hi-o.offset)
		if xlo < xhi {
			if need := p.walk(a, o, p.places[i:j], xlo, xhi); need > 0 {
				return need
			}
		}
		i = j
	}
	return 0
}

// walk accumulates into a the contributions of pixels [xlo, xhi) of order
// o, reached by the given placements (all in o, sorted by wavelength). It
// returns 0, or, having stopped, the number of grid steps whose holes
// reach one pixel when that is more than a.w.
//
// Pixel by pixel, each line whose window holds the pixel gives the run of
// a.w grid steps from the first whose hole reaches the pixel, ka; steps
// of the run whose hole misses the pixel give an overlap of exactly 0.
// The fixed length keeps the loops free of unpredictable branches.
func (p *ccfPlan) walk(a *ccfAcc, o *ccfOrder, places []placement, xlo, xhi int) int {
	lo, hi := 1-p.h, 1+p.h
	dk := p.dk
	nk := len(dk)
	W := a.w
	n := o.n()
	wl, flux := o.wl, o.flux
	// Lines [i0, i1) have the current pixel in their window.
	i0 := 0
	for i0 < len(places) && int(places[i0].end) <= xlo {
		i0++
	}
	i1 := i0
	// Each line in the window has a slot of ring (a power of two): its hole
	// edges A_k = λ D_k (1 − h) and B_k = λ D_k (1 + h), with W steps of
	// +Inf after the grid, and B_k interpolated linearly in k for a first
	// guess of ka.
	type lineState struct {
		A, B    []float64
		b0, inv float64
	}
	ring := make([]lineState, 4)
	fill := func(i int) {
		ls := &ring[i&(len(ring)-1)]
		if ls.A == nil {
			ls.A, ls.B = make([]float64, nk+W), make([]float64, nk+W)
		}
		lam := places[i].lambda
		A, B := ls.A, ls.B
		for k, d := range dk {
			A[k] = lam * d * lo
			B[k] = lam * d * hi
		}
		for k := nk; k < nk+W; k++ {
			A[k], B[k] = math.Inf(1), math.Inf(1)
		}
		ls.b0, ls.inv = B[0], float64(nk-1)/(B[nk-1]-B[0])
	}
	t := make([]float64, W)
	var prs []pixRun
	tb := make([]float64, 0, 4*W)
	sv := nk + W // stride of val and vr, rows of band, per segment
	ex := -2     // the pixel whose lower edge is e1
	var e1 float64
	for x := xlo; x < xhi; x++ {
		for i1 < len(places) && int(places[i1].start) <= x {
			if i1-i0 >= len(ring) {
				// More lines share a pixel than the ring holds: double
				// it and refill the slots of the lines in the window.
				ring = make([]lineState, 2*len(ring))
				for i := i0; i < i1; i++ {
					fill(i)
				}
			}
			fill(i1)
			i1++
		}
		for i0 < i1 && int(places[i0].end) <= x {
			i0++
		}
		if i0 == i1 {
			if i1 == len(places) {
				break
			}
			// No line here: jump to the next line's first pixel.
			x = int(places[i1].start) - 1
			continue
		}
		if i1-i0 == 1 {
			// One line until the next line's window opens or this
			// one's closes: the tight loop of walkOne.
			xend := min(xhi, int(places[i0].end))
			if i1 < len(places) {
				xend = min(xend, int(places[i1].start))
			}
			ls := &ring[i0&(len(ring)-1)]
			if need := a.walkOne(o, places, i0, ls.A, ls.B, ls.b0, ls.inv, x, xend, t); need > 0 {
				return need
			}
			x = xend - 1
			ex = -2
			continue
		}
		e0 := e1
		if ex != x {
			e0 = o.edge(x)
		}
		if x+1 < n {
			e1 = 0.5 * (wl[x] + wl[x+1])
		} else {
			e1 = o.edge(x + 1)
		}
		ex = x + 1
		iw := 1 / (e1 - e0)
		f := flux[x]
		s2 := o.sig2(x)
		prs = prs[:0]
		tb = tb[:0]
		for i := i0; i < i1; i++ {
			ls := &ring[i&(len(ring)-1)]
			A, B := ls.A, ls.B
			k, need := firstStep(A, B, ls.b0, ls.inv, e0, e1, nk, W)
			if need > 0 {
				return need
			}
			if k == nk {
				continue
			}
			pl := &places[i]
			w := pl.weight
			s := int(pl.seg)
			if a.band == nil {
				if !pixelKernelVar(t, A[k:k+W], B[k:k+W], a.val[s*sv+k:s*sv+k+W], a.vr[s*sv+k:s*sv+k+W], e0, e1, iw, w, f, s2) {
					overlaps(t, A[k:k+W], B[k:k+W], e0, e1, iw, w)
					addValVar(a.val[s*sv+k:s*sv+k+W], a.vr[s*sv+k:s*sv+k+W], t, f, s2)
				}
			} else if !pixelKernel(t, A[k:k+W], B[k:k+W], a.val[s*sv+k:s*sv+k+W], a.band[(s*sv+k)*W:(s*sv+k+W)*W], e0, e1, iw, w, f, s2) {
				overlaps(t, A[k:k+W], B[k:k+W], e0, e1, iw, w)
				addValBand(a.val[s*sv+k:s*sv+k+W], a.band[(s*sv+k)*W:(s*sv+k+W)*W], t, f, s2)
			}
			if a.cov && (i1-i0 > 1 || a.band == nil) {
				prs = append(prs, pixRun{line: i, k0: k, off: len(tb)})
				tb = append(tb, t...)
			}
		}
		if len(prs) > 1 || (len(prs) == 1 && a.band == nil) {
			a.keep(s2, prs, tb, places)
		}
	}
	return 0
}

// walkOne is walk over pixels [x0, x1) of o reached by one line only: the
// line, its hole edges A and B and the linear guess of the run's first
// step (b0, inv); t is scratch of a.w values.
func (a *ccfAcc) walkOne(o *ccfOrder, places []placement, line int, A, B []float64, b0, inv float64, x0, x1 int, t []float64) int {
	w, s := places[line].weight, int(places[line].seg)
	nk, W := a.nk, a.w
	sv := nk + W
	n := o.n()
	wl, flux := o.wl, o.flux
	val := a.val[s*sv : (s+1)*sv]
	vr := a.vr[s*sv : (s+1)*sv]
	var band []float64
	if a.band != nil {
		band = a.band[s*sv*W : (s+1)*sv*W]
	}
	keep := a.cov && band == nil
	prs := []pixRun{{line: line}}
	A, B = A[:nk+W], B[:nk+W]
	e1 := o.edge(x0)
	for x := x0; x < x1; x++ {
		e0 := e1
		if x+1 < n {
			e1 = 0.5 * (wl[x] + wl[x+1])
		} else {
			e1 = o.edge(x + 1)
		}
		iw := 1 / (e1 - e0)
		f := flux[x]
		s2 := o.sig2(x)
		k, need := firstStep(A, B, b0, inv, e0, e1, nk, W)
		if need > 0 {
			return need
		}
		if k == nk {
			continue
		}
		if band != nil {
			if !pixelKernel(t, A[k:k+W], B[k:k+W], val[k:k+W], band[k*W:(k+W)*W], e0, e1, iw, w, f, s2) {
				overlaps(t, A[k:k+W], B[k:k+W], e0, e1, iw, w)
				addValBand(val[k:k+W], band[k*W:(k+W)*W], t, f, s2)
			}
		} else if !pixelKernelVar(t, A[k:k+W], B[k:k+W], val[k:k+W], vr[k:k+W], e0, e1, iw, w, f, s2) {
			overlaps(t, A[k:k+W], B[k:k+W], e0, e1, iw, w)
			addValVar(val[k:k+W], vr[k:k+W], t, f, s2)
		}
		if keep {
			prs[0].k0 = k
			a.keep(s2, prs, t, places)
		}
	}
	return 0
}

//go:generate go run ./internal/genkernels

// overlaps sets t[j] = w · (overlap of the hole [A[j], B[j]] with the
// pixel [e0, e1]) · iw, 0 when they do not overlap.
func overlaps(t, A, B []float64, e0, e1, iw, w float64) {
	A, B = A[:len(t)], B[:len(t)]
	for j := range t {
		l, r := max(A[j], e0), min(B[j], e1)
		t[j] = w * (max(r-l, 0) * iw)
	}
}

// addValVar adds a pixel's run t to a CCF (flux f) and its per-bin
// variance (pixel variance s2).
func addValVar(val, vr, t []float64, f, s2 float64) {
	val, vr = val[:len(t)], vr[:len(t)]
	for j, tj := range t {
		val[j] += f * tj
		vr[j] += s2 * tj * tj
	}
}

// addValBand adds a pixel's run t (of w = len(t) steps) to a CCF (flux f)
// and its outer product, times the pixel variance s2, to the upper band
// (rows of w values from the diagonal).
func addValBand(val, band, t []float64, f, s2 float64) {
	w := len(t)
	val = val[:w]
	for j, tj := range t {
		val[j] += f * tj
	}
	band = band[:w*w]
	for m := 0; m < w; m++ {
		u := s2 * t[m]
		row := band[m*w : m*w+w-m]
		tt := t[m:w]
		tt = tt[:len(row)]
		for j := range row {
			row[j] += u * tt[j]
		}
	}
}

// propQ is the number of CCF quantities whose errors propagate computes.
const propQ = 6

// propagate returns the photon-noise variances of linear functionals of the
// CCF: quantity q has gradient g[q][k] = ∂Q/∂CCF(v_k) with respect to the
// summed CCF, and segment s has gradient sg[s][k] with respect to its own
// CCF. Because the CCF is linear in the pixel fluxes,
//
//	Var Q = Σ_x σ_x² (Σ_k g_k ∂CCF_k/∂F_x)² = gᵀ Cov g
//
// exactly, including the correlation between neighbouring CCF bins and
// between lines that share pixels. The covariance is built by run(true);
// a plan run without it is walked again once.
func (p *ccfPlan) propagate(g [][]float64, sg [][]float64) (vq, vs []float64) {
	if p.cov == nil {
		p.run(true)
	}
	a := p.cov
	nk, st := a.nk, a.w
	vq = make([]float64, len(g))
	vs = make([]float64, len(sg))
	if a.band != nil {
		rows := (nk + st) * st // one segment's band
		// The summed CCF's band is the sum of the segments'.
		tot := make([]float64, nk*st)
		for s := 0; s < a.nseg; s++ {
			for i, v := range a.band[s*rows : s*rows+nk*st] {
				tot[i] += v
			}
		}
		for q, gq := range g {
			vq[q] = bandQuad(tot, st, gq)
		}
		for s, gs := range sg {
			vs[s] = bandQuad(a.band[s*rows:s*rows+nk*st], st, gs)
		}
	}
	// The pixels kept: with a band, those reached by several lines, whose
	// different lines' terms are still to add, 2 Σ_{l<l'} h_l h_l' with
	// h_l = Σ_k g_k J_lkx (within one segment for the segments' own
	// CCFs); without, every pixel, whose lines' own terms h_l² are added
	// too.
	self := 0.0
	if a.band == nil {
		self = 1
	}
	for _, sp := range a.shared {
		runs := a.runs[sp.first : sp.first+sp.nrun]
		for q, gq := range g {
			var sum, cross, sq float64
			for _, r := range runs {
				h := dotRun(gq, a.vals, r)
				cross += h * sum
				sum += h
				sq += h * h
			}
			vq[q] += sp.sig2 * (2*cross + self*sq)
		}
		for i := 0; i < len(runs); {
			s := runs[i].seg
			gs := sg[s]
			var sum, cross, sq float64
			for ; i < len(runs) && runs[i].seg == s; i++ {
				h := dotRun(gs, a.vals, runs[i])
				cross += h * sum
				sum += h
				sq += h * h
			}
			vs[s] += sp.sig2 * (2*cross + self*sq)
		}
	}
	return vq, vs
}

func dotRun(g, vals []float64, r sharedRun) float64 {
	var h float64
	gk := g[r.k0 : r.k0+r.n]
	for j, v := range vals[r.off : r.off+r.n] {
		h += gk[j] * v
	}
	return h
}

// bandQuad returns gᵀ C g for the symmetric C whose upper band is
// band[k*stride + j] = C[k][k+j].
func bandQuad(band []float64, stride int, g []float64) float64 {
	nk := len(g)
	var q float64
	for k, gk := range g {
		row := band[k*stride : k*stride+min(stride, nk-k)]
		s := 0.5 * row[0] * gk
		for j := 1; j < len(row); j++ {
			s += row[j] * g[k+j]
		}
		q += gk * s
	}
	return 2 * q
}

// values returns the summed CCF alone, line by line: the flux a hole
// covers is the difference of the cumulative flux (constant flux density
// over each pixel) at its two ends. It suits holes several pixels wide
// (the coarse search), where walk would give each pixel many steps.
// Unless serial, the two halves of the lines are summed in two goroutines;
// the result does not depend on the number of processors.
func (p *ccfPlan) values(serial bool) []float64 {
	mid := len(p.places) / 2
	out := make([]float64, len(p.dk))
	hi := make([]float64, len(p.dk))
	if serial {
		p.valuesOf(p.places[mid:], hi)
		p.valuesOf(p.places[:mid], out)
	} else {
		var wg worker.Group
		wg.Go(func() { p.valuesOf(p.places[mid:], hi) })
		p.valuesOf(p.places[:mid], out)
		wg.Rethrow()
	}
	for k := range out {
		out[k] += hi[k]
	}
	return out
}

// valuesOf adds the CCF of the lines placed at places to out.
func (p *ccfPlan) valuesOf(places []placement, out []float64) {
	lo, hi := 1-p.h, 1+p.h
	var cum, edges []float64
	for _, pl := range places {
		o := &p.orders[pl.order]
		xs, xe := int(pl.start), int(pl.end)
		// cum[x − xs] is the flux of pixels xs … x − 1, edges[x − xs] the
		// lower edge of pixel x.
		n := xe - xs
		if cap(cum) < n+1 {
			cum, edges = make([]float64, 2*n+1), make([]float64, 2*n+1)
		}
		cum, edges = cum[:n+1], edges[:n+1]
		cum[0], edges[0] = 0, o.edge(xs)
		flux := o.flux[xs:xe]
		// Pixels followed by another: their upper edge is a midpoint.
		inner := min(n, o.n()-1-xs)
		wl := o.wl[xs : xs+inner+1]
		var c float64
		for j := 0; j < inner; j++ {
			c += flux[j]
			cum[j+1] = c
			edges[j+1] = 0.5 * (wl[j] + wl[j+1])
		}
		for j := inner; j < n; j++ {
			c += flux[j]
			cum[j+1] = c
			edges[j+1] = o.edge(xs + j + 1)
		}
		// upTo returns the flux below λ, which lies in pixel xs + j.
		upTo := func(lam float64, j int) float64 {
			return cum[j] + (lam-edges[j])*flux[j]/(edges[j+1]-edges[j])
		}
		ja, jb := 0, 0
		for k, d := range p.dk {
			a, b := pl.lambda*d*lo, pl.lambda*d*hi
			for ja+1 < n && edges[ja+1] <= a {
				ja++
			}
			for jb+1 < n && edges[jb+1] <= b {
				jb++
			}
			out[k] += pl.weight * (upTo(b, jb) - upTo(a, ja))
		}
	}
}

// heaviest returns the n lines of m with the largest weights, in their
// order in m; of lines of equal weight at the cut, the first are kept.
func heaviest(m *Mask, n int) *Mask {
	w := slices.Clone(m.Weight)
	slices.Sort(w)
	cut := w[len(w)-n]
	above := 0 // lines heavier than the cut
	for _, x := range m.Weight {
		if x > cut {
			above++
		}
	}
	atCut := n - above // lines at the cut to keep
	sub := &Mask{Vacuum: m.Vacuum, Wavelength: make([]float64, 0, n), Weight: make([]float64, 0, n)}
	for i, x := range m.Weight {
		if x > cut || (x == cut && atCut > 0) {
			if x == cut {
				atCut--
			}
			sub.Wavelength = append(sub.Wavelength, m.Wavelength[i])
			sub.Weight = append(sub.Weight, x)
		}
	}
	return sub
}

// coarseSearch finds the velocity of the CCF minimum on a coarse grid and
// the FWHM of a Gaussian fitted there.
func coarseSearch(orders []ccfOrder, m *Mask, center, search, step, hole float64, serial bool) (vc, fwhm float64, err error) {
	// Use the heaviest lines only: the search needs the position, not
	// precision.
	sub := m
	if m.Len() > 200 {
		sub = heaviest(m, 200)
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
	val := p.values(serial)
	res, ferr := fitGaussian(v, val, nil)
	if ferr != nil {
		imin := 0
		for k := range val {
			if val[k] < val[imin] {
				imin = k
			}
		}
		return v[imin], 10e3, nil
	}
	return res.theta[2], 2.3548200450309493 * res.theta[3], nil
}

// firstStep returns the first grid step k whose hole ends above the pixel's
// lower edge e0 (nk when none; the guess from b0 and inv, the holes' start
// and inverse spacing, is corrected both ways), and, when the W steps from
// k end below the pixel's upper edge e1, the number of steps the pixel
// needs (0 when W suffice).
func firstStep(A, B []float64, b0, inv, e0, e1 float64, nk, W int) (k, need int) {
	if kf := (e0 - b0) * inv; kf >= 0 {
		k = min(int(kf)+1, nk)
	}
	for k < nk && B[k] <= e0 {
		k++
	}
	for k > 0 && B[k-1] > e0 {
		k--
	}
	if k == nk || A[k+W] >= e1 {
		return k, 0
	}
	need = W
	for k+need < nk && A[k+need] < e1 {
		need++
	}
	return k, need
}
