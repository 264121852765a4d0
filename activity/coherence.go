package activity

import (
	"fmt"
	"math"
	"sort"
)

// seasons splits the epochs (sorted by time) into observing seasons at gaps
// longer than 60 days (common practice for ground-based visibility), or,
// with fewer than two seasons of at least minPer epochs, into two halves.
// It returns the season index of every epoch, the number of seasons and
// how they were made.
func seasons(t []float64, minPer int) ([]int, int, string) {
	idx := make([]int, len(t))
	k := 0
	for i := 1; i < len(t); i++ {
		if t[i]-t[i-1] > 60 {
			k++
		}
		idx[i] = k
	}
	counts := make([]int, k+1)
	for _, s := range idx {
		counts[s]++
	}
	good := 0
	for _, c := range counts {
		if c >= minPer {
			good++
		}
	}
	if good >= 2 {
		// Merge seasons too small to fit into their predecessor.
		remap := make([]int, k+1)
		cur := -1
		for s, c := range counts {
			if c >= minPer || cur < 0 {
				cur++
			}
			remap[s] = cur
		}
		// A small first season merged forward keeps index 0.
		for i := range idx {
			idx[i] = remap[idx[i]]
		}
		n := cur + 1
		// A trailing small season merged backwards may leave the last one
		// small; it is still fitted with its neighbour's epochs.
		return idx, n, "observing seasons"
	}
	half := len(t) / 2
	for i := range idx {
		idx[i] = 0
		if i >= half {
			idx[i] = 1
		}
	}
	return idx, 2, "halves"
}

// seasonCoherence is test 5a: the signal's amplitude and phase fitted
// season by season (or in halves), and a χ² test of their constancy.
func (tr *trial) seasonCoherence() {
	d := tr.d
	minPer := max(10, 2*(2+d.ninst)+2)
	if len(d.t) < 2*minPer {
		tr.skipped("season_coherence", fmt.Sprintf("%d epochs are too few to fit the signal in two parts (need %d)", len(d.t), 2*minPer))
		return
	}
	sidx, ns, how := seasons(d.t, minPer)
	resid := make([]float64, len(d.t))
	for i := range resid {
		resid[i] = tr.own[i] - tr.comp[i]
	}
	beta := redNoiseBeta(d.t, resid, d.err, 1/tr.f)
	type part struct {
		v   [2]float64
		inv [2][2]float64
		snr float64
	}
	var parts []part
	// With the model comparison's GP fitted, each part's sinusoid is
	// fitted by generalised least squares with the GP's covariance (its
	// parameters held): the activity the GP describes is then noise whose
	// leakage into a short season the errors carry, which the red-noise
	// factor β, one number for the whole series, under-states within a
	// season (docs/methods.md §14.11). Without it, the errors are the
	// white ones times β.
	noiseModel := tr.det.gp != nil && tr.det.gpFit != nil && tr.det.gpFit.ok
	for s := 0; s < ns; s++ {
		var ts, ys, es []float64
		var gs []string
		var gi []int
		for i := range d.t {
			if sidx[i] == s {
				ts, ys, es = append(ts, d.t[i]), append(ys, tr.own[i]), append(es, d.err[i])
				gs = append(gs, d.s.Instrument[i])
				gi = append(gi, d.inst[i])
			}
		}
		if len(ts) < minPer {
			continue
		}
		g, ng := groupIndex(gs)
		fit, err := fitCurves(ts, ys, es, g, ng, []float64{tr.f}, []orbitShape{tr.shape}, d.t0)
		if err != nil {
			continue
		}
		c := fit.CovAB[0]
		for a := 0; a < 2; a++ {
			for b := 0; b < 2; b++ {
				c[a][b] *= beta * beta
			}
		}
		if noiseModel {
			ab, cab, ok := tr.gpPartFit(ts, ys, es, g, ng, gi)
			if !ok {
				continue
			}
			fit.A[0], fit.B[0], c = ab[0], ab[1], cab
		}
		fit.CovAB[0] = c
		det := c[0][0]*c[1][1] - c[0][1]*c[1][0]
		if !(det > 0) {
			continue
		}
		a, ae := fit.amplitude(0)
		parts = append(parts, part{v: [2]float64{fit.A[0], fit.B[0]}, inv: [2][2]float64{{c[1][1] / det, -c[0][1] / det}, {-c[1][0] / det, c[0][0] / det}}, snr: a / ae})
		ph := fit.phase(0)
		phErr := math.NaN()
		if a > 0 {
			// First-order error of atan2(B, A).
			phErr = math.Sqrt(math.Max(0, fit.B[0]*fit.B[0]*c[0][0]+fit.A[0]*fit.A[0]*c[1][1]-2*fit.A[0]*fit.B[0]*c[0][1])) / (a * a)
		}
		tr.det.seasons = append(tr.det.seasons, seasonPoint{tMid: 0.5 * (ts[0] + ts[len(ts)-1]), amp: a, ampErr: ae, phase: ph, phaseErr: phErr, n: len(ts)})
	}
	if len(parts) < 2 {
		tr.skipped("season_coherence", "fewer than two parts of the data could be fitted")
		return
	}
	// Weighted mean of the (A, B) vectors and the χ² about it.
	var sinv [2][2]float64
	var sv [2]float64
	for _, p := range parts {
		for a := 0; a < 2; a++ {
			for b := 0; b < 2; b++ {
				sinv[a][b] += p.inv[a][b]
				sv[a] += p.inv[a][b] * p.v[b]
			}
		}
	}
	det := sinv[0][0]*sinv[1][1] - sinv[0][1]*sinv[1][0]
	mean := [2]float64{(sinv[1][1]*sv[0] - sinv[0][1]*sv[1]) / det, (-sinv[1][0]*sv[0] + sinv[0][0]*sv[1]) / det}
	chi2 := 0.0
	minSNR := math.Inf(1)
	for _, p := range parts {
		r := [2]float64{p.v[0] - mean[0], p.v[1] - mean[1]}
		chi2 += r[0]*(p.inv[0][0]*r[0]+p.inv[0][1]*r[1]) + r[1]*(p.inv[1][0]*r[0]+p.inv[1][1]*r[1])
		minSNR = math.Min(minSNR, p.snr)
	}
	dof := 2 * (len(parts) - 1)
	pval := chi2Survival(chi2, dof)
	const alpha = 0.01
	e := Evidence{Name: "season_coherence", Value: Num(pval), Threshold: alpha}
	switch {
	case pval < alpha:
		e.Points, e.Weight = TowardActivity, tr.d.w.SeasonCoherence.Activity
		errs := fmt.Sprintf("errors scaled by a red-noise factor %.2f", beta)
		if noiseModel {
			errs = "errors from the GP activity model of the model comparison"
		}
		e.Reason = fmt.Sprintf("amplitude and phase change between %d %s (χ² = %.1f for %d dof, p = %.2g; %s)", len(parts), how, chi2, dof, pval, errs)
	case minSNR >= 3:
		e.Points, e.Weight = TowardPlanet, -tr.d.w.SeasonCoherence.Planet
		e.Reason = fmt.Sprintf("amplitude and phase agree across %d %s (χ² = %.1f for %d dof, p = %.2g; each part at ≥ %.1fσ)", len(parts), how, chi2, dof, pval, minSNR)
	default:
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("amplitude and phase agree across %d %s (p = %.2g), but the signal is only %.1fσ in the weakest part: a weak test", len(parts), how, pval, minSNR)
	}
	tr.add(e)
}

// gpPartFit fits the signal's sinusoid (with one offset per instrument
// group g of ng) to one part of the data, times ts, values ys, errors es
// and global instrument indices gi, by generalised least squares with the
// covariance of the model comparison's GP (its MAP parameters, jitters
// included). It returns the cosine and sine amplitudes and their
// covariance; ok is false when the covariance cannot be factorised.
func (tr *trial) gpPartFit(ts, ys, es []float64, g []int, ng int, gi []int) (ab [2]float64, cov [2][2]float64, ok bool) {
	m, r := tr.det.gp, tr.det.gpFit
	variance := make([]float64, len(es))
	for i, e := range es {
		variance[i] = e * e
	}
	sol, err := m.noise(r.theta).Factor(ts, variance, gi)
	if err != nil || sol == nil {
		return ab, cov, false
	}
	// The design of the GP model on this part: its offsets and the signal
	// at its frequency (a sinusoid, or its eccentric orbit's shape).
	part := gpModel{t: ts, inst: g, ninst: ng, freq: tr.f, shape: tr.shape, t0: tr.d.t0}
	cols := part.design()
	beta, cb, _, ok := glsProfile(sol, cols, ys, true)
	if !ok || cb == nil {
		return ab, cov, false
	}
	j := ng
	ab = [2]float64{beta[j], beta[j+1]}
	cov = [2][2]float64{{cb.At(j, j), cb.At(j, j+1)}, {cb.At(j+1, j), cb.At(j+1, j+1)}}
	return ab, cov, true
}

// stackedGrowth is test 5b: the growth of the signal's power as epochs are
// added in time order (the stacked periodogram of Mortier & Collier Cameron
// 2017, A&A 601, A110, with GLS power), compared with simulations of a
// strictly periodic signal of the fitted amplitude on the same epochs, with
// the data's own residuals as noise.
func (tr *trial) stackedGrowth() {
	d := tr.d
	n := len(d.t)
	n0 := max(MinEpochs, n/5)
	if n-n0 < 10 {
		tr.skipped("stacked_growth", fmt.Sprintf("%d epochs are too few to follow the power's growth", n))
		return
	}
	// The simulations add to the fitted sinusoid the residuals about it,
	// shifted cyclically in time order: they keep the residuals' own
	// correlated (activity) noise, which white noise would not (the
	// "prayer-bead" resampling of transit work; common practice).
	resid := make([]float64, n)
	for i := range resid {
		resid[i] = tr.own[i] - tr.comp[i]
	}
	obs := stackedPower(d.t, tr.own, d.err, tr.f, n0)
	nsim := min(d.opts.Permutations, n-1)
	sims := make([][]float64, nsim)
	y := make([]float64, n)
	for k := range sims {
		shift := 1 + k*(n-1)/nsim
		for i := range y {
			y[i] = tr.comp[i] + resid[(i+shift)%n]
		}
		sims[k] = stackedPower(d.t, y, d.err, tr.f, n0)
	}
	// Distance of a curve from the simulations' median, in units of their
	// spread, averaged over n.
	m := len(obs)
	med, spread := make([]float64, m), make([]float64, m)
	col := make([]float64, nsim)
	for j := 0; j < m; j++ {
		for k := range sims {
			col[k] = sims[k][j]
		}
		sort.Float64s(col)
		med[j] = col[nsim/2]
		spread[j] = math.Max((col[nsim*84/100]-col[nsim*16/100])/2, 1e-6)
	}
	dist := func(c []float64) float64 {
		s := 0.0
		for j := range c {
			z := (c[j] - med[j]) / spread[j]
			s += z * z
		}
		return s / float64(len(c))
	}
	sc := &stackedCurve{n0: n0, obs: obs, med: med, lo: make([]float64, m), hi: make([]float64, m)}
	for j := 0; j < m; j++ {
		for k := range sims {
			col[k] = sims[k][j]
		}
		sort.Float64s(col)
		sc.lo[j], sc.hi[j] = col[nsim*16/100], col[nsim*84/100]
	}
	tr.det.stacked = sc
	dobs := dist(obs)
	exceed := 0
	for _, c := range sims {
		if dist(c) >= dobs {
			exceed++
		}
	}
	pval := float64(exceed+1) / float64(nsim+1)
	const alpha = 0.01
	e := Evidence{Name: "stacked_growth", Value: Num(pval), Threshold: alpha}
	if exceed == 0 {
		e.Bound = "<"
	}
	snr := tr.amp / tr.ampErr
	switch {
	case pval < alpha:
		e.Points, e.Weight = TowardActivity, tr.d.w.StackedGrowth.Activity
		e.Reason = fmt.Sprintf("the power grows unlike a strictly periodic signal as epochs are added (Monte Carlo %s)", pText(pval, exceed == 0))
	case snr >= 5:
		e.Points, e.Weight = TowardPlanet, -tr.d.w.StackedGrowth.Planet
		e.Reason = fmt.Sprintf("the power grows as a strictly periodic signal's would as epochs are added (Monte Carlo %s)", pText(pval, exceed == 0))
	default:
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("the power's growth is consistent with a periodic signal (%s), but at %.1fσ the test is weak", pText(pval, exceed == 0), snr)
	}
	tr.add(e)
}

// stackedPower returns the GLS power (one floating mean) at frequency f of
// the first n epochs, for n = n0 … len(t), updating weighted sums as each
// epoch is added (O(N) in all).
func stackedPower(t, y, sigma []float64, f float64, n0 int) []float64 {
	var W, Y, C, S, YY, YC, YS, CC, SS, CS float64
	out := make([]float64, 0, len(t)-n0+1)
	for i := range t {
		w := 1 / (sigma[i] * sigma[i])
		s, c := math.Sincos(2 * math.Pi * f * (t[i] - t[0]))
		W += w
		Y += w * y[i]
		C += w * c
		S += w * s
		YY += w * y[i] * y[i]
		YC += w * y[i] * c
		YS += w * y[i] * s
		CC += w * c * c
		SS += w * s * s
		CS += w * c * s
		if i+1 < n0 {
			continue
		}
		// Zechmeister & Kürster (2009) sums, normalised by W.
		y0, c0, s0 := Y/W, C/W, S/W
		yy := YY/W - y0*y0
		yc := YC/W - y0*c0
		ys := YS/W - y0*s0
		cc := CC/W - c0*c0
		ss := SS/W - s0*s0
		cs := CS/W - c0*s0
		den := cc*ss - cs*cs
		p := 0.0
		if den > 0 && yy > 0 {
			p = (ss*yc*yc + cc*ys*ys - 2*cs*yc*ys) / (yy * den)
		}
		out = append(out, p)
	}
	return out
}

// redNoiseBeta returns the factor by which correlated noise inflates the
// error of a mean over time scales near period: residuals are averaged in
// bins of width period/4, period/2 and period, and the scatter of the bin
// means is compared with the white-noise expectation (the β factor of
// Pont, Zucker & Queloz 2006, MNRAS 373, 231; from memory). It is at least 1.
func redNoiseBeta(t, resid, sigma []float64, period float64) float64 {
	sd := stddev(resid)
	if !(sd > 0) || len(t) < 8 {
		return 1
	}
	var betas []float64
	for _, w := range []float64{period / 4, period / 2, period} {
		var means []float64
		for i := 0; i < len(t); {
			j := i
			s := 0.0
			for j < len(t) && t[j]-t[i] < w {
				s += resid[j]
				j++
			}
			means = append(means, s/float64(j-i))
			i = j
		}
		m := len(means)
		if m < 4 {
			continue
		}
		nbar := float64(len(t)) / float64(m)
		if nbar < 2 {
			continue
		}
		want := sd / math.Sqrt(nbar) * math.Sqrt(float64(m)/float64(m-1))
		betas = append(betas, stddev(means)/want)
	}
	if len(betas) == 0 {
		return 1
	}
	sort.Float64s(betas)
	return math.Max(1, betas[len(betas)/2])
}

// fitBeta is redNoiseBeta for the residuals of a sinusoid fit to y (NaN
// values skipped).
func fitBeta(t, y, sigma []float64, fit *sineFit, period float64) float64 {
	var ts, rs, es []float64
	for i := range t {
		if isFinite(y[i]) {
			ts = append(ts, t[i])
			rs = append(rs, y[i]-fit.model(i, t[i]))
			es = append(es, sigma[i])
		}
	}
	return redNoiseBeta(ts, rs, es, period)
}
