package activity

import (
	"math"
	"sort"

	"spotsift/mapfit"
)

// Eccentric orbits in the blind search (docs/methods.md §14.5b).
//
// A sinusoid describes an orbit with e ≲ 0.5 well enough to find it: its
// first Fourier term carries most of the signal, and the harmonics the
// search then finds are labelled as the orbit's (relations). A highly
// eccentric orbit is a short spike once a period; its power spreads over
// tens of harmonics, none of them dominant, and the sinusoid search finds
// a handful of them (or their aliases) while the orbit's own period may
// not be among the peaks at all. On HD 156846 (P = 359.5 d, e = 0.85,
// Tamuz et al. 2008, values from memory) it found 13.8, 180.7, 40.0 and
// 1334 d and judged them planets; one Keplerian at 359.6 d leaves 3.5 m/s
// of residual scatter where those four sinusoids leave more than 100.
//
// After the sinusoid search, eccentricSearch therefore tries, as the
// fundamental of an eccentric orbit, every period n/f_j (n = 1 to
// eccMaxHarmonic) of the strongest signals found: an orbit seen through
// its harmonics has one of them among the strongest. At each, a grid of
// shapes (eccentricity and phase of periastron), then a local fit of the
// frequency, e and the periastron, and the Keplerian replaces the signals
// it explains (those within the resolution of one of its harmonics, or of
// a 1-day or 1-year alias of one) when the Bayesian information criterion
// prefers it, by more than 10 (very strong evidence; Kass & Raftery 1995,
// from memory), to the sinusoids it replaces. The search then starts
// again with the orbit in the model.

// eccSignal is a signal the search models as an eccentric orbit: its
// current frequency and shape.
type eccSignal struct {
	f  float64
	sh orbitShape
}

const (
	// eccMaxHarmonic is the highest harmonic of an orbit a strong found
	// signal is taken to be: at e = 0.85 the n-th Fourier term is still
	// about a quarter of the first at n = 7 to 9 and 0.14–0.19 of it at
	// n = 12 (computed: docs/methods.md §14.5b), so the strongest peaks
	// lie among the first dozen or their aliases.
	eccMaxHarmonic = 12
	// eccPMin is the shortest period tried as an eccentric orbit's:
	// orbits of a few days are mostly circularised by tides (common
	// practice), and the sinusoid search finds the rest, whose harmonics
	// the relations label.
	eccPMin = 10.0
	// eccBICMargin is the BIC difference an eccentric orbit must win by.
	eccBICMargin = 10.0
	// eccMax bounds the eccentricities fitted (HD 80606 b, e = 0.93, is
	// among the most eccentric planets known; from memory).
	eccMax = 0.95
)

// periastronCycles returns the number of the orbit's cycles in which an
// epoch falls near periastron: within half the time the orbit spends
// there, (1 − e)^1.5 of a period (derived from Kepler's second law), of it.
func (d *data) periastronCycles(o eccSignal) int {
	half := 0.5 * math.Pow(1-o.sh.e, 1.5)
	seen := map[float64]bool{}
	for _, ti := range d.t {
		x := o.f*(ti-d.t0) - o.sh.phi
		c := math.Round(x)
		if math.Abs(x-c) < half {
			seen[c] = true
		}
	}
	return len(seen)
}

// orbitBeta returns the red-noise factor of the residuals of a joint fit
// of the orbit o and sinusoids at others, at the orbit's period.
func (d *data) orbitBeta(o eccSignal, others []float64) float64 {
	freqs := append([]float64{o.f}, others...)
	shapes := make([]orbitShape, len(freqs))
	shapes[0] = o.sh
	fit, err := fitCurves(d.t, d.rv, d.err, d.inst, d.ninst, freqs, shapes, d.t0)
	if err != nil {
		return math.NaN()
	}
	resid := make([]float64, len(d.t))
	for i, ti := range d.t {
		resid[i] = d.rv[i] - fit.model(i, ti)
	}
	return redNoiseBeta(d.t, resid, d.err, 1/o.f)
}

// eccGrid is the grid of shapes tried at each candidate period: the phase
// of periastron in steps of half the spike's width, which narrows as
// (1 − e)^1.5 (the time the orbit spends near periastron).
func eccGrid() []orbitShape {
	var out []orbitShape
	for _, e := range []float64{0.5, 0.7, 0.85} {
		step := 0.5 * math.Pow(1-e, 1.5)
		n := int(math.Ceil(1 / step))
		for i := 0; i < n; i++ {
			out = append(out, orbitShape{e: e, phi: float64(i) / float64(n)})
		}
	}
	return out
}

// shapesFor returns the shape of each frequency of freqs: an eccentric
// signal's for the one within half a resolution element of it, a
// sinusoid's for the others; nil when there is no eccentric signal.
func (d *data) shapesFor(freqs []float64) []orbitShape {
	if len(d.ecc) == 0 {
		return nil
	}
	out := make([]orbitShape, len(freqs))
	for k, f := range freqs {
		for _, e := range d.ecc {
			if math.Abs(f-e.f) < 0.5/d.T {
				out[k] = e.sh
			}
		}
	}
	return out
}

// moveEcc records that a signal at frequency from moved to to (a
// refinement), so that its shape follows it.
func (d *data) moveEcc(from, to float64) {
	for i := range d.ecc {
		if math.Abs(from-d.ecc[i].f) < 0.5/d.T {
			d.ecc[i].f = to
		}
	}
}

// fitRV is the joint fit of the RVs at freqs, each signal with its shape.
func (d *data) fitRV(freqs []float64) (*sineFit, error) {
	return fitCurves(d.t, d.rv, d.err, d.inst, d.ninst, freqs, d.shapesFor(freqs), d.t0)
}

// explainedBy reports whether a signal at frequency g lies within the
// resolution res of harmonic n (1 ≤ n ≤ 2·eccMaxHarmonic) of f0, or of a
// 1-day or 1-year alias of one.
func explainedBy(g, f0, res float64) bool {
	for n := 1; n <= 2*eccMaxHarmonic; n++ {
		h := float64(n) * f0
		for _, a := range []float64{h, math.Abs(h - siderealFreq), h + siderealFreq, math.Abs(h - 1), h + 1, math.Abs(h - yearFreq), h + yearFreq} {
			if math.Abs(g-a) < res {
				return true
			}
		}
	}
	return false
}

// eccentricSearch looks for one eccentric orbit that explains several of
// the signals freqs found by the sinusoid search better than they explain
// themselves. It returns the orbit, or ok false.
func (d *data) eccentricSearch(freqs []float64) (orb eccSignal, ok bool) {
	if len(freqs) < 2 || d.ctx.Err() != nil {
		return orb, false
	}
	all, err := d.fitRV(freqs)
	if err != nil || all.Dof <= 0 {
		return orb, false
	}
	// An orbit gains on the sinusoids only the χ² they leave: when that
	// is within the noise of its degrees of freedom (three standard
	// deviations of χ²) plus the margin, no orbit can win, and none is
	// fitted.
	dofS := float64(all.Dof)
	if all.ChiSq-dofS < eccBICMargin+3*math.Sqrt(2*dofS) {
		return orb, false
	}
	res := 1 / d.T
	n := float64(len(d.t))
	grid := eccGrid()
	type cand struct {
		f    float64
		rest []float64
		gain float64 // BIC of the sinusoids less the orbit's
	}
	var cands []cand
	for j := 0; j < len(freqs) && j < 3; j++ {
		// The signal may be a harmonic of the orbit, or a 1-day or 1-year
		// alias of one (gaps between seasons make the latter common).
		for _, sh := range []float64{0, yearFreq, -yearFreq, siderealFreq, -siderealFreq, 1, -1} {
			g := math.Abs(freqs[j] + sh)
			for h := 1; h <= eccMaxHarmonic; h++ {
				f0 := g / float64(h)
				if f0 < res || 1/f0 < eccPMin || 1/f0 > d.T/2 {
					continue
				}
				dup := false
				for _, c := range cands {
					dup = dup || math.Abs(c.f-f0) < res
				}
				if dup {
					continue
				}
				var rest []float64
				for _, x := range freqs {
					if !explainedBy(x, f0, res) {
						rest = append(rest, x)
					}
				}
				// An orbit that explains fewer than two of the signals is
				// one planet's sinusoid, which the search already has.
				if len(freqs)-len(rest) >= 2 {
					cands = append(cands, cand{f: f0, rest: rest})
				}
			}
		}
	}
	// Each sinusoid has 3 parameters (frequency, A, B); the orbit 5
	// (frequency, e, periastron, A, B). Both models' χ² are scaled by the
	// reduced χ² of the orbit's fit (the better model when it wins), times
	// β² when the search is final (beta > 0: the red-noise factor of its
	// residuals at the orbit's period, as for the alias check), and gain
	// is how far the orbit's BIC lies below the sinusoids'.
	gainOf := func(chi float64, rest int, beta float64) float64 {
		dof := n - float64(2*(rest+1)+d.ninst)
		scale := math.Max(1, chi/dof) * math.Max(1, beta*beta)
		return (all.ChiSq-chi)/scale - float64(3*len(freqs)-5-3*rest)*math.Log(n)
	}
	// A short local fit at every candidate (the frequency f_j/n can be a
	// fraction of a spike's width off over the baseline), then a full one
	// at the three best.
	for i := range cands {
		if d.ctx.Err() != nil {
			return orb, false
		}
		cands[i].gain = math.Inf(-1)
		if _, chi, ok := d.fitEccentric(cands[i].f, cands[i].rest, grid, 150); ok {
			cands[i].gain = gainOf(chi, len(cands[i].rest), 0)
		}
	}
	sort.SliceStable(cands, func(a, b int) bool { return cands[a].gain > cands[b].gain })
	// The orbit must gain more than the margin; the best one that does is
	// the search's.
	bestGain := eccBICMargin
	// (A candidate the short fit leaves worse than the sinusoids is not
	// fitted further.)
	for ci := 0; ci < len(cands) && ci < 3 && cands[ci].gain > 0; ci++ {
		c := cands[ci]
		o, chi, fitted := d.fitEccentric(c.f, c.rest, grid, 600)
		// An orbit whose eccentricity runs to the edge of its disk is a
		// spike fitted to a few epochs, not a measured orbit; so is one
		// whose periastron the data see in fewer than two cycles.
		if !fitted || o.sh.e > eccMax-0.01 || d.periastronCycles(o) < 2 {
			continue
		}
		beta := d.orbitBeta(o, c.rest)
		if g := gainOf(chi, len(c.rest), beta); g > bestGain {
			bestGain, orb, ok = g, o, true
		}
	}
	return orb, ok
}

// eccentricGrid returns the best shape of grid for an orbit at frequency
// f0 beside sinusoids at others, and its χ².
func (d *data) eccentricGrid(f0 float64, others []float64, grid []orbitShape) (orbitShape, float64) {
	freqs := append([]float64{f0}, others...)
	shapes := make([]orbitShape, len(freqs))
	bestChi, bestSh := math.Inf(1), orbitShape{}
	for _, sh := range grid {
		shapes[0] = sh
		if chi, err := chiCurves(d.t, d.rv, d.err, d.inst, d.ninst, freqs, shapes, d.t0); err == nil && chi < bestChi {
			bestChi, bestSh = chi, sh
		}
	}
	return bestSh, bestChi
}

// fitEccentric fits one eccentric orbit near frequency f0 beside
// sinusoids at others: the grid of shapes at f0, then a local fit of the
// frequency (within the resolution), e (below eccMax) and the periastron
// from the best of them, in at most maxEval steps. It returns the orbit
// and the fit's χ².
func (d *data) fitEccentric(f0 float64, others []float64, grid []orbitShape, maxEval int) (eccSignal, float64, bool) {
	freqs := append([]float64{f0}, others...)
	shapes := make([]orbitShape, len(freqs))
	chiAt := func(f float64, sh orbitShape) float64 {
		freqs[0], shapes[0] = f, sh
		chi, err := chiCurves(d.t, d.rv, d.err, d.inst, d.ninst, freqs, shapes, d.t0)
		if err != nil || !isFinite(chi) {
			return math.Inf(1)
		}
		return chi
	}
	bestSh, bestChi := d.eccentricGrid(f0, others, grid)
	if !isFinite(bestChi) {
		return eccSignal{}, 0, false
	}
	// The local fit: frequency, and (h, k) = √e (cos 2πφ, sin 2πφ) on the
	// disk e < eccMax.
	res := 1 / d.T
	sq := math.Sqrt(bestSh.e)
	start := []float64{f0, sq * math.Cos(2*math.Pi*bestSh.phi), sq * math.Sin(2*math.Pi*bestSh.phi)}
	toShape := func(x []float64) orbitShape {
		e := x[1]*x[1] + x[2]*x[2]
		return orbitShape{e: e, phi: math.Mod(math.Atan2(x[2], x[1])/(2*math.Pi)+1, 1)}
	}
	post := func(x []float64) float64 {
		if math.Abs(x[0]-f0) > res || x[0] <= 0 {
			return math.Inf(-1)
		}
		sh := toShape(x)
		if !(sh.e < eccMax) {
			return math.Inf(-1)
		}
		return -0.5 * chiAt(x[0], sh)
	}
	space := mapfit.Space{
		{Name: "freq", Kind: mapfit.Free, Scale: res / 10},
		{Name: "h", Kind: mapfit.DiskPair, Hi: math.Sqrt(eccMax)},
		{Name: "k", Kind: mapfit.Free},
	}
	r, err := mapfit.Fit(&mapfit.Problem{Space: space, LogPost: post, Starts: [][]float64{start}},
		&mapfit.Settings{NelderMead: true, NoLaplace: true, Workers: 1, MaxEvaluations: maxEval, Context: d.ctx})
	f, sh, chi := f0, bestSh, bestChi
	if err == nil && r != nil && r.X != nil && isFinite(r.LogPost) && -2*r.LogPost < chi {
		f, sh, chi = r.X[0], toShape(r.X), -2*r.LogPost
	}
	return eccSignal{f: f, sh: sh}, chi, true
}
