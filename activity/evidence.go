package activity

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"gonum.org/v1/gonum/stat"

	"spotsift/rvfit"
)

// harmonicsOf lists the rotation period's harmonics and their aliases:
// frequencies n/P (n = 1 … 4), and each shifted by ±1 sidereal day and
// ±1 year (common practice), P_rot and P_rot/2 first. When the period was
// estimated from the data rather than known (estimated), twice the period
// is added: a star with spots on opposite hemispheres shows its strongest
// indicator signal at P_rot/2, so the estimate may itself be a harmonic.
func harmonicsOf(prot float64, estimated bool) []harmonic {
	var out []harmonic
	ns := []float64{1, 2, 3, 4}
	if estimated {
		ns = append(ns, 0.5)
	}
	for _, n := range ns {
		name := "the rotation period"
		switch {
		case n == 0.5:
			name = "2 P_rot (the estimate may be a harmonic)"
		case n > 1:
			name = fmt.Sprintf("P_rot/%d", int(n))
		}
		out = append(out, harmonic{name, n / prot, n, false})
	}
	for _, n := range ns {
		f := n / prot
		for _, a := range []struct {
			label string
			df    float64
		}{{"1-day alias", siderealFreq}, {"1-year alias", yearFreq}} {
			for _, sgn := range []float64{-1, 1} {
				if g := math.Abs(f + sgn*a.df); g > 0 {
					out = append(out, harmonic{fmt.Sprintf("%s of %s", a.label, out[slices.IndexFunc(out, func(h harmonic) bool { return h.n == n && !h.alias })].label), g, n, true})
				}
			}
		}
	}
	return out
}

// The frequencies of the sampling's usual aliases, in c/d: one sidereal
// day (1.0027379 c/d, from memory) and one Julian year.
const (
	siderealFreq = 1.0027379
	yearFreq     = 1 / 365.25
)

// nearYear reports whether a signal of frequency f (c/d), measured at
// snr = K/σ_K over data spanning T days with red-noise factor beta, is
// consistent with one cycle per year: within twice its frequency's error,
//
//	σ_f = √3 β / (π T snr)
//
// (a sinusoid's frequency error, σ_f = √(6/N) σ/(π T A) with σ_A = σ √(2/N);
// Montgomery & O'Donoghue 1999, from memory), and never more than one
// resolution element, 1/T. A yearly systematic's period is exact, so the
// signal's own precision decides. Instruments' systematics follow the
// Earth's orbit: the barycentric correction moves the spectrum across the
// detector over the year (HARPS's CCD stitching gives a spurious one-year
// signal in some stars; Dumusque et al. 2015, ApJ 808, 171, from memory),
// and telluric lines drift through the stellar ones with it. Such a signal
// repeats as steadily as an orbit, so nothing in one instrument's RVs
// tells it from a planet. (The caveat also needs an amplitude up to
// yearRVMax: such systematics are metres per second, not tens.)
//
// tol is the window's half-width in frequency (c/d), for the caveat's
// text.
func nearYear(f, T, snr, beta float64) (ok bool, tol float64) {
	if !(T > 0) {
		return false, 0
	}
	if !(beta >= 1) { // unknown, or below 1: white noise
		beta = 1
	}
	tol = 1 / T
	if snr > 0 {
		tol = math.Min(tol, 2*math.Sqrt(3)*beta/(math.Pi*T*snr))
	}
	return math.Abs(f-yearFreq) <= tol, tol
}

// yearRVMax is the largest RV semi-amplitude an instrument's yearly
// systematic is taken to reach: HARPS's stitching signal is a few m/s
// (Dumusque et al. 2015, from memory), and telluric lines in red spectra
// of M dwarfs can shift RVs by several m/s; 20 m/s leaves a wide margin.
const yearRVMax = 20.0

// yearCaveat is the caveat of a signal of frequency f (c/d) near one year,
// with tol the window's half-width (nearYear).
func yearCaveat(f, tol float64) string {
	return fmt.Sprintf("its period, %.4g d, is one year within its precision (its frequency %.2g c/d from one cycle per year, where twice its error allows %.2g), and instruments' systematics that follow the Earth's orbit (the spectrum moving across the detector with the barycentric correction, telluric lines) repeat there as steadily as an orbit; RVs of the star from another instrument, or of other stars from this one, can tell", 1/f, math.Abs(f-yearFreq), tol)
}

type harmonic struct {
	label string
	freq  float64
	n     float64
	alias bool
}

// strong reports whether h is P_rot or P_rot/2 itself (not an alias).
func (h harmonic) strong() bool { return !h.alias && (h.n == 1 || h.n == 2) }

// rank orders the harmonics a period matches: P_rot and P_rot/2 first,
// then the other harmonics themselves, then aliases. A period inside
// both a harmonic's window and its 1-year alias's (which lie 0.0027 c/d
// apart, less than most windows) is the harmonic: the simpler
// explanation, whatever the last digits of the distance.
func (h harmonic) rank() int {
	switch {
	case h.strong():
		return 0
	case !h.alias:
		return 1
	}
	return 2
}

// gpReach reports whether h is a harmonic (not an alias) the GP activity
// model of the model comparison cannot fully absorb or that a sinusoid
// fits as well as an orbit: P_rot … P_rot/4.
func (h harmonic) gpReach() bool { return !h.alias && h.n >= 1 }

// atHarmonic returns the frequencies a signal at f could have at a
// rotation harmonic of frequency fh, within tol of it: f itself when the
// match is the harmonic, and when it is a 1-day alias of it, those of
// |f ± 1 sidereal day⁻¹| and |f ± 1 solar day⁻¹| within tol of fh (nightly
// data alias by both days; the nearest one alone may not be the one).
func atHarmonic(f, fh, tol float64, alias bool) []float64 {
	if !alias {
		return []float64{f}
	}
	var out []float64
	for _, g := range []float64{math.Abs(f - siderealFreq), f + siderealFreq, math.Abs(f - 1), f + 1} {
		if math.Abs(g-fh) <= tol {
			out = append(out, g)
		}
	}
	return out
}

// searched reports whether frequency g lies within the periods searched.
func (d *data) searched(g float64) bool { return g >= d.grid.FMin && g <= d.grid.FMax() }

// windowWeight scales a harmonic, alias or cycle match by the share q of
// the searched period axis (in ln P: planets are spread about evenly in
// log period) that the match window covers: a window covering 30 % of the
// axis or more catches a planet as easily as activity and weighs nothing;
// one covering 1 % or less weighs fully; between, the weight grows as
// ln(0.3/q) (the log of the likelihood ratio of landing in the window by
// chance).
func windowWeight(q float64) float64 {
	if !(q > 0) {
		return 1
	}
	return math.Max(0, math.Min(1, math.Log(0.3/q)/math.Log(30)))
}

// logShare returns the share of the searched ln-frequency axis covered by
// a window of half-width tol about frequency f.
func (d *data) logShare(f, tol float64) float64 {
	span := math.Log(d.grid.FMax() / d.grid.FMin)
	lo := math.Max(f-tol, d.grid.FMin)
	hi := math.Min(f+tol, d.grid.FMax())
	if !(hi > lo) || !(span > 0) {
		return 0
	}
	return math.Log(hi/lo) / span
}

// significance is test 1: the RV signal's false-alarm probability. It
// gates the verdict and adds no weight.
func (tr *trial) significance(sig *Signal) {
	thr := tr.d.opts.FAPThreshold
	e := Evidence{Name: "significance", Value: sig.FAP, Threshold: Num(thr), Points: TowardNeither}
	how := "Baluev (2008) false-alarm probability of the periodogram peak"
	if sig.Source == "given" {
		how = "false-alarm probability at the given period"
	}
	if float64(sig.FAP) <= thr {
		e.Reason = fmt.Sprintf("%s is %.2g, below %g: the signal is significant", how, float64(sig.FAP), thr)
	} else {
		e.Reason = fmt.Sprintf("%s is %.2g, above %g: the signal is not significant", how, float64(sig.FAP), thr)
	}
	tr.add(e)
}

// diffRotationBlur is the relative spread of the frequencies at which a
// star's spots rotate: with surface shear ΔΩ/Ω_eq ≈ 0.2 (the Sun's, from
// memory) and spots up to about 40° of latitude, spot rotation
// frequencies span Ω_eq (1 − 0.2 sin²40°) to Ω_eq, about 8 %; a rotation
// period measured from one set of spots may sit anywhere in that span, so
// activity from other latitudes (or other seasons) lies up to about that
// far from it.
const diffRotationBlur = 0.08

// rotationWindow is the half-width in frequency of the window about the
// harmonic n/P_rot in which a signal cannot be told from rotation: the
// resolution res, twice the error of n/P_rot from the error perr of P_rot
// (a one-sigma window would let a third of true rotation signals through),
// and the differential-rotation spread of n/P_rot, added in quadrature
// (docs/methods.md §14.9).
func rotationWindow(n, prot, perr, res float64) float64 {
	df := n * perr / (prot * prot)
	dr := n * diffRotationBlur / prot
	return math.Sqrt(res*res + 4*df*df + dr*dr)
}

// rotationMatch is test 2: is the period near a rotation period, its
// harmonics or their aliases, within rotationWindow (the resolution,
// twice the rotation period's error, differential rotation)? Every rotation hypothesis is considered
// and weighs by its share; P_rot and P_rot/2 are checked before any
// other harmonic, and every harmonic before any alias (harmonic.rank).
// A signal at P_rot or P_rot/2 of a hypothesis with a share of 10 % or
// more is never planet-like.
func (tr *trial) rotationMatch() {
	hyps := tr.rot.Hypotheses
	if len(hyps) == 0 && float64(tr.rot.Period) > 0 {
		hyps = []RotationHypothesis{{Period: float64(tr.rot.Period), Err: float64(tr.rot.Err), Share: 1}}
	}
	if len(hyps) == 0 {
		tr.skipped("rotation_match", "no rotation period could be estimated")
		return
	}
	w := tr.d.w
	res := 1 / tr.d.T
	estimated := !strings.HasPrefix(tr.rot.Source, starFileSource)
	total, bestD := 0.0, math.Inf(1)
	var parts []string
	for _, hy := range hyps {
		prot, perr := hy.Period, hy.Err
		var match *harmonic
		var matchD, matchTol float64
		for _, h := range harmonicsOf(prot, estimated) {
			tol := rotationWindow(h.n, prot, perr, res)
			dist := math.Abs(tr.f-h.freq) / tol
			bestD = math.Min(bestD, dist)
			if dist <= 1 && (match == nil || h.rank() < match.rank() || (h.rank() == match.rank() && dist < matchD)) {
				hh := h
				match, matchD, matchTol = &hh, dist, tol
			}
		}
		if hy.Why == relationsOnly {
			// The rotation is not measured: the relations' prediction is
			// all there is, and a signal within twice its scatter of it,
			// or of its half, may be the rotation.
			for _, n := range []float64{1, 2} {
				if math.Abs(math.Log(n/(prot*tr.f))) <= 2*perr/prot {
					tr.caveatKind = CaveatRotation
					tr.caveat = fmt.Sprintf("the rotation period is not measured, and the signal lies within twice the scatter of the activity-rotation relations' prediction (%.3g d ± %.0f%%) or its half", prot, 100*perr/prot)
				}
			}
		}
		lbl := fmt.Sprintf("P_rot = %.4g ± %.2g d", prot, perr)
		if len(hyps) > 1 {
			lbl = fmt.Sprintf("P_rot = %.4g ± %.2g d (share %.0f%%)", prot, perr, 100*hy.Share)
		}
		// Only a rotation period measured (from these data or given in the
		// star file) can bar a planet-like verdict; the relations' wide
		// prediction cannot.
		measured := hy.Why != relationsOnly
		switch {
		case match != nil:
			q := tr.d.logShare(match.freq, matchTol)
			ww := windowWeight(q)
			wt := w.RotationMatchWeak
			if match.strong() {
				wt = w.RotationMatch
			}
			total += hy.Share * wt * ww
			parts = append(parts, fmt.Sprintf("at %s of %s, a window covering %.1f%% of the periods searched (weight ×%.2f)", match.label, lbl, 100*q, ww))
			// P_rot, P_rot/2 and their 1-day aliases are one frequency
			// to nightly data: any of them bars a planet-like verdict.
			// (A 1-year alias lies within the error of most rotation
			// periods and weighs by its window only.) A window that
			// weighs nothing bars nothing where the alias check can
			// weigh the alias instead: the 1-day alias of a fast
			// rotator's harmonic (1 − 2/P_rot c/d for P_rot near 2 d)
			// carries the harmonic's whole error in frequency to the
			// long periods, where it spans every period beyond a few
			// days, and landing there is no evidence of activity. When
			// the signal's own 1-day alias, the frequency it would have
			// at the harmonic, lies beyond the periods searched, the
			// alias check has not weighed it: it is weighed here, from
			// the signal's own data, and the bar stays unless the data
			// reject that alias.
			if (match.n == 1 || match.n == 2) && !strings.HasPrefix(match.label, "1-year") && measured && hy.Share >= 0.1 {
				bars := ww > 0
				if !bars {
					// Each 1-day alias that would put the signal in the
					// window beyond the periods searched bars it unless
					// the data reject that alias. The data alone: the
					// period prior of the alias check (uniform in ln P,
					// which favours the long period by 2 ln(f_alias/f))
					// is a planet's, and the question here is the star's
					// own harmonic, a period the rotation names.
					var worse []string
					for _, g := range atHarmonic(tr.f, match.n/prot, matchTol, match.alias) {
						if tr.d.searched(g) {
							continue
						}
						r, ok := tr.ownAliasOdds(g, "1-day alias")
						if !ok || r.dchi < aliasAmbiguityLimit {
							bars = true
							break
						}
						worse = append(worse, fmt.Sprintf("%.4g d (Δχ² = %+.1f in units of the residual scatter)", 1/r.freq, r.dchi))
					}
					if !bars && len(worse) > 0 {
						parts[len(parts)-1] += "; the 1-day aliases that would put it there, beyond the periods searched, fit worse: " + strings.Join(worse, ", ") + ", so the window bars nothing"
					}
				}
				if bars {
					tr.strongRotation = true
					tr.caveat = fmt.Sprintf("the period sits at %s of the rotation hypothesis %.4g d", match.label, prot)
					tr.caveatKind = CaveatRotation
				}
			}
			switch {
			case match.gpReach() && (match.n == 3 || match.n == 4) && len(hyps) == 1 && ww >= 0.5:
				// One rotation period and the signal at its third or
				// fourth harmonic: the model comparison gives its
				// activity model a mode there (gpModel.mode).
				tr.gpHarmonic = int(match.n)
			case match.gpReach() && hy.Share >= 0.1 && ww >= 0.5:
				tr.gpDegenerate = math.Min(1, tr.gpDegenerate+hy.Share)
			}
		default:
			// A mismatch with a poorly known period says little: it weighs
			// by how narrow the rotation's own window is.
			q := tr.d.logShare(1/prot, rotationWindow(1, prot, perr, res))
			ww := windowWeight(q)
			total -= hy.Share * w.RotationMismatch * ww
			parts = append(parts, fmt.Sprintf("unrelated to %s (weight ×%.2f)", lbl, ww))
		}
	}
	e := Evidence{Name: "rotation_match", Value: Num(bestD), Threshold: 1, Weight: total}
	switch {
	case total > 0:
		e.Points = TowardActivity
	case total < 0:
		e.Points = TowardPlanet
	default:
		e.Points = TowardNeither
	}
	e.Reason = fmt.Sprintf("the period %.4g d is %s", 1/tr.f, strings.Join(parts, "; "))
	tr.add(e)
}

// cycleMinPeriod is the shortest period the magnetic-cycle tests
// consider: a cycle is years long (the Sun's 11 yr; the shortest known
// are about 1.5–3 yr, from memory), and 100 d leaves room for its
// yearly aliases and for a cycle's second harmonic.
const cycleMinPeriod = 100.0

// cycleRVMax is the largest RV semi-amplitude a magnetic cycle is taken
// to produce: the Sun's cycle moves its RVs by a few m/s, and the most
// active FGK stars of the HARPS surveys by up to about 25 m/s peak to
// peak (Lovis et al. 2011, from memory); 30 m/s leaves a wide margin.
const cycleRVMax = 30.0

// cycleMatch: a long period at the magnetic cycle seen in an activity
// indicator is activity. Only periods longer than cycleMinPeriod are
// tested; the window is the cycle's error and the resolution.
//
// Without an indicator that follows the cycle nothing can show one (the
// bisector's long-term response has no fixed sign), and the GP
// activity model has no long-term term to absorb one: a long-period
// signal the size of a cycle's RVs then cannot be told from one, and it
// gets a caveat (never planet-like) instead of a weight (docs/methods.md
// §14.15).
func (tr *trial) cycleMatch() {
	p := 1 / tr.f
	if p < cycleMinPeriod {
		return
	}
	if !tr.d.hasCycleIndicator() {
		e := Evidence{Name: "cycle_match", Value: Num(math.NaN()), Threshold: 1, Points: TowardNeither}
		// An amplitude that could not be computed could be a cycle's.
		if !(tr.amp > cycleRVMax) {
			e.Reason = fmt.Sprintf("no activity indicator that follows the magnetic cycle (S-index, log R'HK, Hα, FWHM, ...) was given: at %.4g d, beyond %g d, only one could tell an orbit from a cycle, which moves the RVs by up to about %g m/s", p, cycleMinPeriod, cycleRVMax)
			if tr.caveat == "" {
				tr.caveat, tr.caveatKind = noCycleIndicatorCaveat, CaveatCycle
			}
		} else {
			e.Reason = fmt.Sprintf("no activity indicator that follows the magnetic cycle was given, but the amplitude (%.3g m/s) is beyond what a cycle moves the RVs by (about %g m/s at most)", tr.amp, cycleRVMax)
		}
		tr.add(e)
		return
	}
	c := tr.rot.Cycle
	if c == nil {
		return
	}
	tol := math.Hypot(1/tr.d.T, c.Err/(c.Period*c.Period))
	dist := math.Abs(tr.f-1/c.Period) / tol
	q := tr.d.logShare(1/c.Period, tol)
	ww := windowWeight(q)
	e := Evidence{Name: "cycle_match", Value: Num(dist), Threshold: 1}
	if dist <= 1 && ww > 0 {
		e.Points, e.Weight = TowardActivity, tr.d.w.CycleMatch*ww
		e.Reason = fmt.Sprintf("the period %.4g d matches the magnetic cycle seen in %s (%.4g ± %.2g d, false-alarm probability %.2g), a window covering %.1f%% of the periods searched (weight ×%.2f)", p, c.Indicator, c.Period, c.Err, c.FAP, 100*q, ww)
		if ww >= 0.5 && tr.caveat == "" {
			tr.caveat, tr.caveatKind = cycleCaveat(c.Indicator), CaveatCycle
		}
	} else {
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("for information: the period %.4g d is %.1f tolerance widths from the magnetic cycle seen in %s (%.4g ± %.2g d), whose window covers %.1f%% of the periods searched", p, dist, c.Indicator, c.Period, c.Err, 100*q)
	}
	tr.add(e)
}

// longTermSign is the sign with which an indicator follows the RVs of
// long-term activity: the inhibition of convective blueshift in magnetic
// regions shifts the lines to the red as the chromospheric emission and
// the line width rise and the CCF's contrast falls (common practice). It
// is 0 for an indicator whose sign is not fixed (the bisector's, for one,
// depends on the star and the instrument).
func longTermSign(name string) float64 {
	switch name {
	case "s_index", "log_rhk", "halpha", "naid", "fwhm":
		return 1
	case "contrast":
		return -1
	}
	return 0
}

// phaseGap is how far, in radians (0 to π), an indicator's phase at a
// period sits from the phase that activity moving the RVs would give it:
// the RVs' own phase for sign +1, the opposite for −1, either for 0.
func phaseGap(ind, rv, sign float64) float64 {
	d := math.Abs(math.Remainder(ind-rv, 2*math.Pi))
	switch {
	case sign < 0:
		return math.Pi - d
	case sign == 0:
		return math.Min(d, math.Pi-d)
	}
	return d
}

// cycleApart sets the cycle match aside when the indicator that shows the
// cycle does not vary with the signal as long-term activity would (why
// says how): the period then shares the cycle's by chance, and neither
// its weight nor its caveat stands.
func (tr *trial) cycleApart(indicator, why string) {
	for i := range tr.ev {
		e := &tr.ev[i]
		if e.Name != "cycle_match" || e.Points != TowardActivity {
			continue
		}
		e.Points, e.Weight = TowardNeither, 0
		e.Reason += fmt.Sprintf(", but %s %s: the period shares the cycle's by chance", indicator, why)
		if tr.caveat == cycleCaveat(indicator) {
			tr.caveat, tr.caveatKind = "", ""
		}
	}
}

// noCycleIndicatorCaveat is the caveat of a long-period signal in data
// without an indicator that follows the magnetic cycle (cycleMatch).
const noCycleIndicatorCaveat = "no activity indicator that follows the magnetic cycle was given, and at this long period only one could tell an orbit from a cycle"

// hasCycleIndicator reports whether the series has an indicator column
// that can follow a magnetic cycle, with values at MinEpochs epochs or
// more: any but the line-asymmetry measures (bisector span, V_span, ΔV),
// whose long-term response to activity has no fixed sign and is often
// nil, and the chromatic slope.
func (d *data) hasCycleIndicator() bool {
	for i := range d.s.Indicators {
		ind := &d.s.Indicators[i]
		switch ind.Name {
		case chromaticColumn, "bis", "vspan", "delta_v":
			continue
		}
		if ind.Count() >= MinEpochs {
			return true
		}
	}
	return false
}

// cycleCaveat is the caveat a cycle match seen in indicator sets, so that
// cycleApart lifts that caveat and no other.
func cycleCaveat(indicator string) string {
	return fmt.Sprintf("the period matches the magnetic cycle seen in %s", indicator)
}

// indicatorTests are tests 3 and 4: power at the signal's frequency in each
// indicator, correlation of each indicator with the fitted signal, and the
// lagged correlation with the signal's own data.
func (tr *trial) indicatorTests() {
	d := tr.d
	type res struct {
		name     string
		fap      float64
		amp, snr float64
		corr     Correlation
		lag      LaggedCorrelation
		raw      Correlation
		ok       bool
		why      string
		nvalid   int
		// ratio is the indicator's amplitude per m/s of activity RV;
		// sens the amplitude, in units of its error, that the indicator
		// would show if the signal were activity.
		ratio, sens float64
		ratioHow    string
		// phase is the phase of the indicator's sinusoid at the period
		// (as trial.phase is the signal's).
		phase float64
	}
	var rs []res
	cycle := tr.rot.Cycle
	for _, ind := range d.s.Indicators {
		if ind.Name == chromaticColumn {
			continue
		}
		r := res{name: ind.Name}
		sigma := indicatorErrors(&ind)
		n := ind.Count()
		r.nvalid = n
		if n < MinEpochs {
			r.why = fmt.Sprintf("only %d epochs have a value (need %d)", n, MinEpochs)
			rs = append(rs, r)
			continue
		}
		// A long period is fitted together with the magnetic cycle, when
		// one is seen and the period is not at it: the cycle's power
		// leaks to neighbouring long periods and would otherwise push a
		// real long-period planet to activity.
		freqs := []float64{tr.f}
		if cycle != nil && 1/tr.f >= cycleMinPeriod && math.Abs(tr.f-1/cycle.Period) > 1.5/d.T {
			freqs = append(freqs, 1/cycle.Period)
		}
		fit, err := fitSines(d.t, ind.Value, sigma, d.inst, d.ninst, freqs, d.t0)
		if err != nil {
			r.why = "the sinusoid fit is singular on its epochs"
			rs = append(rs, r)
			continue
		}
		// So is the star's rotation, P_rot and P_rot/2, when the sampling
		// tells them apart from the period: an indicator's variation at
		// the rotation is usually its strongest, and left in the
		// residuals it is correlated noise that inflates β and hides
		// whatever the indicator does at the period (a sideband of
		// evolving spots a few resolution elements from P_rot, for one).
		// They are told apart when they are resolved and, fitted
		// together, leave the amplitude's error at the period within
		// 10 % of its error alone (a variance inflation of 1.2 at most):
		// a rotation of 130 d seen in seasons of 100–200 nights is a
		// slow trend within each, and would take a long period's
		// variation for itself. Periods of three rotations or more are
		// left as they were: there the indicators' long-term variation
		// (cycles, spot coverage) is the question, and rotation terms
		// take a share of it (an S-index following a 1373 d signal at
		// r = 0.89 went to 0.67 with 134 d and 67 d terms fitted).
		if prot := float64(tr.rot.Period); prot > 0 && 1/tr.f < 3*prot {
			with := append([]float64(nil), freqs...)
			for _, n := range []float64{1, 2} {
				fh := n / prot
				resolved := true
				for _, g := range with {
					resolved = resolved && math.Abs(g-fh) > 1.5/d.T
				}
				if resolved {
					with = append(with, fh)
				}
			}
			if len(with) > len(freqs) {
				if f2, err := fitSines(d.t, ind.Value, sigma, d.inst, d.ninst, with, d.t0); err == nil {
					_, ae0 := fit.amplitude(0)
					if _, ae := f2.amplitude(0); ae <= 1.1*ae0 {
						fit, freqs = f2, with
					}
				}
			}
		}
		beta := fitBeta(d.t, ind.Value, sigma, fit, 1/tr.f)
		r.fap = waldFAP(fit, beta)
		a, ae := fit.amplitude(0)
		r.amp, r.snr = a, a/(ae*beta)
		r.phase = fit.phase(0)
		r.ratio, r.ratioHow = tr.activityRatio(&ind, sigma)
		r.sens = r.ratio * tr.amp / (ae * beta)
		// The indicator as the correlations see it: offsets removed, and
		// the magnetic cycle and the rotation too when they were fitted
		// beside the signal (a slow cycle correlates with any long-period
		// sinusoid over a few seasons, whatever causes the sinusoid).
		vals := make([]float64, len(ind.Value))
		for i := range vals {
			vals[i] = math.NaN()
			if ind.Valid(i) {
				vals[i] = ind.Value[i] - fit.Offset[d.inst[i]]
				for j := 1; j < len(freqs); j++ {
					vals[i] -= fit.component(j, d.t[i])
				}
			}
		}
		r.corr = Pearson(tr.comp, vals)
		r.raw = Pearson(tr.own, vals)
		if tr.det.indVals == nil {
			tr.det.indVals = map[string][]float64{}
		}
		tr.det.indVals[ind.Name] = vals
		period := 1 / tr.f
		bin := math.Max(period/20, 0.5)
		r.lag = DiscreteCorrelation(d.t, tr.own, vals, period/2, bin, max(10, n/10), d.opts.Permutations, tr.rng)
		r.ok = true
		rs = append(rs, r)
	}
	if len(rs) == 0 {
		tr.skipped("indicator_power", "the table has no indicator columns")
		tr.skipped("indicator_correlation", "the table has no indicator columns")
		tr.skipped("lagged_correlation", "the table has no indicator columns")
		return
	}
	var faps, cps []float64
	for _, r := range rs {
		if r.ok {
			faps = append(faps, r.fap)
			cps = append(cps, r.corr.P)
		} else {
			tr.skipped("indicator_power:"+r.name, r.why)
		}
	}
	if len(faps) == 0 {
		return
	}
	// Holm's correction over the indicators, per family of tests. The
	// level is 0.001: indicators carry correlated activity noise at every
	// period, and the calibration showed 1% letting that noise through
	// (see Weights).
	hf, hc := Holm(faps), Holm(cps)
	alpha := d.opts.IndicatorAlpha
	// Over a long period the activity that moves the RVs (the inhibition
	// of convective blueshift by magnetic regions) follows the filling
	// factor as the indicators do, without the quarter-period lag that
	// rotation puts between a spot's RV and its flux: an indicator driven
	// by the same activity as the signal correlates with it at zero lag.
	// One that varies at the period, strongly enough that activity of the
	// signal's amplitude would show in it at 5σ or more, and yet does not
	// correlate with the signal, varies at that period for another reason
	// (a cycle whose period the signal happens to share) and is no
	// evidence either way (docs/methods.md §14.13).
	//
	// The same physics fixes the sign, where an indicator has one: the
	// lines shift to the red as the chromospheric emission and the line
	// width rise and the CCF's contrast falls. An indicator whose own
	// sinusoid at the period sits away from that phase of the signal's
	// (beyond three errors of the phase difference and a twelfth of a
	// cycle allowed for lags between the regions' growth and the indices),
	// or that correlates with the signal with the opposite sign, moves
	// with something else too (§14.13).
	longTerm := 1/tr.f >= cycleMinPeriod && !(1/tr.f < 3*float64(tr.rot.Period))
	// powerAside and corrAside hold, per indicator, why its power or its
	// correlation counts for neither side ("" where it counts).
	powerAside := make([]string, len(hf))
	corrAside := make([]string, len(hf))
	// A cycle match says that the indicator showing the cycle varies at
	// the signal's period. When that indicator, fitted at the period,
	// shows there neither significant power nor a significant correlation
	// with the signal, it does not: the match rests only on the width of
	// the cycle's window (half a resolution element, and a cycle longer
	// than the baseline has an error as large as its period), and the
	// cycle's own variation lies at a frequency the fit at the period does
	// not see (a sinusoid a resolution element away is orthogonal to it
	// over the baseline). The match is then set aside, as it is over a
	// long period when the indicator varies out of phase.
	k := 0
	for _, r := range rs {
		if !r.ok {
			continue
		}
		ofCycle := cycle != nil && cycle.Indicator == r.name
		if ofCycle && !(hf[k] < alpha) && !(hc[k] < alpha) {
			tr.cycleApart(r.name, fmt.Sprintf("shows at the signal's period neither significant power (Holm-corrected false-alarm probability %.2g) nor a correlation with the signal (Holm-corrected p = %.2g): it varies at the cycle's period, not at the signal's", hf[k], hc[k]))
		}
		if longTerm {
			sign := longTermSign(r.name)
			off := false // its phase at the period is not activity's
			if hf[k] < alpha {
				dev, tol := phaseGap(r.phase, tr.phase, sign), math.Pi/6+3*math.Hypot(1/r.snr, tr.ampErr/tr.amp)
				off = dev > tol
				switch {
				case off:
					powerAside[k] = fmt.Sprintf(", but %.0f° from the phase with the RVs that long-term activity would give (allowed: %.0f°): it varies there for another reason", dev*180/math.Pi, tol*180/math.Pi)
				case !(hc[k] < alpha) && r.sens >= 5:
					powerAside[k] = fmt.Sprintf(", but it does not correlate with the signal (Holm-corrected p = %.2g), though activity of the signal's amplitude would move it by %.1fσ and, over so long a period, in phase with the RVs: it varies there for another reason", hc[k], r.sens)
				}
			}
			if hc[k] < alpha && sign*r.corr.R < 0 {
				corrAside[k] = ", of the sign opposite to long-term activity's (which redshifts the lines as the chromospheric emission and the line width rise): not activity evidence"
			}
			if ofCycle && (off || corrAside[k] != "") {
				tr.cycleApart(r.name, "does not vary in phase with the signal as long-term activity would (see its power and correlation)")
			}
		}
		k++
	}
	group := func(name string, adj []float64, w Weight, aside []string, item func(k int, r res, p float64, sig bool) Evidence) {
		nsig := 0
		for k, p := range adj {
			if p < alpha && aside[k] == "" {
				nsig++
			}
		}
		k := 0
		for _, r := range rs {
			if !r.ok {
				continue
			}
			p := adj[k]
			e := item(k, r, p, p < alpha)
			e.Name = name + ":" + r.name
			e.Value, e.Threshold = Num(p), Num(alpha)
			switch {
			case aside[k] != "":
				e.Points = TowardNeither
				e.Reason += aside[k]
			case nsig > 0 && p < alpha:
				e.Points, e.Weight = TowardActivity, w.Activity/float64(nsig)
			case nsig > 0:
				e.Points = TowardNeither
			default:
				// Absence counts only as far as the indicator could have
				// shown the signal: fully when activity of this amplitude
				// would give it a 5σ variation, not at all below 1σ.
				frac := math.Max(0, math.Min(1, (r.sens-1)/4))
				e.Points, e.Weight = TowardPlanet, -w.Planet/float64(len(adj))*frac
				e.Reason += fmt.Sprintf("; had the signal been activity, %s would vary by %.1fσ (%s), so its absence counts %.0f%%", r.name, r.sens, r.ratioHow, 100*frac)
				if frac == 0 {
					e.Points = TowardNeither
				}
			}
			tr.add(e)
			k++
		}
	}
	group("indicator_power", hf, tr.d.w.IndicatorPower, powerAside, func(k int, r res, p float64, sig bool) Evidence {
		if sig {
			return Evidence{Reason: fmt.Sprintf("%s varies at the signal's period (amplitude %.3g, %.1fσ; Holm-corrected false-alarm probability %.2g)", r.name, r.amp, r.snr, p)}
		}
		return Evidence{Reason: fmt.Sprintf("%s shows no significant power at the signal's period (Holm-corrected false-alarm probability %.2g)", r.name, p)}
	})
	group("indicator_correlation", hc, tr.d.w.IndicatorCorrelation, corrAside, func(k int, r res, p float64, sig bool) Evidence {
		return Evidence{Reason: fmt.Sprintf("%s against the fitted signal: r = %.2f (Holm-corrected p = %.2g, %d epochs; against the signal's own RVs r = %.2f)", r.name, r.corr.R, p, r.corr.N, r.raw.R)}
	})
	// The lagged correlation uses the signal's own RVs, which keep whatever
	// activity the other sinusoids did not remove, so it is not specific to
	// the signal: it is shown, with no weight.
	for _, r := range rs {
		if !r.ok {
			continue
		}
		bound := ""
		if r.lag.Floor {
			bound = "<"
		}
		tr.add(Evidence{Name: "lagged_correlation:" + r.name, Value: Num(r.lag.P), Threshold: 0.01, Points: TowardNeither, Bound: bound,
			Reason: fmt.Sprintf("for information: strongest discrete correlation of %s with the signal's RVs is %.2f at a lag of %.3g d (permutation %s before correction)", r.name, r.lag.DCF, r.lag.Lag, pText(r.lag.P, r.lag.Floor))})
	}

}

// activityRatio returns how much an indicator varies per m/s of activity
// RV, and how that was measured: at the rotation period, the indicator's
// fitted amplitude over the RV's upper bound (amplitude + 2σ), so that an
// RV amplitude lost in the noise does not make the indicator look
// sensitive; without a rotation period, the indicator's excess scatter
// over the RV's whole scatter (planets included: again a lower bound).
func (tr *trial) activityRatio(ind *rvfit.Indicator, sigma []float64) (float64, string) {
	d := tr.d
	if prot := float64(tr.rot.Period); prot > 0 && 1/prot > d.grid.FMin/2 {
		fi, err1 := fitSines(d.t, ind.Value, sigma, d.inst, d.ninst, []float64{1 / prot}, d.t0)
		fr, err2 := fitSines(d.t, d.rv, d.err, d.inst, d.ninst, []float64{1 / prot}, d.t0)
		if err1 == nil && err2 == nil {
			ai, _ := fi.amplitude(0)
			ar, are := fr.amplitude(0)
			if ar+2*are > 0 {
				return ai / (ar + 2*are), fmt.Sprintf("its amplitude per m/s of RV at P_rot = %.3g d", prot)
			}
		}
	}
	var vi, ei []float64
	for i := range ind.Value {
		if ind.Valid(i) {
			vi = append(vi, ind.Value[i])
			ei = append(ei, sigma[i]*sigma[i])
		}
	}
	exc := stat.Variance(vi, nil) - stat.Mean(ei, nil)
	sr := stddev(d.rv)
	if !(exc > 0) || !(sr > 0) {
		return 0, "no scatter beyond its errors"
	}
	return math.Sqrt(exc) / sr, "its excess scatter per m/s of RV scatter"
}

// indicatorErrors returns an indicator's errors, or, without an error
// column, its scatter about the mean for every epoch (unweighted fits).
func indicatorErrors(ind *rvfit.Indicator) []float64 {
	n := len(ind.Value)
	out := make([]float64, n)
	if ind.Err != nil {
		copy(out, ind.Err)
		return out
	}
	var vs []float64
	for i := range ind.Value {
		if ind.Valid(i) {
			vs = append(vs, ind.Value[i])
		}
	}
	sd := stddev(vs)
	if !(sd > 0) {
		sd = 1
	}
	for i := range out {
		out[i] = sd
	}
	return out
}

// stddev is the sample standard deviation of v, 0 for fewer than two
// values.
func stddev(v []float64) float64 {
	if len(v) < 2 {
		return 0
	}
	return stat.StdDev(v, nil)
}

// waldFAP returns the false-alarm probability of the first sinusoid of a
// fit at a frequency chosen in advance, by the Wald test of (A, B) = 0:
//
//	z = ½ vᵀ C⁻¹ v,  FAP = e^(−z)
//
// (χ² with 2 degrees of freedom; common practice), with v = (A, B) and C
// their covariance (already scaled by the reduced χ²) times β² for
// correlated noise.
func waldFAP(fit *sineFit, beta float64) float64 {
	c := fit.CovAB[0]
	b2 := beta * beta
	det := (c[0][0]*c[1][1] - c[0][1]*c[1][0]) * b2 * b2
	if !(det > 0) {
		return 1
	}
	a, b := fit.A[0], fit.B[0]
	z := 0.5 * (a*a*c[1][1] - 2*a*b*c[0][1] + b*b*c[0][0]) * b2 / det
	return math.Exp(-z)
}

// chromaticity is test 7: does the chromatic RV slope vary at the signal's
// period? Planets are achromatic (Zechmeister et al. 2018, A&A 609, A12).
func (tr *trial) chromaticity() {
	d := tr.d
	ind := d.s.Indicator(chromaticColumn)
	if ind == nil {
		tr.skipped("chromaticity", "no per-order RVs: the table has no chromatic_slope column")
		return
	}
	n := ind.Count()
	if n < MinEpochs {
		tr.skipped("chromaticity", fmt.Sprintf("only %d epochs have a chromatic slope", n))
		return
	}
	sigma := indicatorErrors(ind)
	fit, err := fitSines(d.t, ind.Value, sigma, d.inst, d.ninst, []float64{tr.f}, d.t0)
	if err != nil {
		tr.skipped("chromaticity", "the sinusoid fit to the chromatic slope is singular")
		return
	}
	fap := waldFAP(fit, fitBeta(d.t, ind.Value, sigma, fit, 1/tr.f))
	a, ae := fit.amplitude(0)
	const alpha = 0.01
	e := Evidence{Name: "chromaticity", Value: Num(fap), Threshold: alpha}
	if fap < alpha {
		e.Points, e.Weight = TowardActivity, tr.d.w.Chromaticity.Activity
		e.Reason = fmt.Sprintf("the chromatic slope varies at the signal's period (amplitude %.3g m/s per unit ln λ, %.1fσ; false-alarm probability %.2g): the signal depends on wavelength", a, a/ae, fap)
	} else {
		e.Points, e.Weight = TowardPlanet, -tr.d.w.Chromaticity.Planet
		e.Reason = fmt.Sprintf("the chromatic slope shows no power at the signal's period (false-alarm probability %.2g): the signal looks achromatic", fap)
	}
	tr.add(e)
}

// summaryOf joins the reasons of the two items with the largest weights
// on the side of the verdict (either side for an inconclusive one).
func summaryOf(sig *Signal) string {
	ev := append([]Evidence(nil), sig.Evidence...)
	sort.SliceStable(ev, func(a, b int) bool { return math.Abs(ev[a].Weight) > math.Abs(ev[b].Weight) })
	side := ""
	switch sig.Verdict {
	case PlanetLike:
		side = TowardPlanet
	case ActivityLike:
		side = TowardActivity
	}
	var parts []string
	for _, e := range ev {
		if e.Weight == 0 || len(parts) == 2 || (side != "" && e.Points != side) {
			continue
		}
		parts = append(parts, e.Reason)
	}
	return strings.Join(parts, "; ")
}
