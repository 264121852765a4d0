package activity

import (
	"fmt"
	"math"
	"slices"
	"sort"

	"spotsift/rvfit"
)

// The signals of a star are judged as one system: given periods are
// refined within the frequency resolution, all signals are fitted
// together, each one's significance is measured with the others in the
// fit, and a signal that is an alias or a harmonic of a stronger one is
// labelled as such instead of being judged as a new planet.

// refineGiven moves each given frequency to the maximum of the joint fit's
// power within a quarter of the resolution element 1/T of it (a wider
// search would absorb phase changes, which the coherence tests must see),
// the other signals held in the fit (a period quoted to a few digits, or
// from other data, is rarely at the peak of these data).
func (d *data) refineGiven(freqs []float64) []float64 {
	out := append([]float64(nil), freqs...)
	for k := range out {
		if d.ctx.Err() != nil {
			return out
		}
		out[k] = d.refineFreq(out, k, 1/(4*d.T), 1)
	}
	return out
}

// refineFreq returns the frequency within half of freqs[k] at which the
// joint fit of freqs, the others held, has the least χ²: a scan in steps
// of half/10, then, for each further level, a scan ten times finer about
// the best of the one before.
func (d *data) refineFreq(freqs []float64, k int, half float64, levels int) float64 {
	best, bestChi := freqs[k], math.Inf(1)
	trial := append([]float64(nil), freqs...)
	step := half / 10
	for range levels {
		centre := best
		for s := -10; s <= 10; s++ {
			trial[k] = centre + float64(s)*step
			if trial[k] <= 0 {
				continue
			}
			fit, err := d.fitRV(trial)
			if err == nil && fit.ChiSq < bestChi {
				best, bestChi = trial[k], fit.ChiSq
			}
		}
		step /= 10
	}
	return best
}

// jointSignificance returns, for each signal k, the power it adds to a
// joint fit of all the others (the fraction of their residual χ² it
// removes) and the red-noise factor β of the joint fit's residuals at its
// period (Pont, Zucker & Queloz 2006): dividing the χ² gain by β² gives
// the significance the signal keeps when the residuals' correlated noise
// is accounted for.
func (d *data) jointSignificance(freqs []float64) (power, beta []float64) {
	power, beta = make([]float64, len(freqs)), make([]float64, len(freqs))
	all, err := d.fitRV(freqs)
	if err != nil {
		for k := range power {
			power[k], beta[k] = math.NaN(), math.NaN()
		}
		return power, beta
	}
	resid := make([]float64, len(d.t))
	for i, ti := range d.t {
		resid[i] = d.rv[i] - all.model(i, ti)
	}
	for k := range freqs {
		var others []float64
		for j := range freqs {
			if j != k {
				others = append(others, freqs[j])
			}
		}
		chi0 := d.chi2Offsets(d.rv)
		if len(others) > 0 {
			if f, err := d.fitRV(others); err == nil {
				chi0 = f.ChiSq
			}
		}
		power[k] = powerOf(all.ChiSq, chi0)
		beta[k] = redNoiseBeta(d.t, resid, d.err, 1/freqs[k])
	}
	return power, beta
}

// relation is how a weaker signal relates to a stronger one.
type relation struct {
	to    int // index of the stronger signal
	label string
}

// windowPeaks returns the frequencies of the strongest peaks of the
// sampling's spectral window (above 0.2 of W(0), at most three, away from
// zero frequency): a true frequency f has aliases at |f ± f_w|.
func (d *data) windowPeaks() []float64 {
	return d.peaksOfWindow(d.grid, 2/d.T, 0.2, 3)
}

// peaksOfWindow returns the frequencies of the local maxima of the
// sampling's spectral window on grid g above fmin and above level (a
// fraction of W(0)), the strongest first, at most max.
func (d *data) peaksOfWindow(g rvfit.Grid, fmin, level float64, max int) []float64 {
	w, err := rvfit.Window(d.t, nil, g, &rvfit.GLSOptions{Context: d.ctx})
	if err != nil {
		return nil
	}
	type pk struct{ f, w float64 }
	var pks []pk
	for k := 1; k+1 < len(w); k++ {
		if w[k] > level && w[k] >= w[k-1] && w[k] >= w[k+1] && g.Freq(k) > fmin {
			pks = append(pks, pk{g.Freq(k), w[k]})
		}
	}
	sort.SliceStable(pks, func(a, b int) bool { return pks[a].w > pks[b].w })
	var out []float64
	for _, p := range pks {
		if len(out) == max {
			break
		}
		out = append(out, p.f)
	}
	return out
}

// relations labels every signal that lies, within one resolution element,
// at a 1-day, 1-year or spectral-window alias of a stronger signal, or at
// 2 to maxHarmonic times a stronger signal's frequency, or at a 1-day or
// window alias of its second or third harmonic when that harmonic fits
// the data about as well. An eccentric orbit puts power at its harmonics:
// a Keplerian is a Fourier series in the mean anomaly whose n-th term has
// an amplitude of order e^(n−1) K (to first order in e, eK at 2/P; Lucy
// 2005, from memory), and a harmonic beyond the periods searched (the
// third of a 2.9 d orbit lies at 0.96 d) shows only through its aliases.
// Strength is the fitted amplitude; base is the joint fit at freqs.
func (d *data) relations(base *sineFit, freqs, amps []float64) []*relation {
	out := make([]*relation, len(freqs))
	order := make([]int, len(freqs))
	for k := range order {
		order[k] = k
	}
	sort.SliceStable(order, func(a, b int) bool { return amps[order[a]] > amps[order[b]] })
	tol := 1 / d.T
	win := d.windowPeaks()
	daily := []freqShift{{siderealFreq, "1-day alias"}, {1, "1-day alias"}}
	for _, fw := range win {
		daily = append(daily, freqShift{fw, fmt.Sprintf("alias through the sampling's window peak at %.4g d", 1/fw)})
	}
	near := func(fk, h, df float64) bool {
		return math.Abs(fk-math.Abs(h-df)) <= tol || math.Abs(fk-(h+df)) <= tol
	}
	for r, k := range order {
		for _, j := range order[:r] {
			if out[j] != nil {
				continue // an alias of an alias says nothing new
			}
			fj, fk := freqs[j], freqs[k]
			name := fmt.Sprintf("signal %d (%.4g d)", j+1, 1/fj)
			if math.Abs(fk-fj) <= tol {
				out[k] = &relation{j, fmt.Sprintf("within the frequency resolution of %s: the same signal, split by an imperfect fit", name)}
			}
			for n := 2.0; n <= maxHarmonic; n++ {
				if out[k] == nil && math.Abs(fk-n*fj) <= tol {
					out[k] = &relation{j, fmt.Sprintf("at %g× the frequency of %s: a harmonic of an eccentric orbit, or of a signal that is not a sinusoid", n, name)}
				}
			}
			for _, a := range []freqShift{{siderealFreq, "1-day alias"}, {yearFreq, "1-year alias"}} {
				if out[k] == nil && near(fk, fj, a.df) {
					out[k] = &relation{j, fmt.Sprintf("the %s of %s", a.label, name)}
				}
			}
			for _, fw := range win {
				if out[k] == nil && near(fk, fj, fw) {
					out[k] = &relation{j, fmt.Sprintf("an alias of %s through the sampling's window peak at %.4g d", name, 1/fw)}
				}
			}
			for _, n := range []float64{2, 3} {
				for _, a := range daily {
					if out[k] == nil && near(fk, n*fj, a.df) && d.fitsAsWell(base, freqs, k, n*fj) {
						out[k] = &relation{j, fmt.Sprintf("the %s of %g× the frequency of %s, a harmonic of an eccentric orbit that fits the data about as well in its place", a.label, n, name)}
					}
				}
			}
		}
	}
	return out
}

// freqShift is a shift in frequency by which a signal's power reappears
// elsewhere (a day, a year, a peak of the sampling's window), and what
// such an alias is called.
type freqShift struct {
	df    float64
	label string
}

// maxHarmonic is the highest harmonic of a stronger signal's frequency at
// which a signal is labelled a harmonic: the fifth term of an orbit with
// e = 0.6 still has about a seventh of the first term's amplitude (0.14–
// 0.15, from a Fourier transform of the Keplerian over the mean anomaly,
// computed; 0.08 at e = 0.5, 0.012 at e = 0.3), which strong signals show.
const maxHarmonic = 5

// fitsAsWell reports whether signal k of freqs, moved to frequency h
// (refined within one resolution element), fits the data about as well as
// at its own frequency: a χ² no more than aliasAmbiguityLimit worse, in
// units of the joint fit's reduced χ² (base is the joint fit at freqs).
func (d *data) fitsAsWell(base *sineFit, freqs []float64, k int, h float64) bool {
	if base == nil || base.Dof <= 0 || !isFinite(base.ChiSq) {
		return false
	}
	scale := math.Max(1, base.ChiSq/float64(base.Dof))
	trial := append([]float64(nil), freqs...)
	res := 1 / d.T
	for s := -8; s <= 8; s++ {
		trial[k] = h + float64(s)*res/8
		if fit, err := d.fitRV(trial); err == nil && (fit.ChiSq-base.ChiSq)/scale < aliasAmbiguityLimit {
			return true
		}
	}
	return false
}

// aliasAmbiguityLimit is the Δχ² (in units of the residual scatter, red
// noise allowed for, and with the period prior's term, see aliasPrior)
// below which an alias of a signal's period is about as probable as the
// period itself: 2 ln 100, an alias at least 1 % as likely as the period.
const aliasAmbiguityLimit = 9.210340371976184 // 2 ln 100

// aliasMinSeparation is the smallest relative separation in frequency
// at which an alias can change a verdict: a 1-year alias of a 3.7 d
// period moves it by 0.4 %, far less than the rotation windows' own
// differential-rotation spread (diffRotationBlur), so the two are one
// answer to "planet or activity?", only the period's last digits differ.
const aliasMinSeparation = 0.05

// aliasRival is an alias of a signal's period that fits the data about
// as well as the period itself.
type aliasRival struct {
	freq  float64 // the alias's best frequency
	dchi  float64 // χ²(alias) − χ²(period), in units of the residual scatter and over β² (2 Δln L when gp)
	prior float64 // aliasPrior(f, freq): the period prior's term, added to dchi
	label string  // what kind of alias
	// gp reports that dchi is 2 Δln L of the GP activity model with the
	// signal at the alias and at the period (gpAliasRival), not the white-
	// noise fits' scaled Δχ².
	gp bool
}

// odds is −2 ln of the alias's posterior odds against the period: the
// fit's Δχ² and the period prior's term.
func (r *aliasRival) odds() float64 { return r.dchi + r.prior }

// aliasPrior is the period prior's share of −2 ln of an alias's posterior
// odds against the period: 2 ln(f_alias/f). Both candidates are peaks of
// one width in frequency (1/T), so each one's posterior mass is its
// likelihood times the prior density in frequency at it; a prior uniform
// in ln P (Jeffreys' prior for a scale such as the period, the usual
// choice in Keplerian fits; common practice) has density ∝ 1/f, and
// favours the longer of two periods by their ratio. A fit that treats
// the frequency grid as uniform (Δχ² alone) favours neither, which lets
// the 1-day alias near 1 d of every planet at a few days or more stand
// as its equal: a planet at 10 d whose alias at 1.11 d fits 7 worse in
// χ² is 9 times likelier by the prior and 300 times by both.
func aliasPrior(f, fAlias float64) float64 { return 2 * math.Log(fAlias/f) }

// aliasRivals tests, for signal k of freqs, its aliases |f ± f_w| through
// the sampling's window: the nominal 1-day (sidereal and solar) and 1-year
// shifts, and the window's own strongest peaks up to 1.1 c/d (samplingPeaks;
// a programme's nightly visits drift in clock time, so its daily alias
// need not sit at either nominal day). Each alias frequency is refined
// within 1.5 resolution elements (noise and activity shift a peak by about
// one), the other signals held in the joint fit, and its χ² compared with
// that at f. The difference is taken in units of the joint fit's reduced
// χ² and divided by β², the residuals' red-noise factor at the period
// (Pont, Zucker & Queloz 2006), and the period prior's term (aliasPrior)
// added; base is the joint fit at freqs. It returns the likeliest alias
// when it comes within aliasAmbiguityLimit (or is likelier than the
// period), nil otherwise. This is the question Dawson & Fabrycky (2010)
// answer by comparing periodograms, in its simplest form: the fit of each
// candidate (docs/methods.md §14.6).
func (d *data) aliasRivals(base *sineFit, freqs []float64, k int, win []float64, beta float64) *aliasRival {
	return likeliestRival(d.aliasCandidates(base, freqs, k, win, beta))
}

// likeliestRival returns the alias of cands with the smallest odds against
// the period when they come within aliasAmbiguityLimit, nil otherwise.
func likeliestRival(cands []aliasRival) *aliasRival {
	var best *aliasRival
	for _, r := range cands {
		if r.odds() < aliasAmbiguityLimit && (best == nil || r.odds() < best.odds()) {
			best = &r
		}
	}
	return best
}

// aliasCandidates returns every alias aliasRivals weighs, each at its
// best frequency, whether it comes within the limit or not.
func (d *data) aliasCandidates(base *sineFit, freqs []float64, k int, win []float64, beta float64) []aliasRival {
	if base == nil || base.Dof <= 0 || !isFinite(base.ChiSq) {
		return nil
	}
	// Another signal within the resolution of f is this one, split by an
	// imperfect fit (relations labels it so): held in the fit, it would
	// keep the signal at f while the alias is tried, and every alias
	// would fit as well. It is left out of both fits.
	res := 1 / d.T
	if twins := sameSignal(freqs, k, res); len(twins) > 0 {
		kept, at := make([]float64, 0, len(freqs)-len(twins)), 0
		for j, fj := range freqs {
			if j == k {
				at = len(kept)
			}
			if !slices.Contains(twins, j) {
				kept = append(kept, fj)
			}
		}
		fit, err := d.fitRV(kept)
		if err != nil || fit.Dof <= 0 || !isFinite(fit.ChiSq) {
			return nil
		}
		base, freqs, k = fit, kept, at
	}
	b2 := 1.0
	if isFinite(beta) {
		b2 = math.Max(1, beta*beta)
	}
	scale := math.Max(1, base.ChiSq/float64(base.Dof)) * b2
	shifts := []freqShift{{siderealFreq, "1-day alias"}, {1, "1-day alias"}, {yearFreq, "1-year alias"}}
	for _, fw := range win {
		label := fmt.Sprintf("alias (through the sampling's window peak at %.4g d)", 1/fw)
		switch {
		case math.Abs(fw-1) < 0.05:
			label = "1-day alias"
		case math.Abs(fw-yearFreq) < 1.5/d.T:
			label = "1-year alias"
		}
		shifts = append(shifts, freqShift{fw, label})
	}
	f := freqs[k]
	var out []aliasRival
	trial := append([]float64(nil), freqs...)
	for _, sh := range shifts {
		for _, fa := range []float64{math.Abs(f - sh.df), f + sh.df} {
			if fa < d.grid.FMin || fa > d.grid.FMax() || math.Abs(fa-f) < res || math.Abs(math.Log(fa/f)) < aliasMinSeparation {
				continue
			}
			bestChi, bestF := math.Inf(1), fa
			for s := -12; s <= 12; s++ {
				trial[k] = fa + float64(s)*res/8
				// The refinement stays outside the main lobe of the
				// period's own peak (one resolution element), where
				// the fit is the period's, not an alias's.
				if trial[k] <= 0 || math.Abs(trial[k]-f) < res || math.Abs(math.Log(trial[k]/f)) < aliasMinSeparation {
					continue
				}
				if fit, err := d.fitRV(trial); err == nil && fit.ChiSq < bestChi {
					bestChi, bestF = fit.ChiSq, trial[k]
				}
			}
			if isFinite(bestChi) {
				out = append(out, aliasRival{freq: bestF, dchi: (bestChi - base.ChiSq) / scale, prior: aliasPrior(f, bestF), label: sh.label})
			}
		}
		if d.ctx.Err() != nil {
			return out
		}
	}
	return out
}

// ownAliasOdds returns the alias at g of the trial's signal, refined
// within 1.5 resolution elements as aliasCandidates refines one, and its
// odds against the period, from the signal's own data (the RVs less the
// offsets and every other signal): the alias test for a frequency beyond
// the periods searched, which aliasRivals does not reach. ok is false when
// no fit could be made.
func (tr *trial) ownAliasOdds(g float64, label string) (r aliasRival, ok bool) {
	d := tr.d
	base, err := fitSines(d.t, tr.own, d.err, d.inst, d.ninst, []float64{tr.f}, d.t0)
	if err != nil || base.Dof <= 0 || !isFinite(base.ChiSq) {
		return r, false
	}
	res := 1 / d.T
	bestChi, bestF := math.Inf(1), g
	for s := -12; s <= 12; s++ {
		x := g + float64(s)*res/8
		if x <= 0 || math.Abs(x-tr.f) < res {
			continue
		}
		if fit, err := fitSines(d.t, tr.own, d.err, d.inst, d.ninst, []float64{x}, d.t0); err == nil && fit.ChiSq < bestChi {
			bestChi, bestF = fit.ChiSq, x
		}
	}
	if !isFinite(bestChi) {
		return r, false
	}
	b2 := 1.0
	if isFinite(tr.beta) {
		b2 = math.Max(1, tr.beta*tr.beta)
	}
	scale := math.Max(1, base.ChiSq/float64(base.Dof)) * b2
	return aliasRival{freq: bestF, dchi: (bestChi - base.ChiSq) / scale, prior: aliasPrior(tr.f, bestF), label: label}, true
}

// sameSignal returns the indices of the signals of freqs other than k
// that lie within tol in frequency of signal k: the relations' "same
// signal, split by an imperfect fit".
func sameSignal(freqs []float64, k int, tol float64) []int {
	var out []int
	for j, fj := range freqs {
		if j != k && math.Abs(fj-freqs[k]) <= tol {
			out = append(out, j)
		}
	}
	return out
}

// samplingPeaks returns the frequencies of the sampling's spectral-window
// peaks above 0.3 of W(0), from 1.5/T to 1.1 c/d (so that the daily
// alias is seen whatever the periods searched), the strongest first, at
// most six.
func (d *data) samplingPeaks() []float64 {
	g, err := rvfit.NewGrid(d.t, &rvfit.GridOptions{FMin: 1.5 / d.T, FMax: 1.1})
	if err != nil {
		return nil
	}
	return d.peaksOfWindow(g, 0, 0.3, 6)
}
