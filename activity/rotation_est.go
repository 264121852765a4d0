package activity

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"strings"

	"spotsift/indicators"
	"spotsift/rvfit"
)

// indicatorPeak is the strongest periodogram peak of one indicator.
type indicatorPeak struct {
	name   string
	period float64
	fap    float64
	idx    []int // the epochs with a value
}

// indicatorPeaks returns the strongest peak of every indicator with enough
// epochs, most significant first.
func (d *data) indicatorPeaks() []indicatorPeak {
	var out []indicatorPeak
	for _, ind := range d.s.Indicators {
		if ind.Name == chromaticColumn || ind.Count() < MinEpochs {
			continue
		}
		var idx []int
		var t, y, e []float64
		var in []string
		sigma := indicatorErrors(&ind)
		for i := range ind.Value {
			if ind.Valid(i) {
				idx = append(idx, i)
				t, y, e = append(t, d.t[i]), append(y, ind.Value[i]), append(e, sigma[i])
				in = append(in, d.s.Instrument[i])
			}
		}
		// Rotation periods are sought above 1.5 d (shorter ones are rare
		// among the slow rotators RV surveys target; common practice).
		g := d.grid
		if lo := g.Index(1 / (0.5 * d.T)); lo > 0 {
			g.FMin, g.N = g.Freq(lo), g.N-lo
		}
		if hi := g.Index(1 / 1.5); hi+1 < g.N {
			g.N = hi + 1
		}
		pg, err := rvfit.GLS(t, y, e, g, &rvfit.GLSOptions{Instrument: in})
		if err != nil {
			continue
		}
		k := argmax(pg.Power)
		fap := rvfit.BaluevFAP(pg.Power[k], pg.NObs, pg.NOffsets, g.FMax(), pg.TEff)
		out = append(out, indicatorPeak{name: ind.Name, period: 1 / refinePeak(pg, k), fap: fap, idx: idx})
	}
	sort.SliceStable(out, func(a, b int) bool { return out[a].fap < out[b].fap })
	return out
}

// estimateRotation gathers every estimate of the rotation period and
// adopts one: the star file's, else a GP fit to the indicator with the most
// significant periodogram peak, else that peak, else the
// activity–rotation relations.
func (d *data) estimateRotation(rng *rand.Rand) Rotation {
	var est []RotationEstimate
	star := d.opts.Star
	if star != nil && star.RotationPeriod > 0 {
		e := star.RotationPeriodErr
		if !(e > 0) {
			e = 0.1 * star.RotationPeriod // common practice when no error is given
		}
		est = append(est, RotationEstimate{Method: "star file", Period: star.RotationPeriod, Err: e})
	}
	est = append(est, d.lightCurveEstimates()...)
	peaks := d.indicatorPeaks()
	const peakFAP = 0.01
	for _, p := range peaks {
		if p.fap < peakFAP {
			// Half the Rayleigh resolution as the error of a peak period.
			est = append(est, RotationEstimate{Method: "periodogram of " + p.name, Period: p.period, Err: 0.5 * p.period * p.period / d.T,
				Note: fmt.Sprintf("false-alarm probability %.2g", p.fap)})
		}
	}
	var rel []RotationEstimate
	if star != nil && star.BV > 0 {
		if lr, ok := d.meanLogRHK(star); ok {
			rel = RelationEstimates(lr, star.BV)
		}
	}
	if !d.opts.SkipModels && len(peaks) > 0 && peaks[0].fap < peakFAP {
		if e, ok := d.gpRotation(peaks[0], rel); ok {
			est = append(est, e)
		}
	}
	est = append(est, rel...)
	rot := Rotation{Period: Num(math.NaN()), Err: Num(math.NaN()), Estimates: est}
	pick := func(prefix string) bool {
		for _, e := range est {
			if strings.HasPrefix(e.Method, prefix) {
				rot.Period, rot.Err, rot.Source = Num(e.Period), Num(e.Err), e.Method
				return true
			}
		}
		return false
	}
	switch {
	case pick("star file"), pick(lightCurveMethod), pick("gp fit"), pick("periodogram"), pick("Mamajek"), pick("Noyes"):
	default:
		rot.Agreement = "no estimate of the rotation period"
		return rot
	}
	rot.Agreement = agreement(est, float64(rot.Period), float64(rot.Err))
	return rot
}

// gpRotation fits the rotation kernel to one indicator. When the
// activity–rotation relations give estimates, their mean sets a log-normal
// prior on the GP's period, no narrower than 0.25 in ln P: it settles the
// choice between a period and its double, which the periodogram of an
// indicator with two spotted hemispheres cannot make (common practice).
func (d *data) gpRotation(p indicatorPeak, rel []RotationEstimate) (RotationEstimate, bool) {
	ind := d.s.Indicator(p.name)
	sigma := indicatorErrors(ind)
	var t, y, e []float64
	var in []string
	for _, i := range p.idx {
		t, y, e = append(t, d.t[i]), append(y, ind.Value[i]), append(e, sigma[i])
		in = append(in, d.s.Instrument[i])
	}
	g, ng := groupIndex(in)
	m := &gpModel{t: t, y: y, sigma: e, inst: g, ninst: ng, t0: d.t0, pLo: 1.5, pHi: math.Max(3, d.T/2), scale: math.Max(stddev(y), 1e-12)}
	if len(rel) > 0 {
		lm, le := 0.0, 0.0
		for _, r := range rel {
			lm += math.Log(r.Period)
			le = math.Max(le, r.Err/r.Period)
		}
		m.lnPMu, m.lnPSigma = lm/float64(len(rel)), math.Max(le, 0.25)
	}
	var starts [][]float64
	for _, f := range []float64{1, 2} {
		if q := f * p.period; q > m.pLo && q < m.pHi {
			starts = append(starts, m.start(q))
		}
	}
	if len(starts) == 0 {
		return RotationEstimate{}, false
	}
	r := m.fit(starts)
	if !r.ok {
		return RotationEstimate{}, false
	}
	// A floor of 2% on the error: differential rotation and spot evolution
	// blur any single rotation period at that level (common practice).
	out := RotationEstimate{Method: "gp fit to " + p.name, Period: r.period, Err: math.Max(r.periodE, 0.02*r.period)}
	if m.lnPSigma > 0 {
		out.Note = "period prior from the activity-rotation relations"
	}
	if math.IsNaN(r.periodE) {
		out.Err = 0.1 * r.period
		out.Note = strings.TrimPrefix(out.Note+"; the posterior's curvature was not usable, a 10% error is assumed", "; ")
	}
	return out, true
}

// meanLogRHK returns the star's mean log R'HK: the log_rhk column's
// median, else the median S-index turned into log R'HK. A table's s_index
// is on the Mount Wilson scale already (measure applies the star file's
// calibration), so it is not calibrated again.
func (d *data) meanLogRHK(star *Star) (float64, bool) {
	med := func(name string) (float64, bool) {
		ind := d.s.Indicator(name)
		if ind == nil {
			return 0, false
		}
		var v []float64
		for i := range ind.Value {
			if ind.Valid(i) {
				v = append(v, ind.Value[i])
			}
		}
		if len(v) == 0 {
			return 0, false
		}
		sort.Float64s(v)
		return v[len(v)/2], true
	}
	if v, ok := med("log_rhk"); ok {
		return v, true
	}
	if s, ok := med("s_index"); ok {
		lr, _, err := indicators.LogRPrimeHK(s, 0, indicators.RHKOptions{BV: star.BV, Extrapolate: true})
		if err == nil && isFinite(lr) {
			return lr, true
		}
	}
	return 0, false
}

// agreement says whether the estimates agree with the adopted period,
// directly or as a harmonic (within two sigma).
func agreement(est []RotationEstimate, p, perr float64) string {
	if len(est) < 2 {
		return "one estimate only"
	}
	var agree, harm, off []string
	for _, e := range est {
		sig := math.Hypot(e.Err, perr)
		switch {
		case math.Abs(e.Period-p) <= 2*sig:
			agree = append(agree, e.Method)
		case math.Abs(2*e.Period-p) <= 2*math.Hypot(2*e.Err, perr) || math.Abs(e.Period-2*p) <= 2*math.Hypot(e.Err, 2*perr):
			harm = append(harm, e.Method)
		default:
			off = append(off, e.Method)
		}
	}
	s := fmt.Sprintf("%d of %d estimates agree within 2σ", len(agree), len(est))
	if len(harm) > 0 {
		s += fmt.Sprintf("; %s at a factor of 2 (harmonic)", strings.Join(harm, ", "))
	}
	if len(off) > 0 {
		s += fmt.Sprintf("; %s disagree", strings.Join(off, ", "))
	}
	return s
}

// modelComparison is test 6: a GP activity model alone against the same
// model plus a sinusoid (circular Keplerian) at the signal's period, each
// at its maximum a posteriori; the change in log-likelihood and BIC
// (Schwarz 1978), and whether the amplitude stays significant once
// activity is modelled.
func (tr *trial) modelComparison() {
	d := tr.d
	prot, perr := float64(tr.rot.Period), float64(tr.rot.Err)
	if !(prot > 0) {
		tr.skipped("model_comparison", "no rotation period to anchor the activity model")
		return
	}
	atRotation := tr.strongRotation
	// Indicators varying at the period mean the star itself varies there: a
	// Keplerian that survives the GP then models activity the GP's two
	// modes (P_rot, P_rot/2) do not reach, not an orbit.
	indicatorsVary := false
	for _, e := range tr.ev {
		if family(e.Name) == "indicator_power" && e.Points == TowardActivity {
			indicatorsVary = true
		}
	}
	// The GP's period: a Gaussian prior in ln P about the adopted rotation
	// period, no narrower than 10% (spot evolution and differential
	// rotation blur it; common practice).
	lnSig := math.Max(perr/prot, 0.1)
	m := &gpModel{t: d.t, y: tr.own, sigma: d.err, inst: d.inst, ninst: d.ninst, t0: d.t0,
		pLo: math.Max(0.5, prot*math.Exp(-4*lnSig)), pHi: prot * math.Exp(4*lnSig), lnPMu: math.Log(prot), lnPSigma: lnSig,
		scale: math.Max(stddev(tr.own), 1e-12)}
	r0 := m.fit([][]float64{m.start(prot)})
	m1 := *m
	m1.freq = tr.f
	starts := [][]float64{m1.start(prot)}
	if r0.ok {
		starts = append(starts, r0.theta)
	}
	r1 := m1.fit(starts)
	if r1.ok {
		tr.det.gp, tr.det.gpFit = &m1, &r1
	}
	if !r0.ok || !r1.ok {
		tr.skipped("model_comparison", "the Gaussian-process fit did not converge")
		return
	}
	n := float64(len(d.t))
	dlnL := r1.lnL - r0.lnL
	extra := 2.0 // A and B at a fixed period
	if d.opts.Periods == nil {
		extra = 3 // the period was searched for too
	}
	dBIC := -2*dlnL + extra*math.Log(n)
	nb := len(r1.beta)
	a, b := r1.beta[nb-2], r1.beta[nb-1]
	K := math.Hypot(a, b)
	kErr := math.NaN()
	if r1.covBeta != nil && K > 0 {
		caa, cbb, cab := r1.covBeta.At(nb-2, nb-2), r1.covBeta.At(nb-1, nb-1), r1.covBeta.At(nb-2, nb-1)
		kErr = math.Sqrt(math.Max(0, a*a*caa+b*b*cbb+2*a*b*cab)) / K
	}
	snr := K / kErr
	// ΔBIC below −10 is "very strong" evidence (Kass & Raftery 1995, from
	// memory); an amplitude under 3σ is not a detection (common practice).
	e := Evidence{Name: "model_comparison", Value: Num(dBIC), Threshold: -10}
	switch {
	case dBIC <= -10 && snr >= 3 && indicatorsVary:
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("a Keplerian improves on the GP activity model (ΔBIC = %.1f, K = %.2f ± %.2f m/s), but the indicators vary at the same period, so the sinusoid may model activity the GP misses", dBIC, K, kErr)
	case dBIC <= -10 && snr >= 3 && atRotation:
		// At a rotation harmonic a sinusoid also models the coherent part of
		// the activity: the two models are degenerate there.
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("a Keplerian improves on the GP activity model (ΔBIC = %.1f, K = %.2f ± %.2f m/s), but at a rotation harmonic a sinusoid also fits the coherent part of the activity, so this does not tell them apart", dBIC, K, kErr)
	case dBIC <= -10 && snr >= 3:
		e.Points, e.Weight = TowardPlanet, -Weights.ModelComparison.Planet
		e.Reason = fmt.Sprintf("with activity modelled by a GP at P_rot = %.3g d, a Keplerian at the period is still needed: ΔBIC = %.1f, Δln L = %.1f, K = %.2f ± %.2f m/s (%.1fσ)", float64(tr.rot.Period), dBIC, dlnL, K, kErr, snr)
	case dBIC >= 0 || snr < 2:
		e.Points, e.Weight = TowardActivity, Weights.ModelComparison.Activity
		e.Reason = fmt.Sprintf("the GP activity model at P_rot = %.3g d absorbs the signal: ΔBIC = %+.1f for a Keplerian, K = %.2f ± %.2f m/s (%.1fσ)", float64(tr.rot.Period), dBIC, K, kErr, snr)
	default:
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("with activity modelled, a Keplerian improves the fit only moderately: ΔBIC = %.1f, K = %.2f ± %.2f m/s (%.1fσ)", dBIC, K, kErr, snr)
	}
	tr.add(e)
}
