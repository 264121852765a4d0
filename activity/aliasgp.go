package activity

import (
	"math"
	"slices"
)

// gpAliasMaxRefits is how many of the likeliest aliases gpAliasRival fits
// again with the activity model's own parameters free (the others are
// weighed with the parameters fitted at the period).
const gpAliasMaxRefits = 2

// gpAliasRival weighs the aliases cands of signal k of freqs (the
// frequencies aliasCandidates found for it, each refined by the sinusoid
// fits; all is the joint fit at freqs) again with the activity modelled:
// the Gaussian-process model of the model comparison (tr.det.gp at its
// MAP tr.det.gpFit), on all the RVs, with every other signal at its
// period (its shape, its amplitude fitted) and the signal at its period
// is set against the same model with the signal at each alias, refined
// within 1.5 resolution elements, and the period itself within half of
// one. When an alias comes near, the model at the period and the
// likeliest aliases are fitted again with the GP's parameters free,
// started from the period's. Δχ² is 2 Δln L: the GP is the model of the
// correlated noise, so no residual scatter scales it (the white-noise
// fits' stand-in for it). The GP's residuals may still carry red noise it
// does not model (a GP anchored at a wrong rotation period); their
// red-noise factor β at the period (Pont, Zucker & Queloz 2006), from the
// residuals less the GP's prediction, divides Δχ² as in
// aliasCandidates. The period prior's term is added as there.
//
// It returns the likeliest alias, whether it comes within
// aliasAmbiguityLimit or not (nil when no alias could be fitted), and
// ok = true, or ok = false when no GP fit is at hand (GP fits switched
// off or not converged, or an eccentric orbit, whose GP model would have
// to fit its shape at the alias too), in which case the sinusoid fits'
// answer stands.
func (tr *trial) gpAliasRival(all *sineFit, freqs []float64, k int, cands []aliasRival) (best *aliasRival, ok bool) {
	g, r1 := tr.det.gp, tr.det.gpFit
	if g == nil || r1 == nil || !r1.ok || tr.shape.e > 0 || g.freq <= 0 || all == nil {
		return nil, false
	}
	d := tr.d
	m := *g
	m.y = d.rv
	m.fixed = nil
	// A signal within the resolution of this one is this one, split by an
	// imperfect fit: it is left out, as aliasCandidates leaves it out.
	twins := sameSignal(freqs, k, 1/d.T)
	for j, fj := range freqs {
		if j == k || slices.Contains(twins, j) {
			continue
		}
		cc, sc := make([]float64, len(d.t)), make([]float64, len(d.t))
		for i, ti := range d.t {
			cc[i], sc[i] = basis(fj, all.shape(j), ti, d.t0)
		}
		m.fixed = append(m.fixed, cc, sc)
	}
	variance := make([]float64, len(m.sigma))
	for i, s := range m.sigma {
		variance[i] = s * s
	}
	sol, err := m.noise(r1.theta).Factor(m.t, variance, m.inst)
	if err != nil || sol == nil {
		return nil, false
	}
	m.freq = 0
	base := m.design() // the offsets and the other signals
	// The fixed columns are solved once; each frequency tried adds the
	// signal's two.
	kBase, okB := solveColumns(sol, base)
	if !okB {
		return nil, false
	}
	// residAt returns the GLS residuals with the signal at frequency f, at
	// the period's GP parameters; lnLAt the profile ln L there.
	residAt := func(f float64) ([]float64, bool) {
		cc, sc := make([]float64, len(m.t)), make([]float64, len(m.t))
		for i, ti := range m.t {
			cc[i], sc[i] = basis(f, orbitShape{}, ti, m.t0)
		}
		kSig, okS := solveColumns(sol, [][]float64{cc, sc})
		if !okS {
			return nil, false
		}
		cols := append(append([][]float64(nil), base...), cc, sc)
		kx := append(append([][]float64(nil), kBase...), kSig...)
		_, _, r, okG := glsSolved(kx, cols, m.y, false)
		return r, okG
	}
	lnLAt := func(f float64) float64 {
		r, okG := residAt(f)
		if !okG {
			return math.Inf(-1)
		}
		lnL, err := sol.LogLikelihood(r)
		if err != nil || math.IsNaN(lnL) {
			return math.Inf(-1)
		}
		return lnL
	}
	res := 1 / d.T
	f := tr.f
	bestF, lnF := f, math.Inf(-1)
	for s := -4; s <= 4; s++ {
		x := f + float64(s)*res/8
		if l := lnLAt(x); l > lnF {
			bestF, lnF = x, l
		}
	}
	if !isFinite(lnF) {
		return nil, false
	}
	type cand struct {
		aliasRival
		lnL float64
	}
	var cs []cand
	for _, c := range cands {
		bestL, bestA := math.Inf(-1), c.freq
		for s := -12; s <= 12; s++ {
			x := c.freq + float64(s)*res/8
			if x <= 0 || math.Abs(x-f) < res || math.Abs(math.Log(x/f)) < aliasMinSeparation {
				continue
			}
			if l := lnLAt(x); l > bestL {
				bestL, bestA = l, x
			}
		}
		if isFinite(bestL) {
			cs = append(cs, cand{aliasRival{freq: bestA, prior: aliasPrior(f, bestA), label: c.label, gp: true}, bestL})
		}
		if d.ctx.Err() != nil {
			return nil, false
		}
	}
	if len(cs) == 0 {
		return nil, true
	}
	// The red noise the GP leaves: β of the residuals less the GP's
	// prediction at the data, at the period's fit.
	b2 := 1.0
	if r, okG := residAt(bestF); okG {
		if mean, _, err := predictAtData(sol, r, m.t); err == nil {
			z := make([]float64, len(r))
			for i := range r {
				z[i] = r[i] - mean[i]
			}
			if b := redNoiseBeta(m.t, z, m.sigma, 1/f); isFinite(b) {
				b2 = math.Max(1, b*b)
			}
		}
	}
	odds := func(c cand) float64 { return 2*(lnF-c.lnL)/b2 + c.prior }
	// The likeliest aliases, fitted again with the GP free, and the period
	// too when one of them comes near.
	refit := func(freq float64) float64 {
		mm := m
		mm.freq, mm.shape = freq, orbitShape{}
		if r := mm.fit([][]float64{r1.theta}); r.ok {
			return r.lnL
		}
		return math.Inf(-1)
	}
	refitF := false
	for n := 0; n < gpAliasMaxRefits && n < len(cs); n++ {
		j := n
		for i := n + 1; i < len(cs); i++ {
			if odds(cs[i]) < odds(cs[j]) {
				j = i
			}
		}
		cs[n], cs[j] = cs[j], cs[n]
		if odds(cs[n]) >= 2*aliasAmbiguityLimit || d.ctx.Err() != nil {
			break // too far to come within the limit by a refit
		}
		if !refitF {
			lnF, refitF = math.Max(lnF, refit(bestF)), true
		}
		cs[n].lnL = math.Max(cs[n].lnL, refit(cs[n].freq))
	}
	for _, c := range cs {
		c.dchi = 2 * (lnF - c.lnL) / b2
		if best == nil || c.odds() < best.odds() {
			r := c.aliasRival
			best = &r
		}
	}
	return best, true
}
