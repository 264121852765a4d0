package photometry

import (
	"fmt"
	"math"
	"strings"

	"spotsift/gp"
	"spotsift/mapfit"
	"spotsift/rvfit"
)

// Method names of the rotation estimates.
const (
	MethodGLS = "GLS periodogram"
	MethodACF = "autocorrelation (McQuillan et al. 2013)"
	MethodGP  = "GP fit, rotation kernel"
)

// Estimate is one method's rotation period.
type Estimate struct {
	Method string `json:"method"`
	// Period and Err in days; NaN when the method found nothing.
	Period float64 `json:"period"`
	Err    float64 `json:"err"`
	// Detected is whether the method sees a rotation signal by its own
	// criterion (GLS: false-alarm probability below 10⁻³ and the peak 20
	// times the median power around it; ACF: local peak height above 0.1
	// and a peak higher than those of 95% of red-noise surrogates with the
	// light curve's correlation time, see ACF.FAP, and where the ACF reaches
	// 2.5 periods a second peak near twice the period; GP: the rotation kernel
	// needed over red noise, ΔBIC > 10, with its amplitude at 3σ).
	Detected bool `json:"detected"`
	// Note says what the criterion gave (the FAP, the peak height...).
	Note string `json:"note,omitempty"`
}

// Rotation is the rotation period from a light curve.
type Rotation struct {
	// Detected is false when no method sees rotation: Period and Err are
	// then NaN and Reason says why.
	Detected bool `json:"detected"`
	// Period and Err (days) of the adopted estimate, Method its method.
	Period float64 `json:"period"`
	Err    float64 `json:"err"`
	Method string  `json:"method"`
	// Estimates holds every method's result.
	Estimates []Estimate `json:"estimates"`
	// Agreement says whether the methods agree, directly or at a factor of
	// two (P against P/2).
	Agreement string `json:"agreement"`
	// Reason explains a light curve without detected rotation.
	Reason string `json:"reason,omitempty"`
	// Amplitude is the semi-amplitude (relative flux) of the best sinusoid
	// at the adopted period; AmplitudeSNR its ratio to its error.
	Amplitude    float64 `json:"amplitude"`
	AmplitudeSNR float64 `json:"amplitude_snr"`

	// Periodogram and ACF are kept for figures (not written to JSON).
	Periodogram *rvfit.Periodogram `json:"-"`
	ACF         *ACF               `json:"-"`
}

// RotationOptions controls EstimateRotation. The zero value (or nil)
// searches from 0.5 d (or four times the median cadence) to half the
// baseline.
type RotationOptions struct {
	// PMin and PMax bound the periods searched, in days. Zero: 0.5 d and
	// half the baseline.
	PMin, PMax float64
	// SkipGP leaves out the Gaussian-process fit (the slow part).
	SkipGP bool
	// Seed seeds the red-noise surrogates of the ACF's significance.
	Seed uint64
}

// glsFAP is the false-alarm probability below which a GLS peak is a
// detection (common practice), and glsPeakOverBackground how far it must
// stand above the median power around it.
const (
	glsFAP                = 1e-3
	glsPeakOverBackground = 20
)

// background returns the median GLS power between frequencies f/2 and 2f.
func background(pow []float64, g rvfit.Grid, f float64) float64 {
	lo, hi := g.Index(f/2), g.Index(2*f)
	return median(pow[lo : hi+1])
}

// EstimateRotation measures the rotation period of a light curve by three
// methods — the GLS periodogram (Zechmeister & Kürster 2009, one offset
// per sector), the autocorrelation function (McQuillan, Aigrain & Mazeh
// 2013) and a maximum a posteriori GP fit with the two-mode rotation
// kernel plus red noise (gp.RotationSHO) — and adopts one: the GP fit
// when it is needed over red noise and confirms a candidate period of the
// others (directly or at twice it), else the ACF when it is significant
// against red noise and the light curve covers at least half its span
// (the method was made for near-continuous space photometry), else the
// GLS peak, else the ACF. With no detection the result says so.
func EstimateRotation(lc *LightCurve, opts *RotationOptions) (*Rotation, error) {
	if err := lc.Validate(); err != nil {
		return nil, err
	}
	var o RotationOptions
	if opts != nil {
		o = *opts
	}
	n := lc.Len()
	T := lc.Time[n-1] - lc.Time[0]
	if o.PMin == 0 {
		// Four samples per period at least, else the periodogram's aliases
		// above the Nyquist frequency of a regular cadence win.
		o.PMin = math.Max(0.5, 4*medianStep(lc.Time))
	}
	if o.PMax == 0 {
		o.PMax = T / 2
	}
	if !(o.PMin > 0) || !(o.PMax > o.PMin) {
		return nil, fmt.Errorf("%w: %s: periods searched %g to %g d over a baseline of %g d", ErrBadLightCurve, lc.Name, o.PMin, o.PMax, T)
	}
	y := make([]float64, n)
	w := make([]float64, n)
	for i := range y {
		y[i] = lc.Flux[i] - 1
		w[i] = 1 / (lc.Err[i] * lc.Err[i])
	}
	rot := &Rotation{Period: math.NaN(), Err: math.NaN(), Amplitude: math.NaN(), AmplitudeSNR: math.NaN()}

	// GLS with one offset per sector.
	g := rvfit.Grid{FMin: 1 / o.PMax, DF: 1 / (5 * T)}
	g.N = int((1/o.PMin-g.FMin)/g.DF) + 1
	var sectors []string
	if lc.Sector != nil {
		sectors = lc.Sector
	}
	est := Estimate{Method: MethodGLS, Period: math.NaN(), Err: math.NaN()}
	glsCand := false
	pg, err := rvfit.GLS(lc.Time, y, lc.Err, g, &rvfit.GLSOptions{Instrument: sectors, Fast: true})
	if err == nil {
		rot.Periodogram = pg
		k := argmax(pg.Power)
		fap := rvfit.BaluevFAP(pg.Power[k], pg.NObs, pg.NOffsets, g.FMax(), pg.TEff)
		f := refine(pg.Power, g, k)
		// The half width at half maximum of the peak as the frequency error
		// (conservative; common practice).
		lo, hi := k, k
		for lo > 0 && pg.Power[lo] > 0.5*pg.Power[k] {
			lo--
		}
		for hi < g.N-1 && pg.Power[hi] > 0.5*pg.Power[k] {
			hi++
		}
		sf := math.Max(0.5*float64(hi-lo)*g.DF, g.DF)
		est.Period, est.Err = 1/f, sf/(f*f)
		// The false-alarm probability assumes white noise; granulation and
		// other red noise raise the whole low-frequency periodogram, so the
		// peak must also stand above its surroundings: at least 20 times
		// the median power between half and twice its period (a χ²₂ power
		// exceeds 20 times its median with probability 2⁻²⁰; common
		// practice for peaks over a background).
		bg := background(pg.Power, g, f)
		glsCand = fap < glsFAP
		est.Detected = glsCand && pg.Power[k] >= glsPeakOverBackground*bg
		est.Note = fmt.Sprintf("false-alarm probability %.2g, peak %.0f times the median power around it", fap, pg.Power[k]/bg)
	} else {
		est.Note = err.Error()
	}
	rot.Estimates = append(rot.Estimates, est)

	// ACF on a uniform grid: a twentieth of the shortest period, no finer
	// than twice the median cadence (cells as fine as the cadence beat
	// with it and leave empty cells at a regular spacing, which the ACF
	// takes for a period), at most 2¹⁸ cells.
	dt := math.Max(o.PMin/20, 2*medianStep(lc.Time))
	dt = math.Max(dt, T/(1<<18))
	acf := ACFRotation(lc.Time, y, w, dt, math.Min(T/2, 2*o.PMax), o.PMin)
	rot.ACF = acf
	ae := Estimate{Method: MethodACF, Period: acf.Period, Err: acf.Err}
	if !math.IsNaN(acf.Period) {
		acf.significance(o.Seed)
		// A rotation repeats: where the ACF reaches 2.5 periods, a second
		// peak near twice the period is required too.
		repeats := len(acf.Peaks) >= 2 || acf.Lag[len(acf.Lag)-1] < 2.5*acf.Period
		ae.Detected = acf.Period <= o.PMax*1.1 && acf.FAP < acfFAP && repeats
		ae.Note = fmt.Sprintf("local peak height %.2f, %d peaks, %.0f%% of the grid filled; false-alarm probability %.2g against red noise (τ = %.2g d, %.0f%% of the variance)", acf.Height, len(acf.Peaks), 100*acf.Fill, acf.FAP, acf.NoiseTau, 100*acf.NoiseFrac)
		if acf.Harmonic {
			ae.Note += "; the second peak is higher: two dips per turn"
		}
	} else {
		ae.Note = fmt.Sprintf("no peak with local height above %.1f", acfMinHeight)
	}
	rot.Estimates = append(rot.Estimates, ae)

	// GP fit, started from the other methods' candidate periods (detected
	// or not: the GP's own comparison with red noise decides) and their
	// doubles.
	candidate := func(e Estimate) (Estimate, bool) {
		if e.Detected {
			return e, true
		}
		// A GLS peak significant against white noise, or any ACF peak.
		ok := !math.IsNaN(e.Period) && (e.Method == MethodACF || e.Method == MethodGLS && glsCand)
		e.Detected = ok
		return e, ok
	}
	var starts []float64
	for _, e := range rot.Estimates {
		if c, ok := candidate(e); ok {
			starts = append(starts, c.Period, 2*c.Period)
		}
	}
	if !o.SkipGP && len(starts) > 0 {
		rot.Estimates = append(rot.Estimates, gpRotation(lc, starts, o.PMin, o.PMax))
	}

	// Adoption.
	ge := find(rot.Estimates, MethodGLS)
	gpe := find(rot.Estimates, MethodGP)
	gc, _ := candidate(*ge)
	ac, _ := candidate(ae)
	// The GP first when it confirms a candidate, directly or at twice its
	// period: its kernel models the modes at P and P/2 together, so it
	// tells two dips per turn (a P/2 candidate) from a curve that
	// repeats at P/2; the ACF's harmonic check only compares peak heights.
	double := func(e Estimate) Estimate {
		e.Period, e.Err = 2*e.Period, 2*e.Err
		return e
	}
	switch {
	case gpe != nil && gpe.Detected && (consistent(*gpe, ac) || consistent(*gpe, gc) || consistent(*gpe, double(ac)) || consistent(*gpe, double(gc))):
		rot.adopt(*gpe)
	case ae.Detected && acf.Fill >= 0.5:
		rot.adopt(ae)
	case ge.Detected:
		rot.adopt(*ge)
	case ae.Detected:
		rot.adopt(ae)
	default:
		rot.Reason = fmt.Sprintf("no rotation detected: %s; %s", ge.Note, ae.Note)
		rot.Agreement = "no method detects rotation"
		return rot, nil
	}
	rot.Agreement = agreement(rot.Estimates, rot.Period, rot.Err)
	if fit, err := rvfit.FitSine(lc.Time, y, lc.Err, sectors, 1/rot.Period); err == nil {
		rot.Amplitude = fit.Amplitude()
		// The amplitude's error for white noise: σ_K ≈ √(2/Σw) (common
		// practice).
		var sw float64
		for _, v := range w {
			sw += v
		}
		rot.AmplitudeSNR = rot.Amplitude / math.Sqrt(2/sw)
	}
	return rot, nil
}

func (r *Rotation) adopt(e Estimate) {
	r.Detected, r.Period, r.Err, r.Method = true, e.Period, e.Err, e.Method
}

func find(est []Estimate, method string) *Estimate {
	for i := range est {
		if est[i].Method == method {
			return &est[i]
		}
	}
	return nil
}

// consistent reports whether two detected estimates agree within 2σ or
// 10% (directly, not as harmonics).
func consistent(a, b Estimate) bool {
	if !a.Detected || !b.Detected {
		return false
	}
	return math.Abs(a.Period-b.Period) <= math.Max(2*math.Hypot(a.Err, b.Err), 0.1*b.Period)
}

// agreement describes how the detected estimates compare with the adopted
// period: within 2σ (or 10%), at a factor of two, or not at all.
func agreement(est []Estimate, p, perr float64) string {
	var agree, harm, off, none []string
	ad := Estimate{Period: p, Err: perr, Detected: true}
	for _, e := range est {
		switch {
		case !e.Detected:
			none = append(none, e.Method)
		case consistent(e, ad):
			agree = append(agree, e.Method)
		case consistent(Estimate{Period: 2 * e.Period, Err: 2 * e.Err, Detected: true}, ad):
			harm = append(harm, e.Method+" at P/2")
		case consistent(Estimate{Period: e.Period / 2, Err: e.Err / 2, Detected: true}, ad):
			harm = append(harm, e.Method+" at 2P")
		default:
			off = append(off, fmt.Sprintf("%s (%.3g d)", e.Method, e.Period))
		}
	}
	s := fmt.Sprintf("%d of %d methods agree within 2σ or 10%%", len(agree), len(est))
	if len(harm) > 0 {
		s += "; harmonic: " + strings.Join(harm, ", ")
	}
	if len(off) > 0 {
		s += "; disagree: " + strings.Join(off, ", ")
	}
	if len(none) > 0 {
		s += "; no detection: " + strings.Join(none, ", ")
	}
	return s
}

// gpRotation fits the light curve, binned to a twentieth of the shortest
// starting period and cut to at most 1000 bins (the stretch of that many
// bins with the most data), with two Gaussian-process models by MAP
// through mapfit: red noise alone (redNoiseKernel plus a white jitter),
// and the same red noise plus the two-mode rotation kernel
// (gp.RotationSHO, modes at P and P/2), started from each candidate
// period. The rotation is detected when it is needed over and above the
// red noise: ΔBIC = 2Δln L − 5 ln N > 10 for its five parameters
// (very strong evidence, Kass & Raftery 1995), and its amplitude is 3σ.
// The red-noise term keeps the rotation kernel to the rotation: without
// it, the slow changes of the spot coverage pull the P mode to the
// longest period allowed and leave the rotation to the P/2 mode.
//
// Priors are log-uniform over broad boxes: the period over the search
// range, the quality factors over [0.05, 100] and [0.001, 100], the
// half-period mode's variance over [0.001, 1] of the rotation mode's (no
// stronger, so that P and P/2 stay distinct; as in celerite2's rotation
// term, from memory), the amplitudes and the jitter over 10⁻⁴ to 20 times
// the binned scatter (common practice). The period's error is the
// Laplace approximation's.
func gpRotation(lc *LightCurve, starts []float64, pMin, pMax float64) Estimate {
	e := Estimate{Method: MethodGP, Period: math.NaN(), Err: math.NaN()}
	pShort := math.Inf(1)
	for _, p := range starts {
		pShort = math.Min(pShort, p)
	}
	dt := math.Max(pShort/20, medianStep(lc.Time))
	t, y, v := binLC(lc, dt, 1000)
	if len(t) < MinPoints {
		e.Note = "too few points for the fit"
		return e
	}
	sd := math.Sqrt(variance(y))
	span := math.Max(t[len(t)-1]-t[0], dt)
	inst := make([]int, len(t))
	loglike := func(k gp.Kernel, jitter float64) float64 {
		m := &gp.Noise{Kernel: k, Jitter: []float64{jitter}, Solver: gp.SemisepSolver}
		ll, err := m.LogLikelihood(t, y, v, inst)
		if err != nil {
			return math.Inf(-1)
		}
		return ll
	}
	amp := func(name string) mapfit.Param {
		return mapfit.Param{Name: name, Kind: mapfit.LogBounded, Lo: 1e-4 * sd, Hi: 20 * sd}
	}
	redSpace := mapfit.Space{amp("red_sigma"),
		{Name: "red_tau", Kind: mapfit.LogBounded, Lo: dt, Hi: span},
		{Name: "red_q", Kind: mapfit.LogBounded, Lo: 0.05, Hi: 0.5},
		amp("jitter")}
	red := &mapfit.Problem{Space: redSpace, LogPost: func(x []float64) float64 {
		return loglike(redNoiseKernel(x[0], x[1], x[2]), x[3])
	}}
	var used []float64
next:
	for _, p0 := range starts {
		if !(p0 > pMin && p0 < pMax) {
			continue
		}
		for _, q := range used {
			if math.Abs(p0-q) <= 0.05*q {
				continue next // the same start twice
			}
		}
		used = append(used, p0)
		for _, f := range []float64{1.0 / 6, 1} {
			// The decay a rotation's ACF suggests, and slower.
			if tau := f * p0; tau > dt && tau < span {
				red.Starts = append(red.Starts, []float64{sd, tau, 0.3, 0.1 * sd})
			}
		}
	}
	if len(used) == 0 {
		e.Note = "no starting period within the search range"
		return e
	}
	if len(red.Starts) == 0 {
		red.Starts = append(red.Starts, []float64{sd, math.Sqrt(dt * span), 0.3, 0.1 * sd})
	}
	rres, err := mapfit.Fit(red, &mapfit.Settings{MaxEvaluations: 1000, NoLaplace: true})
	if err != nil || rres == nil {
		e.Note = "the red-noise fit failed"
		return e
	}
	llRed := red.LogPost(rres.X)

	rotSpace := append(mapfit.Space{amp("sigma"),
		{Name: "period", Kind: mapfit.LogBounded, Lo: pMin, Hi: pMax},
		{Name: "q0", Kind: mapfit.LogBounded, Lo: 0.05, Hi: 100},
		{Name: "dq", Kind: mapfit.LogBounded, Lo: 1e-3, Hi: 100},
		{Name: "f", Kind: mapfit.LogBounded, Lo: 1e-3, Hi: 1}}, redSpace...)
	prob := &mapfit.Problem{Space: rotSpace, LogPost: func(x []float64) float64 {
		k := gp.Sum{gp.RotationSHO{Amp: x[0], Period: x[1], Quality: x[2], QualityGap: x[3], Mix: x[4]}, redNoiseKernel(x[5], x[6], x[7])}
		return loglike(k, x[8])
	}}
	r := rres.X
	for _, p0 := range used {
		// Half the variance to each, the red noise's timescale as fitted.
		prob.Starts = append(prob.Starts, []float64{0.7 * r[0], p0, 1, 1, 0.5, 0.7 * r[0], r[1], r[2], r[3]})
	}
	res, err := mapfit.Fit(prob, &mapfit.Settings{MaxEvaluations: 2000})
	if err != nil || res == nil {
		e.Note = "the fit failed"
		return e
	}
	e.Period = res.X[1]
	sigErr := math.NaN()
	if res.Laplace != nil {
		e.Err, sigErr = res.Laplace.Errors[1], res.Laplace.Errors[0]
	}
	assumed := false
	if !(e.Err > 0) {
		// The posterior's curvature was not usable: a 10% error (common
		// practice).
		e.Err, assumed = 0.1*e.Period, true
	}
	llRot := prob.LogPost(res.X)
	dBIC := 2*(llRot-llRed) - 5*math.Log(float64(len(t)))
	e.Detected = dBIC > 10
	e.Note = fmt.Sprintf("amplitude %.3g (relative flux), %d bins; over red noise ΔBIC = %.1f; %s", res.X[0], len(t), dBIC, res.Summary())
	if assumed {
		e.Note += "; curvature not usable, 10% error assumed"
	}
	if sigErr > 0 && res.X[0] < 3*sigErr {
		e.Detected = false
		e.Note += "; amplitude below 3σ"
	}
	return e
}

// redNoiseKernel is red noise without periodicity, of standard deviation
// sigma and timescale tau: an overdamped stochastic harmonic oscillator
// (quality factor q ≤ 1/2, ω0 = 1/tau), whose covariance is a sum of two
// decaying exponentials and never turns negative — from a random walk's
// f⁻² to granulation's f⁻⁴ above its knee (the non-periodic terms of
// celerite, Foreman-Mackey et al. 2017).
func redNoiseKernel(sigma, tau, q float64) gp.SHO {
	w0 := 1 / tau
	return gp.SHO{S0: sigma * sigma / (w0 * q), W0: w0, Q: q}
}

// binLC returns the light curve (relative flux minus one) in bins of width
// dt with inverse-variance weights: times, values and variances of the
// non-empty bins, limited to the maxBins consecutive bins with the most
// points.
func binLC(lc *LightCurve, dt float64, maxBins int) (t, y, v []float64) {
	n := lc.Len()
	t0 := lc.Time[0]
	nb := int((lc.Time[n-1]-t0)/dt) + 1
	sw := make([]float64, nb)
	swy := make([]float64, nb)
	swt := make([]float64, nb)
	cnt := make([]int, nb)
	for i, ti := range lc.Time {
		k := min(int((ti-t0)/dt), nb-1)
		wi := 1 / (lc.Err[i] * lc.Err[i])
		sw[k] += wi
		swy[k] += wi * (lc.Flux[i] - 1)
		swt[k] += wi * ti
		cnt[k]++
	}
	lo, hi := 0, nb
	if nb > maxBins {
		best, cur := -1, 0
		for k := 0; k < maxBins; k++ {
			cur += cnt[k]
		}
		best = cur
		for k := maxBins; k < nb; k++ {
			cur += cnt[k] - cnt[k-maxBins]
			if cur > best {
				best, lo = cur, k-maxBins+1
			}
		}
		hi = lo + maxBins
	}
	for k := lo; k < hi; k++ {
		if sw[k] > 0 {
			t = append(t, swt[k]/sw[k])
			y = append(y, swy[k]/sw[k])
			v = append(v, 1/sw[k])
		}
	}
	return t, y, v
}

// refine returns the frequency of the parabola through the peak at k.
func refine(p []float64, g rvfit.Grid, k int) float64 {
	if k <= 0 || k+1 >= len(p) {
		return g.Freq(k)
	}
	den := p[k-1] - 2*p[k] + p[k+1]
	if den >= 0 {
		return g.Freq(k)
	}
	return g.Freq(k) + 0.5*(p[k-1]-p[k+1])/den*g.DF
}

func argmax(v []float64) int {
	k := 0
	for i, x := range v {
		if x > v[k] {
			k = i
		}
	}
	return k
}

func medianStep(t []float64) float64 {
	d := make([]float64, 0, len(t))
	for i := 1; i < len(t); i++ {
		if t[i] > t[i-1] {
			d = append(d, t[i]-t[i-1])
		}
	}
	if len(d) == 0 {
		return 1
	}
	return median(d)
}

func variance(y []float64) float64 {
	var m, s float64
	for _, v := range y {
		m += v
	}
	m /= float64(len(y))
	for _, v := range y {
		s += (v - m) * (v - m)
	}
	return s / float64(len(y))
}
