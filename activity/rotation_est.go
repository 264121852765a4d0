package activity

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"strings"

	"spotsift/activity/starsim"
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

// relationsOnly is the Why of a rotation hypothesis that only the
// activity–rotation relations support.
const relationsOnly = "activity-rotation relations only"

// Bounds of the rotation periods sought, in days: from 1.5 d (shorter ones
// are rare among the stars RV surveys target; common practice) to 200 d
// (the slowest M dwarfs rotate in 100–150 d; Newton et al. 2016), and no
// more than half the baseline.
const rotPMin, rotPMax = 1.5, 200.0

// relationsScatter is the scatter, in ln P, of the rotation period the
// activity–rotation relations predict: they give the solar period to
// 10–20 % and scatter more away from the Sun (Mamajek & Hillenbrand 2008),
// so no narrower than 0.3. A period measured no better than this says
// nothing the relations would not.
const relationsScatter = 0.3

// seasonLabels returns one label per epoch: its instrument and its
// observing season (a new season after a gap longer than 60 days; common
// practice for ground-based visibility). A floating offset per label
// removes season-to-season changes (magnetic cycles, slow drifts, yearly
// systematics) before a search for rotation.
func seasonLabels(t []float64, inst []string) []string {
	out := make([]string, len(t))
	k := 0
	for i := range t {
		if i > 0 && t[i]-t[i-1] > 60 {
			k++
		}
		out[i] = fmt.Sprintf("%s|%d", inst[i], k)
	}
	return out
}

// detrendGroups returns y less a weighted straight line fitted to each
// group of epochs (instrument and season) that spans more than 60 days:
// slow drifts within a season (a rising cycle, an instrumental drift) put
// power at long periods that would otherwise win the search for rotation.
func detrendGroups(t, y, e []float64, labels []string) []float64 {
	out := append([]float64(nil), y...)
	g, ng := groupIndex(labels)
	for k := 0; k < ng; k++ {
		var sw, st, sy, stt, sty, lo, hi float64
		lo, hi = math.Inf(1), math.Inf(-1)
		for i := range t {
			if g[i] != k {
				continue
			}
			w := 1 / (e[i] * e[i])
			sw, st, sy, stt, sty = sw+w, st+w*t[i], sy+w*y[i], stt+w*t[i]*t[i], sty+w*t[i]*y[i]
			lo, hi = math.Min(lo, t[i]), math.Max(hi, t[i])
		}
		den := sw*stt - st*st
		if hi-lo <= 60 || !(den > 0) {
			continue
		}
		b := (sw*sty - st*sy) / den
		for i := range t {
			if g[i] == k {
				out[i] -= b * (t[i] - st/sw)
			}
		}
	}
	return out
}

// rotationSearch is the joint periodogram of the indicators used for the
// rotation period.
type rotationSearch struct {
	grid  rvfit.Grid
	z     []float64 // Σ over indicators of −(N−m)/2 ln(1 − p): the joint log-likelihood gain
	prom  []float64 // the same gain above each indicator's local background power
	lnPri []float64 // log prior of each frequency (0 without one)
	m     int       // number of indicators combined
	peaks []indicatorPeak
	per   map[string][]float64 // each indicator's power
}

// searchRotation computes, for every indicator with enough epochs, the GLS
// periodogram with one offset per instrument and season, and their joint
// log-likelihood gain. It returns nil when no indicator can be used.
func (d *data) searchRotation(ctx context.Context, rel []RotationEstimate) *rotationSearch {
	// No longer than two thirds of the longest season: a season's own
	// trend is removed, and periods beyond would be a handful of cycles.
	pmax := math.Min(rotPMax, 0.5*d.T)
	lab := seasonLabels(d.t, d.s.Instrument)
	span := map[string][2]float64{}
	for i, l := range lab {
		sp, ok := span[l]
		if !ok {
			sp = [2]float64{d.t[i], d.t[i]}
		}
		sp[0], sp[1] = math.Min(sp[0], d.t[i]), math.Max(sp[1], d.t[i])
		span[l] = sp
	}
	longest := 0.0
	for _, sp := range span {
		longest = math.Max(longest, sp[1]-sp[0])
	}
	pmax = math.Min(pmax, math.Max(2*longest/3, 3*rotPMin))
	if !(pmax > 2*rotPMin) {
		return nil
	}
	g, err := rvfit.NewGrid(d.t, &rvfit.GridOptions{Oversampling: d.opts.Oversampling, PMin: rotPMin, PMax: pmax})
	if err != nil {
		return nil
	}
	rs := &rotationSearch{grid: g, z: make([]float64, g.N), prom: make([]float64, g.N), lnPri: make([]float64, g.N), per: map[string][]float64{}}
	for _, ind := range d.s.Indicators {
		if ctx.Err() != nil {
			return nil
		}
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
		labels := seasonLabels(t, in)
		y = detrendGroups(t, y, e, labels)
		pg, err := rvfit.GLS(t, y, e, g, &rvfit.GLSOptions{Instrument: labels, Workers: 1, Context: d.ctx})
		if err != nil || pg.NObs-pg.NOffsets < MinEpochs {
			continue
		}
		nk := float64(pg.NObs - pg.NOffsets - 2)
		bg := background(g, pg.Power)
		for k, p := range pg.Power {
			gain := -0.5 * nk * math.Log1p(-math.Min(p, 1-1e-12))
			rs.z[k] += gain
			rs.prom[k] += gain + 0.5*nk*math.Log1p(-math.Min(bg[k], 1-1e-12))
		}
		rs.per[ind.Name] = pg.Power
		rs.m++
		k := argmax(pg.Power)
		fap := rvfit.BaluevFAP(pg.Power[k], pg.NObs, pg.NOffsets, g.FMax(), pg.TEff)
		rs.peaks = append(rs.peaks, indicatorPeak{name: ind.Name, period: 1 / refinePeak(pg, k), fap: fap, idx: idx})
	}
	if rs.m == 0 {
		return nil
	}
	sort.SliceStable(rs.peaks, func(a, b int) bool { return rs.peaks[a].fap < rs.peaks[b].fap })
	// The activity–rotation relations set a log-normal prior on P, no
	// narrower than relationsScatter.
	if len(rel) > 0 {
		mu, sd := 0.0, 0.0
		for _, r := range rel {
			mu += math.Log(r.Period)
			sd = math.Max(sd, r.Err/r.Period)
		}
		mu /= float64(len(rel))
		sd = math.Max(sd, relationsScatter)
		for k := range rs.lnPri {
			z := (math.Log(1/g.Freq(k)) - mu) / sd
			rs.lnPri[k] = -0.5 * z * z
		}
	}
	return rs
}

// post is the log posterior (up to a constant) at grid index k: the gain
// above the local background, so that the red-noise continuum of spot
// evolution and cycles (power rising toward long periods) does not win
// over a narrower rotation peak.
func (rs *rotationSearch) post(k int) float64 { return rs.prom[k] + rs.lnPri[k] }

// background returns the local background of a periodogram: the median
// power within ±0.3 in ln f (a factor 1.35 in period) about each
// frequency, computed at 64 anchors evenly spaced in ln f and
// interpolated between them.
func background(g rvfit.Grid, pw []float64) []float64 {
	const half = 0.3
	const na = 64
	lf0, lf1 := math.Log(g.Freq(0)), math.Log(g.Freq(g.N-1))
	anch := make([]float64, na)
	vals := make([]float64, na)
	buf := make([]float64, 0, len(pw))
	for a := range anch {
		lf := lf0 + (lf1-lf0)*float64(a)/float64(na-1)
		anch[a] = lf
		lo := max(0, g.Index(math.Exp(lf-half)))
		hi := min(g.N-1, g.Index(math.Exp(lf+half)))
		buf = append(buf[:0], pw[lo:hi+1]...)
		sort.Float64s(buf)
		vals[a] = buf[len(buf)/2]
	}
	out := make([]float64, len(pw))
	for k := range pw {
		lf := math.Log(g.Freq(k))
		x := (lf - lf0) / (lf1 - lf0) * float64(na-1)
		i := min(na-2, max(0, int(x)))
		fr := math.Max(0, math.Min(1, x-float64(i)))
		out[k] = vals[i]*(1-fr) + vals[i+1]*fr
	}
	return out
}

// fap is the false-alarm probability of the joint gain at k: 2z follows χ²
// with 2m degrees of freedom at one frequency (Wilks), times the number of
// independent frequencies searched (Bonferroni; common practice).
func (rs *rotationSearch) fap(k int, T float64) float64 {
	nindep := math.Max(1, T*(rs.grid.FMax()-rs.grid.FMin))
	return math.Min(1, nindep*chi2Survival(2*rs.z[k], 2*rs.m))
}

// localMax returns the index of the local maximum of the posterior nearest
// to frequency f (climbing from the nearest grid point).
func (rs *rotationSearch) localMax(f float64) int {
	k := rs.grid.Index(f)
	if k < 0 || k >= rs.grid.N {
		return -1
	}
	for {
		switch {
		case k > 0 && rs.post(k-1) > rs.post(k):
			k--
		case k+1 < rs.grid.N && rs.post(k+1) > rs.post(k):
			k++
		default:
			return k
		}
	}
}

// peakError returns the one-sigma error of the period at peak k: the half
// width at half maximum of the joint gain, as a Gaussian σ in frequency
// (HWHM/1.1774), turned into period; no less than 5 % of the period, for
// differential rotation and spot evolution blur any single rotation
// period at that level (common practice).
func (rs *rotationSearch) peakError(k int) float64 {
	half := 0.5 * rs.z[k]
	lo, hi := k, k
	for lo > 0 && rs.z[lo] > half {
		lo--
	}
	for hi+1 < rs.grid.N && rs.z[hi] > half {
		hi++
	}
	hwhm := 0.5 * float64(hi-lo) * rs.grid.DF
	f := rs.grid.Freq(k)
	return math.Max(hwhm/1.1774/(f*f), 0.05/f)
}

// hypotheses returns the rotation periods the joint periodogram supports:
// the highest posterior peak, its double and half when the data or the
// prior give them weight, and other peaks nearly as high. Each carries a
// share of the posterior (the exp of its log-posterior gain, tempered by
// the number of indicators, for activity noise is red and shared between
// indicators, so the raw gains overstate the contrast).
func (rs *rotationSearch) hypotheses(T float64) []RotationHypothesis {
	best := 0
	for k := range rs.z {
		if rs.post(k) > rs.post(best) {
			best = k
		}
	}
	type cand struct {
		k   int
		why string
	}
	f1 := rs.grid.Freq(best)
	cands := []cand{{best, "highest peak of the indicators' joint periodogram"}}
	for _, c := range []struct {
		mult float64
		why  string
	}{{0.5, "twice the highest peak (spots on opposite hemispheres put the strongest indicator signal at P_rot/2)"}, {2, "half the highest peak (the peak may be the first harmonic's subharmonic)"}} {
		if k := rs.localMax(f1 * c.mult); k >= 0 && k != best && math.Abs(rs.grid.Freq(k)-f1*c.mult) < 2/T {
			cands = append(cands, cand{k, c.why})
		}
	}
	// Other peaks of nearly the same height (a yearly alias, a second
	// indicator's period).
	for k := 1; k+1 < rs.grid.N; k++ {
		if rs.post(k) >= rs.post(k-1) && rs.post(k) >= rs.post(k+1) && rs.post(best)-rs.post(k) < 3 {
			dup := false
			for _, c := range cands {
				if math.Abs(rs.grid.Freq(k)-rs.grid.Freq(c.k)) < 1.5/T {
					dup = true
				}
			}
			if !dup && len(cands) < 5 {
				cands = append(cands, cand{k, "another peak nearly as high"})
			}
		}
	}
	temp := math.Max(1, float64(rs.m))
	var out []RotationHypothesis
	sum := 0.0
	for _, c := range cands {
		w := math.Exp((rs.post(c.k) - rs.post(best)) / temp)
		if w < 0.02 {
			continue
		}
		f := rs.grid.Freq(c.k)
		out = append(out, RotationHypothesis{Period: 1 / f, Err: rs.peakError(c.k), Share: w, Why: c.why, FAP: Num(rs.fap(c.k, T))})
		sum += w
	}
	for i := range out {
		out[i].Share /= sum
	}
	sort.SliceStable(out, func(a, b int) bool { return out[a].Share > out[b].Share })
	return out
}

// estimateRotation gathers every estimate of the rotation period and
// adopts one: the star file's, else the highest peak of the joint
// periodogram of the indicators (seasons' offsets removed, with the
// activity–rotation relations as prior), refined by a GP fit to the
// indicator that shows it best, else the relations. The competing
// hypotheses (the period's double and half, other peaks nearly as high)
// are carried forward with their shares; the magnetic cycle gets its own
// estimate.
func (d *data) estimateRotation(ctx context.Context, rng *rand.Rand) Rotation {
	var est []RotationEstimate
	star := d.opts.Star
	var rel []RotationEstimate
	if star != nil {
		bv := star.BV
		if !(bv > 0) && star.Teff > 0 {
			bv = starsim.BVFromTeff(star.Teff)
		}
		if bv > 0 {
			if lr, ok := d.meanLogRHK(bv); ok {
				rel = RelationEstimates(lr, bv)
			}
		}
	}
	rot := Rotation{Period: Num(math.NaN()), Err: Num(math.NaN())}
	if star != nil && star.RotationPeriod > 0 {
		e := star.RotationPeriodErr
		if !(e > 0) {
			e = 0.1 * star.RotationPeriod // common practice when no error is given
		}
		est = append(est, RotationEstimate{Method: starFileSource, Period: star.RotationPeriod, Err: e})
		rot.Period, rot.Err, rot.Source = Num(star.RotationPeriod), Num(e), starFileSource
		rot.Hypotheses = []RotationHypothesis{{Period: star.RotationPeriod, Err: e, Share: 1, Why: "given in the star file", FAP: Num(math.NaN())}}
	}
	// The light curve's rotation, when there is one, is a measurement
	// of its own: it joins the indicators' hypotheses below with its
	// calibrated weight (see withLightCurve).
	lcEst := d.lightCurveEstimates()
	est = append(est, lcEst...)
	rs := d.searchRotation(ctx, rel)
	var indHyp []RotationHypothesis
	const peakFAP = 0.01
	if rs != nil {
		for _, p := range rs.peaks {
			if p.fap < peakFAP {
				est = append(est, RotationEstimate{Method: "periodogram of " + p.name, Period: p.period, Err: 0.5 * p.period * p.period / d.T,
					Note: fmt.Sprintf("season offsets removed; false-alarm probability %.2g", p.fap)})
			}
		}
		hyp := rs.hypotheses(d.T)
		if len(hyp) > 0 && float64(hyp[0].FAP) < peakFAP {
			est = append(est, RotationEstimate{Method: "joint periodogram of the indicators", Period: hyp[0].Period, Err: hyp[0].Err,
				Note: fmt.Sprintf("%d indicators, season offsets removed; false-alarm probability %.2g", rs.m, float64(hyp[0].FAP))})
			if !d.opts.SkipModels && ctx.Err() == nil {
				if e, ok := d.gpRotation(rs, hyp, rel); ok {
					est = append(est, e)
					// The GP refines the hypothesis it lands on.
					for i := range hyp {
						if math.Abs(e.Period-hyp[i].Period) <= 3*math.Hypot(e.Err, hyp[i].Err) {
							hyp[i].Period, hyp[i].Err = e.Period, math.Max(e.Err, 0.05*e.Period)
							hyp[i].Why += "; refined by " + e.Method
							break
						}
					}
				}
			}
			if rot.Source == "" && len(lcEst) == 0 {
				rot.Hypotheses = hyp
				rot.Period, rot.Err, rot.Source = Num(hyp[0].Period), Num(hyp[0].Err), indicatorSource(hyp[0])
			}
			indHyp = hyp
		}
	}
	if rot.Source == starFileSource && len(indHyp) > 0 {
		rot = combineStarFile(rot, indHyp[0])
	}
	if rot.Source == "" && len(lcEst) > 0 {
		rot.Hypotheses = withLightCurve(lcEst[0], indHyp, d.opts.LightCurveWeight)
		top := rot.Hypotheses[0]
		rot.Period, rot.Err, rot.Source = Num(top.Period), Num(top.Err), lcEst[0].Method
		if !strings.HasPrefix(top.Why, lightCurveWhy) {
			rot.Source = indicatorSource(top)
		}
	}
	est = append(est, rel...)
	if rot.Source == "" && len(rel) > 0 {
		// The relations alone: their mean, with their scatter.
		lm, le := 0.0, 0.0
		for _, r := range rel {
			lm += math.Log(r.Period)
			le = math.Max(le, r.Err/r.Period)
		}
		p := math.Exp(lm / float64(len(rel)))
		rot.Period, rot.Err, rot.Source = Num(p), Num(math.Max(le, relationsScatter)*p), rel[0].Method
		rot.Hypotheses = []RotationHypothesis{{Period: p, Err: float64(rot.Err), Share: 1, Why: relationsOnly, FAP: Num(math.NaN())}}
	}
	rot.Estimates = est
	rot.Cycle = d.estimateCycle(float64(rot.Period))
	if rot.Source == "" {
		rot.Agreement = "no estimate of the rotation period"
		return rot
	}
	rot.Agreement = agreement(est, float64(rot.Period), float64(rot.Err))
	if len(rot.Hypotheses) > 1 {
		var hs []string
		for _, h := range rot.Hypotheses {
			hs = append(hs, fmt.Sprintf("%.4g d (%.0f%%)", h.Period, 100*h.Share))
		}
		rot.Agreement += "; competing hypotheses carried forward: " + strings.Join(hs, ", ")
	}
	return rot
}

// starFileSource is the Source of a rotation period given in the star
// file; a period combined with the data's keeps it as a prefix
// (combineStarFile).
const starFileSource = "star file"

// combineStarFile refines the star file's rotation period with the
// indicators' best hypothesis h when the two agree (within twice their
// combined error): they measure the same period, so the refined period is
// their inverse-variance weighted mean, with its smaller error (common
// practice). A period the data measure to 1 % then narrows the windows a
// 10 % catalogue value would draw about every harmonic. When they
// disagree, the star file stands (it may come from photometry the RVs
// never saw) and the data's estimate is listed beside it as before
// (docs/methods.md §14.12).
func combineStarFile(rot Rotation, h RotationHypothesis) Rotation {
	p1, e1 := float64(rot.Period), float64(rot.Err)
	p2, e2 := h.Period, h.Err
	if !(e1 > 0) || !(e2 > 0) || !(p2 > 0) || math.Abs(p1-p2) > 2*math.Hypot(e1, e2) {
		return rot
	}
	w1, w2 := 1/(e1*e1), 1/(e2*e2)
	p, e := (w1*p1+w2*p2)/(w1+w2), 1/math.Sqrt(w1+w2)
	src := indicatorSource(h)
	rot.Period, rot.Err = Num(p), Num(e)
	rot.Source = starFileSource + " refined by the " + src
	rot.Hypotheses = []RotationHypothesis{{Period: p, Err: e, Share: 1, FAP: h.FAP,
		Why: fmt.Sprintf("given in the star file (%.4g ± %.2g d) and measured by the %s (%.4g ± %.2g d): their weighted mean", p1, e1, src, p2, e2)}}
	return rot
}

// estimateCycle looks for a magnetic cycle: the strongest peak, at periods
// above max(300 d, 5 P_rot) and up to twice the baseline, of the S-index,
// log R'HK or FWHM with one offset per instrument. It returns nil when no
// peak has a false-alarm probability below 1 %.
func (d *data) estimateCycle(prot float64) *CycleEstimate {
	lo := 300.0
	if prot > 0 {
		lo = math.Max(lo, 5*prot)
	}
	if !(2*d.T > 1.5*lo) {
		return nil
	}
	var best *CycleEstimate
	for _, name := range []string{"s_index", "log_rhk", "fwhm"} {
		ind := d.s.Indicator(name)
		if ind == nil || ind.Count() < MinEpochs {
			continue
		}
		sigma := indicatorErrors(ind)
		var t, y, e []float64
		var in []string
		for i := range ind.Value {
			if ind.Valid(i) {
				t, y, e = append(t, d.t[i]), append(y, ind.Value[i]), append(e, sigma[i])
				in = append(in, d.s.Instrument[i])
			}
		}
		g, err := rvfit.NewGrid(t, &rvfit.GridOptions{Oversampling: d.opts.Oversampling, PMin: lo, PMax: 2 * d.T})
		if err != nil {
			continue
		}
		pg, err := rvfit.GLS(t, y, e, g, &rvfit.GLSOptions{Instrument: in, Workers: 1, Context: d.ctx})
		if err != nil {
			continue
		}
		k := argmax(pg.Power)
		fap := rvfit.BaluevFAP(pg.Power[k], pg.NObs, pg.NOffsets, g.FMax(), pg.TEff)
		if fap < 0.01 && (best == nil || fap < best.FAP) {
			p := 1 / refinePeak(pg, k)
			// Half the Rayleigh resolution, and never less than 10 %: a
			// cycle is at best quasi-periodic.
			best = &CycleEstimate{Period: p, Err: math.Max(0.5*p*p/d.T, 0.1*p), Indicator: name, FAP: fap}
		}
	}
	return best
}

// gpRotation fits the rotation kernel to the indicator with the most
// power at the leading hypothesis, after removing the mean of every
// instrument and season (a GP at P_rot cannot absorb a cycle), starting
// from each hypothesis. When the activity–rotation relations give
// estimates, their mean sets a log-normal prior on the GP's period, no
// narrower than 0.25 in ln P: it helps settle the choice between a period
// and its double (common practice).
func (d *data) gpRotation(rs *rotationSearch, hyp []RotationHypothesis, rel []RotationEstimate) (RotationEstimate, bool) {
	k0 := rs.grid.Index(1 / hyp[0].Period)
	name, bp := "", -1.0
	for _, n := range sortedKeysOf(rs.per) {
		if k0 >= 0 && k0 < len(rs.per[n]) && rs.per[n][k0] > bp {
			name, bp = n, rs.per[n][k0]
		}
	}
	ind := d.s.Indicator(name)
	if ind == nil {
		return RotationEstimate{}, false
	}
	sigma := indicatorErrors(ind)
	var t, y, e []float64
	var in []string
	for i := range ind.Value {
		if ind.Valid(i) {
			t, y, e = append(t, d.t[i]), append(y, ind.Value[i]), append(e, sigma[i])
			in = append(in, d.s.Instrument[i])
		}
	}
	// Season means removed (weighted), instruments kept as groups.
	lab := seasonLabels(t, in)
	sg, nsg := groupIndex(lab)
	sw, swy := make([]float64, nsg), make([]float64, nsg)
	for i := range y {
		w := 1 / (e[i] * e[i])
		sw[sg[i]] += w
		swy[sg[i]] += w * y[i]
	}
	for i := range y {
		y[i] -= swy[sg[i]] / sw[sg[i]]
	}
	g, ng := groupIndex(in)
	m := &gpModel{t: t, y: y, sigma: e, inst: g, ninst: ng, t0: d.t0, pLo: rotPMin, pHi: math.Max(3, math.Min(rotPMax, d.T/2)), scale: math.Max(stddev(y), 1e-12), ctx: d.ctx}
	if len(rel) > 0 {
		lm, le := 0.0, 0.0
		for _, r := range rel {
			lm += math.Log(r.Period)
			le = math.Max(le, r.Err/r.Period)
		}
		m.lnPMu, m.lnPSigma = lm/float64(len(rel)), math.Max(le, 0.25)
	}
	var starts [][]float64
	for _, h := range hyp {
		if q := h.Period; q > m.pLo && q < m.pHi && len(starts) < 3 {
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
	// A GP whose period runs to the edge of its box, or whose period is
	// pinned no better than the relations pin it, has found no coherent
	// rotation in the indicator: it measures nothing, and refines nothing.
	// (Left in, an error of 30 d on a 2 d period put every hypothesis
	// within its reach, and one was replaced by a 2 d "rotation".)
	if r.period < m.pLo*1.02 || r.period > m.pHi/1.02 || !(r.periodE <= relationsScatter*r.period) {
		return RotationEstimate{}, false
	}
	// A floor of 2% on the error: differential rotation and spot evolution
	// blur any single rotation period at that level (common practice).
	out := RotationEstimate{Method: "gp fit to " + name, Period: r.period, Err: math.Max(r.periodE, 0.02*r.period), Note: "season means removed"}
	if m.lnPSigma > 0 {
		out.Note += "; period prior from the activity-rotation relations"
	}
	return out, true
}

// meanLogRHK returns the star's mean log R'HK: the log_rhk column's
// median, else the median S-index turned into log R'HK. A table's s_index
// is on the Mount Wilson scale already (measure applies the star file's
// calibration), so it is not calibrated again.
func (d *data) meanLogRHK(bv float64) (float64, bool) {
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
		lr, _, err := indicators.LogRPrimeHK(s, 0, indicators.RHKOptions{BV: bv, Extrapolate: true})
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
	free := !(prot > 0)
	// degenerate is the share of the rotation hypotheses that put the
	// period at a harmonic where a sinusoid fits activity as well as an
	// orbit: the comparison's pull toward a planet counts for the rest.
	degenerate := tr.gpDegenerate
	// Indicators varying at the period mean the star itself varies there: a
	// Keplerian that survives the GP then models activity the GP's two
	// modes (P_rot, P_rot/2) do not reach, not an orbit.
	indicatorsVary := false
	for _, e := range tr.ev {
		if family(e.Name) == "indicator_power" && e.Points == TowardActivity {
			indicatorsVary = true
		}
	}
	// The GP's period: a Gaussian prior in ln P about a rotation
	// hypothesis, no narrower than 10% (spot evolution and differential
	// rotation blur it; common practice). Each hypothesis with a share of
	// 20 % or more anchors one activity model; the one that fits best is
	// kept, so the comparison never rests on one disputed period.
	//
	// Without any rotation period, the GP's period is free over the
	// rotation periods sought, started away from the signal's period; a
	// GP that settles at the signal's period, its double or its half is
	// degenerate with the Keplerian and the test then says nothing.
	anchors := []float64{prot}
	errs := []float64{perr}
	if free {
		anchors, errs = nil, nil
		for _, pa := range []float64{3, 10, 30, 90} {
			if pa < d.T/2 && len(anchors) < 3 && math.Abs(math.Log(pa*tr.f)) > 0.3 && math.Abs(math.Log(pa*tr.f/2)) > 0.3 {
				anchors, errs = append(anchors, pa), append(errs, math.NaN())
			}
		}
		if len(anchors) == 0 {
			tr.skipped("model_comparison", "no rotation period to anchor the activity model, and no room for a free one")
			return
		}
		prot = anchors[0]
	}
	for _, h := range tr.rot.Hypotheses {
		if h.Share >= 0.2 && math.Abs(h.Period-prot) > h.Err && len(anchors) < 3 {
			anchors, errs = append(anchors, h.Period), append(errs, h.Err)
		}
	}
	var m *gpModel
	var r0 gpResult
	for i, pa := range anchors {
		if i > 0 && d.ctx.Err() != nil {
			break
		}
		lnSig := math.Max(errs[i]/pa, 0.1)
		mi := &gpModel{t: d.t, y: tr.own, sigma: d.err, inst: d.inst, ninst: d.ninst, t0: d.t0,
			pLo: math.Max(0.5, pa*math.Exp(-4*lnSig)), pHi: pa * math.Exp(4*lnSig), lnPMu: math.Log(pa), lnPSigma: lnSig,
			scale: math.Max(stddev(tr.own), 1e-12), ctx: d.ctx, shape: tr.shape}
		if tr.gpHarmonic > 0 {
			mi.mode = tr.f
		}
		if free {
			mi.pLo, mi.pHi, mi.lnPMu, mi.lnPSigma = rotPMin, math.Max(3, math.Min(rotPMax, d.T/2)), 0, 0
		}
		ri := mi.fit([][]float64{mi.start(pa)})
		if m == nil || (ri.ok && (!r0.ok || ri.lnPost > r0.lnPost)) {
			m, r0, prot = mi, ri, pa
		}
	}
	// Without a rotation period, the activity GP is also fitted with its
	// period held on the signal (onSignalFit: the period, its double or
	// its half), the explanation "activity at this period" that a free
	// period started elsewhere may miss, and later a Keplerian with the
	// GP held away from them (heldAwayFit), "a planet at this period and
	// activity elsewhere, if any".
	var atP gpResult
	if free && !(tr.gpDegenerate > 0) && d.ctx.Err() == nil {
		atP = onSignalFit(m, tr.f, r0)
	}
	atBound := free && r0.ok && (r0.period < 1.05*m.pLo || r0.period > 0.95*m.pHi)
	// slowBound: the signal lies beyond every period the rotation kernel
	// may take (its half too, so no fit held on it exists), and the free
	// GP ran to the longest of them. There the kernel's low-frequency
	// plateau (below its period's frequency the power of a damped
	// oscillator is flat) is a model of slow red noise: the activity's
	// best account of a slow signal when no rotation is known, and the
	// comparison with and without the Keplerian asks whether the signal
	// is smoother and steadier than that noise. Its plateau is short of
	// a random walk's rising power, so a pull toward a planet is checked
	// again with a damped random walk beside it (redNoiseCheck). The path
	// needs an indicator that can follow a magnetic cycle beside the RVs
	// (hasCycleIndicator): a cycle is as smooth as an orbit, and only such
	// an indicator can show one (the indicator tests weigh it).
	slowBound := atBound && !atP.ok && r0.period > 0.95*m.pHi && 1/tr.f > 2*m.pHi && d.hasCycleIndicator()
	if atBound && !atP.ok && !slowBound {
		// Otherwise a free GP whose period runs to a bound found no
		// rotation to model: at the short end the comparison would be
		// against white noise, and from RVs alone an orbit could not be
		// told from a magnetic cycle.
		tr.skipped("model_comparison", fmt.Sprintf("no rotation period is known and a GP with a free period found none (it ran to %.3g d, a bound)", r0.period))
		return
	}
	settled := false // the free GP settled at the signal's period
	if free && r0.ok {
		prot = r0.period
		settled = onSignal(r0.period, tr.f)
		if settled {
			degenerate = 1
		}
	}
	m1 := *m
	m1.freq = tr.f
	starts := [][]float64{m1.start(prot)}
	if r0.ok {
		starts = append(starts, r0.theta)
	}
	if atP.ok {
		starts = append(starts, atP.theta)
	}
	r1 := m1.fit(starts)
	if r1.ok {
		tr.det.gp, tr.det.gpFit = withoutMode(&m1, r1)
	}
	if !r0.ok || !r1.ok {
		tr.skipped("model_comparison", "the Gaussian-process fit did not converge")
		return
	}
	gpWhat := "P_rot"
	if tr.gpHarmonic > 0 {
		gpWhat = fmt.Sprintf("P_rot, with a mode at the signal's period (near P_rot/%d) as coherent as the rotation's,", tr.gpHarmonic)
	}
	switch {
	case slowBound:
		gpWhat = fmt.Sprintf("a free period (no rotation period known; it runs to its longest, %.3g d, and models the slow variations as red noise)", m.pHi)
	case free:
		gpWhat = "a free period (no rotation period known)"
	}
	// A free GP that settled on the signal, or found nothing, makes the
	// comparison of r0 and r1 degenerate or one against white noise. The
	// question is then whether the signal needs activity at its period at
	// all: the Keplerian with the GP held away from the period (held)
	// against the GP alone on it (atP). When the free GP settled
	// elsewhere, both comparisons are made and the weaker one counts.
	var held gpResult
	if atP.ok && d.ctx.Err() == nil {
		held = heldAwayFit(m, tr.f, r1)
	}
	n := float64(len(d.t))
	dlnL := r1.lnL - r0.lnL
	extra := 2.0 // A and B at a fixed period
	if d.opts.Periods == nil {
		extra = 3 // the period was searched for too
	}
	if tr.shape.e > 0 {
		extra += 2 // and an eccentric orbit's e and periastron
	}
	dBIC := -2*dlnL + extra*math.Log(n)
	K, kErr := sinusoidAmplitude(r1.beta, r1.covBeta)
	snr := K / kErr
	// The whole-model comparison: the multi-output GP of Rajpaul et al.
	// (2015) on the RVs and the indicators (FitGPActivity's GPMulti), with
	// and without the Keplerian, replaces the RV-only comparison when the
	// indicators allow it.
	// (The multi-output model fits a sinusoid: an eccentric orbit keeps
	// the RV-only comparison, which fits its shape.)
	if !free && !d.opts.SingleOutput && tr.shape.e == 0 && tr.gpHarmonic == 0 && d.ctx.Err() == nil {
		if w0, w1, ok := tr.multiComparison(prot, perr); ok {
			tr.det.multi = w1
			dlnL = w1.LogLikelihood - w0.LogLikelihood
			dBIC = w1.BIC - w0.BIC
			if d.opts.Periods == nil {
				dBIC += math.Log(n)
			}
			K, kErr = w1.Amplitude, w1.AmplitudeErr
			snr = K / kErr
			prot = w0.Rotation
			gpWhat = "P_rot (multi-output GP on the RVs and the indicators)"
		}
	}
	if held.ok && !settled && !atBound {
		if dAB := -2*(held.lnL-atP.lnL) + extra*math.Log(n); dAB > dBIC {
			dBIC, dlnL = dAB, held.lnL-atP.lnL
			gpWhat = fmt.Sprintf("a free period (no rotation period known; the GP settles at %.3g d, and the weaker comparison, against a GP held on the signal's period, counts)", r0.period)
		}
	}
	// ΔBIC below −10 is "very strong" evidence (Kass & Raftery 1995, from
	// memory); an amplitude under 3σ is not a detection (common practice).
	e := Evidence{Name: "model_comparison", Value: Num(dBIC), Threshold: -10}
	atRotation := degenerate > 0.99
	// part says, when some rotation hypotheses put the period at a
	// harmonic, how much of the pull toward a planet is left.
	part := ""
	if degenerate > 0 && !atRotation {
		part = fmt.Sprintf("; rotation hypotheses holding %.0f%% of the share put the period at a harmonic, where a sinusoid also fits the coherent part of the activity, so the test counts for the other %.0f%%", 100*degenerate, 100*(1-degenerate))
	}
	switch {
	case dBIC <= -10 && snr >= 3 && indicatorsVary:
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("a Keplerian improves on the GP activity model (ΔBIC = %.1f, its amplitude %.1fσ from zero), but the indicators vary at the same period, so the sinusoid may model activity the GP misses", dBIC, snr)
	case held.ok && (settled || atBound):
		tr.heldAwayEvidence(&e, atP, r1, held, extra, indicatorsVary, atBound, settled)
	case dBIC <= -10 && snr >= 3 && atRotation:
		// At a rotation harmonic a sinusoid also models the coherent part of
		// the activity: the two models are degenerate there.
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("a Keplerian improves on the GP activity model (ΔBIC = %.1f, its amplitude %.1fσ from zero), but at a rotation harmonic a sinusoid also fits the coherent part of the activity, so this does not tell them apart", dBIC, snr)
	case dBIC <= -10 && snr >= 3:
		e.Points, e.Weight = TowardPlanet, -tr.d.w.ModelComparison.Planet*(1-degenerate)
		e.Reason = fmt.Sprintf("with activity modelled by a GP at %s = %.3g d, a Keplerian at the period is still needed: ΔBIC = %.1f, Δln L = %.1f, its amplitude %.1fσ from zero%s", gpWhat, prot, dBIC, dlnL, snr, part)
	case dBIC < -2 && snr >= 3 && !indicatorsVary && !atRotation:
		// Between "positive" and "very strong" evidence (2 ln B of 2 to
		// 10, with ΔBIC ≈ −2 ln B; Kass & Raftery 1995) the test pulls
		// toward a planet in proportion to the evidence, instead of not
		// at all: a GP whose period is free, or only loosely tied to a
		// rotation period, absorbs part of any signal, so strong but not
		// overwhelming evidence is the common case for a real planet.
		frac := -dBIC / 10 * (1 - degenerate)
		e.Points, e.Weight = TowardPlanet, -tr.d.w.ModelComparison.Planet*frac
		e.Reason = fmt.Sprintf("with activity modelled by a GP at %s = %.3g d, a Keplerian at the period improves the fit: ΔBIC = %.1f, Δln L = %.1f, its amplitude %.1fσ from zero; evidence short of very strong (ΔBIC ≤ −10)%s, so the test counts %.0f%%", gpWhat, prot, dBIC, dlnL, snr, part, 100*frac)
	case dBIC >= 0 || snr < 2:
		e.Points, e.Weight = TowardActivity, tr.d.w.ModelComparison.Activity
		e.Reason = fmt.Sprintf("the GP activity model at %s = %.3g d absorbs the signal: ΔBIC = %+.1f for a Keplerian, its amplitude %.1fσ from zero", gpWhat, prot, dBIC, snr)
	default:
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("with activity modelled, a Keplerian improves the fit only moderately: ΔBIC = %.1f, its amplitude %.1fσ from zero", dBIC, snr)
	}
	if slowBound && e.Points == TowardPlanet && d.ctx.Err() == nil {
		tr.redNoiseCheck(&e, m, r0, r1, extra)
	}
	tr.add(e)
}

// multiComparison runs CompareGPActivity's multi-output model on the
// signal's own RVs (the other signals removed) and the indicators, with
// the rotation period as prior. ok is false when the series has no
// indicator the model can use or a fit fails.
func (tr *trial) multiComparison(prot, perr float64) (without, with *GPActivityFit, ok bool) {
	d := tr.d
	s := d.s.Clone()
	copy(s.RV, tr.own)
	if _, err := multiIndicators(s, nil); err != nil {
		return nil, nil, false
	}
	o := &GPActivityOptions{Model: GPMulti, Rotation: prot, RotationErr: math.Max(perr, 0.1*prot), Starts: 2, Workers: 1, Context: d.ctx}
	w0, w1, err := CompareGPActivity(s, 1/tr.f, o)
	if err != nil || w0 == nil || w1 == nil || !isFinite(w1.BIC) || !isFinite(w0.BIC) || !isFinite(w1.AmplitudeErr) {
		return nil, nil, false
	}
	return w0, w1, true
}

// heldAwayLn is the half-width in ln P of the windows about the signal's
// period, its double and its half (and about the signal's 1-day aliases,
// signalWindows) where a GP period counts as sitting on the signal: a
// rotation kernel there has a mode that can model it.
const heldAwayLn = 0.25

// signalWindows returns the periods about which a rotation kernel's period
// counts as sitting on a signal of frequency f: the signal's period, its
// double and its half, then the signal's 1-day (sidereal) aliases
// 1/|f − 1 c/d| and 1/(f + 1 c/d). Nightly sampling hardly tells a
// variation at one of these frequencies from one at the other, so a
// kernel whose fundamental sits on the alias models the signal as one on
// the period does. Example (FF' training star 43, RVs alone, no star
// file): activity at P_rot/2 found as a 1.34 d signal, and a GP with a
// free period settling at 3.98 d, by the 1-day alias of 1.34 d (3.90 d);
// taken for activity elsewhere, it left a Keplerian at 1.34 d "still
// needed" (ΔBIC = −13.0), and the signal came out planet-like. The
// kernel's second mode is not followed through the alias: with the
// windows' ±25 % it would put a window near 2 d for every signal longer
// than a few days (a 2 d kernel's 1 d mode, aliased, spans all long
// periods), and a window that holds every signal tells none apart.
// Only signals shorter than about 3 d have an alias the GP's periods
// reach.
func signalWindows(f float64) []float64 {
	out := []float64{1 / f, 2 / f, 0.5 / f}
	for _, g := range []float64{math.Abs(f - siderealFreq), f + siderealFreq} {
		if g > 0 {
			out = append(out, 1/g)
		}
	}
	return out
}

// heldAwayEvidence (docs/methods.md §14.10) sets e for a signal whose
// free GP settled on it or found nothing: r0 is the GP alone held on the
// signal, r1 the GP (free) with the Keplerian, held the Keplerian with
// the GP held away from the period. Three cases:
//   - the GP at the period is still needed beside the Keplerian (r1, with
//     its GP on the period, beats held by ΔBIC ≤ −10 at equal parameters):
//     the star varies at the period too, so the period may be its
//     rotation: neither side;
//   - the held model beats the GP alone (ΔBIC ≤ −10, amplitude ≥ 3σ, no
//     indicator varying at the period): the signal is more coherent than
//     the GP lets activity be (quality ≤ 30: coherent over about ten
//     cycles), and needs no activity at its period: planet, with the
//     partial weight of the other branches between −2 and −10 when the
//     free GP found no period (atBound); when it settled on the signal
//     (settled), the data's own red noise names this period as the
//     star's, and only very strong evidence counts (docs/methods.md
//     §14.10);
//   - otherwise the GP alone explains it as well: activity when the held
//     model is worse (ΔBIC ≥ 0), else neither.
func (tr *trial) heldAwayEvidence(e *Evidence, r0, r1, held gpResult, extra float64, indicatorsVary, atBound, settled bool) {
	n := float64(len(tr.d.t))
	dBIC := -2*(held.lnL-r0.lnL) + extra*math.Log(n)
	e.Value = Num(dBIC)
	K, kErr := sinusoidAmplitude(held.beta, held.covBeta)
	snr := K / kErr
	sn := "—" // unknown without the covariance of the linear terms
	if isFinite(snr) {
		sn = fmt.Sprintf("%.1f", snr)
	}
	both := -2 * (r1.lnL - held.lnL)
	away := "held away from it, its double, its half and its 1-day aliases"
	note := aliasNote(r0.period, tr.f)
	what := fmt.Sprintf("no rotation period is known and a GP with a free period settles on the signal (%.3g d%s); a Keplerian at the period with the GP %s", r0.period, note, away)
	switch {
	case atBound && settled:
		// The end of the GP's period range lies on the signal's period.
		what = fmt.Sprintf("no rotation period is known and a GP with a free period runs to the end of its range, on the signal's period (%.3g d%s); a Keplerian at the period with the GP %s", r0.period, note, away)
	case atBound:
		what = fmt.Sprintf("no rotation period is known and a GP with a free period finds none; held on the signal (%.3g d%s) it models it, but a Keplerian at the period with the GP %s", r0.period, note, away)
	}
	switch {
	case onSignal(r1.period, tr.f) && both <= -10:
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("%s leaves variability a GP at the period still models (ΔBIC = %.1f for keeping it beside the Keplerian): the star may vary at this period, so it may be the rotation", what, both)
	case dBIC <= -10 && snr >= 3 && !indicatorsVary:
		e.Points, e.Weight = TowardPlanet, -tr.d.w.ModelComparison.Planet
		e.Reason = fmt.Sprintf("%s fits better than the GP alone: ΔBIC = %.1f, its amplitude %sσ from zero; the signal is more coherent than the GP lets activity be", what, dBIC, sn)
	case dBIC < -2 && snr >= 3 && !indicatorsVary && settled:
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("%s fits better than the GP alone: ΔBIC = %.1f, its amplitude %sσ from zero; but a free GP chose this period, and against that only very strong evidence (ΔBIC ≤ −10) counts", what, dBIC, sn)
	case dBIC < -2 && snr >= 3 && !indicatorsVary:
		frac := -dBIC / 10
		e.Points, e.Weight = TowardPlanet, -tr.d.w.ModelComparison.Planet*frac
		e.Reason = fmt.Sprintf("%s fits better than the GP alone: ΔBIC = %.1f, its amplitude %sσ from zero; evidence short of very strong (ΔBIC ≤ −10), so the test counts %.0f%%", what, dBIC, sn, 100*frac)
	case dBIC >= 0:
		e.Points, e.Weight = TowardActivity, tr.d.w.ModelComparison.Activity
		e.Reason = fmt.Sprintf("%s fits no better than the GP alone at the period (ΔBIC = %+.1f): activity at the period explains the signal", what, dBIC)
	default:
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("%s and the GP alone at the period explain the signal about equally (ΔBIC = %.1f, its amplitude %sσ from zero)", what, dBIC, sn)
		if indicatorsVary {
			e.Reason += "; the indicators vary at the period"
		}
	}
}

// redNoiseCheck asks of a slow signal the model comparison pulls toward
// a planet (slowBound: no rotation period known, the signal beyond every
// period the rotation kernel may take) whether the Keplerian is still
// needed when the activity model also has red noise: a damped random walk
// (gp.Exponential) of free amplitude and time scale, from the longest
// period the rotation kernel may take to ten data spans, beside the
// rotation kernel, in the null model and beside the Keplerian alike. The
// rotation kernel has nowhere to put variation slower than its coherence
// or without a period, such as slow drifts of the star or the instrument
// that no indicator shares; a periodogram finds their strongest Fourier
// component, and against the rotation kernel alone it then needs a
// Keplerian as much as an orbit does. A damped random walk has the
// spectrum of such noise but rough paths: it cannot take a smooth periodic
// signal, whatever its period, while it absorbs one picked out of red noise
// (docs/methods.md §14.10). The test's pull is cut to what the evidence
// against red noise supports, by the rule of the comparison itself (full
// at ΔBIC ≤ −10, in proportion between −2 and −10, none above −2). The
// check only ever lowers the pull toward a planet: red noise is not
// activity, and a signal it explains is not thereby activity-like.
//
// (Run on every signal pulled toward a planet, with a known rotation too,
// the check cost published planets whose slow companions it put back as
// red noise; docs/methods.md §14.10, fifteenth pass.)
func (tr *trial) redNoiseCheck(e *Evidence, m *gpModel, r0, r1 gpResult, extra float64) {
	d := tr.d
	if !r0.ok || !r1.ok || len(r0.theta) != m.nParams() || len(r1.theta) != m.nParams() {
		return
	}
	mr := *m
	mr.redNoise, mr.freq = true, 0
	T := mr.span()
	with := func(theta []float64, amp, tau float64) []float64 {
		return append(append([]float64(nil), theta...), amp, tau)
	}
	sc := math.Max(m.scale, 1e-12)
	// The other signals slower than any rotation the model allows go back
	// into the data, except those already found to need a Keplerian
	// against red noise: several slow peaks found one after the other in
	// red noise are its Fourier components, and judged each with the
	// others taken out as orbits, each looks like one. Faster signals
	// stay out, as the comparison took them.
	mr.y = append([]float64(nil), m.y...)
	for j, c := range d.comps {
		if j != tr.k && !d.orbitLike[j] && 1/d.freqs[j] > mr.rnTauLo() {
			for i := range mr.y {
				mr.y[i] += c[i]
			}
		}
	}
	n0 := mr.fit([][]float64{with(r0.theta, 0.3*sc, math.Max(T/3, 2*mr.rnTauLo())), with(r0.theta, 0.3*sc, math.Max(30, 1.2*mr.rnTauLo()))})
	mr1 := mr
	mr1.freq = tr.f
	starts := [][]float64{with(r1.theta, 0.05*sc, math.Max(T/3, 2*mr.rnTauLo()))}
	if n0.ok {
		// The null's own optimum is a start too, so that the pair stays
		// nested: the Keplerian can only add to the likelihood.
		starts = append(starts, with(r1.theta, n0.theta[len(n0.theta)-2], n0.theta[len(n0.theta)-1]), n0.theta)
	}
	n1 := mr1.fit(starts)
	if !n0.ok || !n1.ok || d.ctx.Err() != nil {
		return
	}
	l0, l1 := n0.lnL, math.Max(n1.lnL, n0.lnL)
	dBIC := -2*(l1-l0) + extra*math.Log(float64(len(d.t)))
	K, kErr := sinusoidAmplitude(n1.beta, n1.covBeta)
	snr := K / kErr
	tau := n0.theta[len(n0.theta)-1]
	what := fmt.Sprintf("against the same activity model with red noise beside it (a damped random walk, time scale %.3g d in the fit without the Keplerian)", tau)
	var frac float64
	switch {
	case dBIC <= -10 && snr >= 3:
		e.Reason += fmt.Sprintf("; %s the Keplerian is still needed: ΔBIC = %.1f", what, dBIC)
		d.orbitLike[tr.k] = true
		return
	case dBIC < -2 && snr >= 3:
		frac = -dBIC / 10
	}
	if limit := tr.d.w.ModelComparison.Planet * frac; frac > 0 {
		if -e.Weight > limit {
			e.Weight = -limit
		}
		e.Reason += fmt.Sprintf("; but %s the Keplerian improves the fit less: ΔBIC = %.1f, its amplitude %.1fσ from zero, so the test counts %.0f%% of a full pull", what, dBIC, snr, -100*e.Weight/tr.d.w.ModelComparison.Planet)
		return
	}
	e.Points, e.Weight = TowardNeither, 0
	e.Reason += fmt.Sprintf("; but %s a Keplerian is not needed (ΔBIC = %+.1f, its amplitude %.1fσ from zero): slow red noise, which no indicator need share, explains the signal as well as an orbit", what, dBIC, snr)
}

// heldAwayFit fits m with a sinusoid at frequency f and the GP's period
// held away from the signal's windows (signalWindows, ±heldAwayLn),
// over the rest of m's period range, and returns the best fit; alt, a fit
// of the same model with a free GP period, counts when its period falls
// outside the windows. ok is false when no part of the range is left or
// no fit converged.
func heldAwayFit(m *gpModel, f float64, alt gpResult) gpResult {
	lo, hi := m.pLo, m.pHi
	type box struct{ lo, hi float64 }
	boxes := []box{{lo, hi}}
	for _, c := range signalWindows(f) {
		a, b := c*math.Exp(-heldAwayLn), c*math.Exp(heldAwayLn)
		var next []box
		for _, x := range boxes {
			if b <= x.lo || a >= x.hi {
				next = append(next, x)
				continue
			}
			if a > x.lo {
				next = append(next, box{x.lo, a})
			}
			if b < x.hi {
				next = append(next, box{b, x.hi})
			}
		}
		boxes = next
	}
	best := gpResult{lnL: math.Inf(-1)}
	for _, x := range boxes {
		if x.hi < 1.1*x.lo {
			continue
		}
		mb := *m
		mb.freq = f
		mb.pLo, mb.pHi, mb.lnPMu, mb.lnPSigma = x.lo, x.hi, 0, 0
		// Two starts, a third and two thirds of the way in ln P.
		r := mb.fit([][]float64{mb.start(x.lo * math.Pow(x.hi/x.lo, 1.0/3)), mb.start(x.lo * math.Pow(x.hi/x.lo, 2.0/3))})
		if r.ok && r.lnL > best.lnL {
			best = r
		}
	}
	if alt.ok && alt.lnL > best.lnL && !onSignal(alt.period, f) {
		best = alt
	}
	return best
}

// onSignal reports whether a rotation kernel of period p has a mode on a
// signal of frequency f: p within heldAwayLn (in ln P) of one of the
// signal's windows (signalWindows).
func onSignal(p, f float64) bool { return signalWindow(p, f) >= 0 }

// aliasNote returns, for a kernel period p on the signal of frequency f
// only by the signal's 1-day alias, the words that say so; else "".
func aliasNote(p, f float64) string {
	if signalWindow(p, f) >= 3 { // past the period, its double and its half
		return ", by the 1-day alias of the period"
	}
	return ""
}

// signalWindow returns the index in signalWindows(f) of the first window
// within heldAwayLn (in ln P) of the kernel period p, or −1.
func signalWindow(p, f float64) int {
	for i, c := range signalWindows(f) {
		if math.Abs(math.Log(p/c)) < heldAwayLn {
			return i
		}
	}
	return -1
}

// onSignalFit fits m alone (no sinusoid) with the GP's period held within
// heldAwayLn of one of the signal's windows (signalWindows), inside m's
// period range, and returns the best fit; alt, a fit of the same model
// with a free period, counts when its period falls in a window. ok is
// false when no window meets the range or no fit converged.
func onSignalFit(m *gpModel, f float64, alt gpResult) gpResult {
	best := gpResult{lnL: math.Inf(-1)}
	for _, c := range signalWindows(f) {
		lo, hi := math.Max(m.pLo, c*math.Exp(-heldAwayLn)), math.Min(m.pHi, c*math.Exp(heldAwayLn))
		if hi < 1.1*lo {
			continue
		}
		mb := *m
		mb.freq = 0
		mb.pLo, mb.pHi, mb.lnPMu, mb.lnPSigma = lo, hi, 0, 0
		r := mb.fit([][]float64{mb.start(math.Max(lo, math.Min(hi, c)))})
		if r.ok && r.lnL > best.lnL {
			best = r
		}
	}
	if alt.ok && alt.lnL > best.lnL && onSignal(alt.period, f) {
		best = alt
	}
	return best
}
