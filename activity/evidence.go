package activity

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/stat"

	"spotsift/rvfit"
)

// harmonicsOf lists the rotation period's harmonics and their aliases:
// frequencies n/P (n = 1 … 4), and each shifted by ±1 sidereal day and
// ±1 year (docs/methods.md §6, common practice). When the period was estimated
// from the data rather than known (estimated), twice the period is added:
// a star with spots on opposite hemispheres shows its strongest indicator
// signal at P_rot/2, so the estimate may itself be a harmonic.
func harmonicsOf(prot float64, estimated bool) []harmonic {
	const sidereal = 1.0027379 // c/d, docs/methods.md §0 [memory]
	const year = 1 / 365.25    // c/d
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
		f := n / prot
		out = append(out, harmonic{name, f, n, false})
		for _, a := range []struct {
			label string
			df    float64
		}{{"1-day alias", sidereal}, {"1-year alias", year}} {
			for _, sgn := range []float64{-1, 1} {
				if g := math.Abs(f + sgn*a.df); g > 0 {
					out = append(out, harmonic{fmt.Sprintf("%s of %s", a.label, name), g, n, true})
				}
			}
		}
	}
	return out
}

type harmonic struct {
	label string
	freq  float64
	n     float64
	alias bool
}

// strong reports whether h is P_rot or P_rot/2 itself (not an alias).
func (h harmonic) strong() bool { return !h.alias && (h.n == 1 || h.n == 2) }

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

// rotationMatch is test 2: is the period near the rotation period, its
// harmonics or their aliases, within the frequency resolution and the
// rotation period's uncertainty?
func (tr *trial) rotationMatch() {
	prot, perr := float64(tr.rot.Period), float64(tr.rot.Err)
	if !(prot > 0) {
		tr.skipped("rotation_match", "no rotation period could be estimated")
		return
	}
	res := 1 / tr.d.T
	best, bestD := harmonic{}, math.Inf(1)
	for _, h := range harmonicsOf(prot, tr.rot.Source != "star file") {
		// Uncertainty of the harmonic's frequency n/P from that of P.
		df := h.n * perr / (prot * prot)
		tol := math.Hypot(res, df)
		if dist := math.Abs(tr.f-h.freq) / tol; dist < bestD {
			best, bestD = h, dist
		}
	}
	e := Evidence{Name: "rotation_match", Value: Num(bestD), Threshold: 1}
	switch {
	case bestD <= 1 && best.strong():
		e.Points, e.Weight = TowardActivity, Weights.RotationMatch
		e.Reason = fmt.Sprintf("the period %.4g d sits at %s (%.4g d; P_rot = %.4g ± %.2g d), %.2f tolerance widths away", 1/tr.f, best.label, 1/best.freq, prot, perr, bestD)
	case bestD <= 1:
		// A higher harmonic or an alias is a weaker match: such frequencies
		// cover much of the frequency axis between them.
		e.Points, e.Weight = TowardActivity, Weights.RotationMatchWeak
		e.Reason = fmt.Sprintf("the period %.4g d sits at the %s (%.4g d; P_rot = %.4g ± %.2g d), %.2f tolerance widths away: a weaker match than P_rot or P_rot/2", 1/tr.f, best.label, 1/best.freq, prot, perr, bestD)
	default:
		e.Points, e.Weight = TowardPlanet, -Weights.RotationMismatch
		e.Reason = fmt.Sprintf("the period %.4g d is %.1f tolerance widths from the nearest rotation harmonic or alias (%s, %.4g d)", 1/tr.f, bestD, best.label, 1/best.freq)
	}
	tr.strongRotation = bestD <= 1 && best.strong()
	tr.add(e)
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
	}
	var rs []res
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
		fit, err := fitSines(d.t, ind.Value, sigma, d.inst, d.ninst, []float64{tr.f}, d.t0)
		if err != nil {
			r.why = "the sinusoid fit is singular on its epochs"
			rs = append(rs, r)
			continue
		}
		beta := fitBeta(d.t, ind.Value, sigma, fit, 1/tr.f)
		r.fap = waldFAP(fit, beta)
		a, ae := fit.amplitude(0)
		r.amp, r.snr = a, a/(ae*beta)
		vals := make([]float64, len(ind.Value))
		for i := range vals {
			vals[i] = math.NaN()
			if ind.Valid(i) {
				vals[i] = ind.Value[i] - fit.Offset[d.inst[i]]
			}
		}
		r.corr = Pearson(tr.comp, vals)
		r.raw = Pearson(tr.own, vals)
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
	const alpha = IndicatorAlpha
	group := func(name string, adj []float64, w Weight, item func(k int, r res, p float64, sig bool) Evidence) {
		nsig := 0
		for _, p := range adj {
			if p < alpha {
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
			e.Value, e.Threshold = Num(p), alpha
			switch {
			case nsig > 0 && p < alpha:
				e.Points, e.Weight = TowardActivity, w.Activity/float64(nsig)
			case nsig > 0:
				e.Points = TowardNeither
			default:
				e.Points, e.Weight = TowardPlanet, -w.Planet/float64(len(adj))
			}
			tr.add(e)
			k++
		}
	}
	group("indicator_power", hf, Weights.IndicatorPower, func(k int, r res, p float64, sig bool) Evidence {
		if sig {
			return Evidence{Reason: fmt.Sprintf("%s varies at the signal's period (amplitude %.3g, %.1fσ; Holm-corrected false-alarm probability %.2g)", r.name, r.amp, r.snr, p)}
		}
		return Evidence{Reason: fmt.Sprintf("%s shows no significant power at the signal's period (Holm-corrected false-alarm probability %.2g)", r.name, p)}
	})
	group("indicator_correlation", hc, Weights.IndicatorCorrelation, func(k int, r res, p float64, sig bool) Evidence {
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
		e.Points, e.Weight = TowardActivity, Weights.Chromaticity.Activity
		e.Reason = fmt.Sprintf("the chromatic slope varies at the signal's period (amplitude %.3g m/s per unit ln λ, %.1fσ; false-alarm probability %.2g): the signal depends on wavelength", a, a/ae, fap)
	} else {
		e.Points, e.Weight = TowardPlanet, -Weights.Chromaticity.Planet
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
