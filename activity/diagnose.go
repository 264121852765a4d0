package activity

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"

	"spotsift/activity/photometry"
	"spotsift/rvfit"
)

// Sentinel errors of Diagnose; test for them with errors.Is.
var (
	// ErrPeriodOutOfReach: a period to judge, or the range searched, lies
	// outside what the data can constrain.
	ErrPeriodOutOfReach = errors.New("activity: period outside the data's reach")
	// ErrBadOption: an option value out of its range.
	ErrBadOption = errors.New("activity: bad option")
)

// MinEpochs is the fewest epochs Diagnose works with.
const MinEpochs = 12

// Options controls Diagnose. A nil *Options gives the defaults.
type Options struct {
	// Periods are the signals to judge, in days. Nil means the significant
	// peaks of the RV periodogram, found by iterative prewhitening.
	Periods []float64
	// FAPThreshold is the false-alarm probability below which a periodogram
	// peak is a signal, and above which a signal's verdict is inconclusive.
	// Zero means 1e-3 (common practice: 0.1 %).
	FAPThreshold float64
	// MaxSignals caps the number of signals found by prewhitening. Zero
	// means 4.
	MaxSignals int
	// PMin and PMax bound the periods searched, in days. Zero means 1.05 d
	// (just above the 1-day alias region) and the baseline.
	PMin, PMax float64
	// Oversampling of the frequency grid (points per 1/T); zero means 10.
	Oversampling float64
	// Star holds what is known of the star; nil means nothing.
	Star *Star
	// Seed seeds every random draw (permutation tests, simulations).
	Seed uint64
	// Permutations is the number of draws of the Monte Carlo tests; zero
	// means 200.
	Permutations int
	// SkipModels leaves out the Gaussian-process fits (rotation from a GP,
	// the model comparison); they are the slow part.
	SkipModels bool
	// LightCurve, when not nil, is the star's photometry: its rotation
	// period joins the rotation estimates, and where it overlaps the RVs
	// its FF' prediction is tested as evidence.
	LightCurve *photometry.LightCurve
	// LightCurveWeight is the weight of the light curve's rotation period
	// against the indicators' rotation hypotheses (see withLightCurve);
	// zero means DefaultLightCurveWeight, the calibrated value.
	LightCurveWeight float64

	// SingleOutput keeps the model comparison to the RVs alone (the GP of
	// the rotation kernel), instead of the multi-output GP on the RVs and
	// the indicators; faster, and the only choice without indicator
	// errors.
	SingleOutput bool

	// Weights are the tests' weights; nil means DefaultWeights.
	Weights *Weights
	// VerdictThreshold is the |score| beyond which a significant signal is
	// activity-like or planet-like; zero means DefaultVerdictThreshold.
	VerdictThreshold float64
	// IndicatorAlpha is the Holm-corrected level at which an indicator
	// varies with the signal; zero means DefaultIndicatorAlpha.
	IndicatorAlpha float64
	// Probability maps the score and the kind of caveat to P(planetary);
	// nil means the calibrated mapping.
	Probability Calibration
}

// weights returns the weights in force.
func (o *Options) weights() *Weights {
	if o.Weights != nil {
		return o.Weights
	}
	w := DefaultWeights()
	return &w
}

func (o *Options) withDefaults() Options {
	var d Options
	if o != nil {
		d = *o
	}
	if d.FAPThreshold == 0 {
		d.FAPThreshold = 1e-3
	}
	if d.MaxSignals == 0 {
		d.MaxSignals = 4
	}
	if d.PMin == 0 {
		d.PMin = DefaultPMin
	}
	if d.Oversampling == 0 {
		d.Oversampling = 10
	}
	if d.Permutations == 0 {
		d.Permutations = 200
	}
	if d.VerdictThreshold == 0 {
		d.VerdictThreshold = DefaultVerdictThreshold
	}
	if d.IndicatorAlpha == 0 {
		d.IndicatorAlpha = DefaultIndicatorAlpha
	}
	return d
}

// DefaultPMin is the shortest period searched by default, in days, by
// Diagnose and by "spotsift scan": just above the 1-day alias region. The
// longest is the baseline.
const DefaultPMin = 1.05

// chromaticColumn is the indicator that holds the chromatic RV slope.
const chromaticColumn = "chromatic_slope"

// data is a series prepared for the tests.
type data struct {
	s     *rvfit.Series
	t     []float64
	rv    []float64
	err   []float64
	inst  []int
	ninst int
	t0    float64
	T     float64
	grid  rvfit.Grid
	opts  Options
	w     *Weights
	ctx   context.Context
	// ecc are the signals the blind search models as eccentric orbits
	// (eccentricSearch); fitRV gives each its shape.
	ecc []eccSignal
	// comps holds each signal's fitted curve at the epochs (the joint
	// fit's), freqs its frequency, and orbitLike whether the signal has
	// been found to need a Keplerian even against red noise
	// (redNoiseCheck), so that later signals are judged with it taken out
	// as an orbit.
	comps     [][]float64
	freqs     []float64
	orbitLike []bool
}

// Diagnose judges every signal of a star's time series: does it track the
// star's activity, or does it look planetary? It returns the verdict of
// each signal with every piece of evidence behind it.
//
// The signals are opts.Periods, or else the periodogram peaks with a
// false-alarm probability below opts.FAPThreshold, found one after the
// other by iterative prewhitening. For each it runs the tests of docs/methods.md
// §12 (see the Evidence names), scores them with the weights of Weights
// and turns the score into a verdict (see Score). Tests that cannot run on
// these data (no indicator columns, too few epochs per season...) are
// listed as skipped and pull the score toward zero.
//
// Errors: too few epochs (ErrTooFewEpochs from rvfit), a period outside the
// data's reach (ErrPeriodOutOfReach), bad options, or ctx's error when ctx
// is cancelled or times out (checked between the steps of the diagnosis).
func Diagnose(ctx context.Context, s *rvfit.Series, opts *Options) (*Diagnosis, error) {
	o := opts.withDefaults()
	if err := s.Require(MinEpochs, "the diagnosis"); err != nil {
		return nil, err
	}
	if err := s.RequireTimeOrder("the diagnosis"); err != nil {
		return nil, err
	}
	if !(o.FAPThreshold > 0 && o.FAPThreshold < 1) {
		return nil, fmt.Errorf("%w: false-alarm threshold %g must lie in (0, 1)", ErrBadOption, o.FAPThreshold)
	}
	d, err := newData(ctx, s, o)
	if err != nil {
		return nil, err
	}
	for _, p := range o.Periods {
		if !(p > 0) || math.IsInf(p, 0) {
			return nil, fmt.Errorf("%w: %g d is not a period", ErrPeriodOutOfReach, p)
		}
		if p > 2*d.T {
			return nil, fmt.Errorf("%w: %g d is more than twice the baseline of %.4g d", ErrPeriodOutOfReach, p, d.T)
		}
		if p < 0.2 {
			return nil, fmt.Errorf("%w: %g d is shorter than 0.2 d, below what nightly data sample", ErrPeriodOutOfReach, p)
		}
	}
	rng := rand.New(rand.NewPCG(o.Seed, 0x5eed))

	diag := &Diagnosis{NEpochs: s.Len(), Baseline: Num(d.T), Caution: Caution, details: &details{grid: d.grid}}
	if o.Star != nil {
		diag.Star = o.Star.Name
	}
	diag.Rotation = d.estimateRotation(ctx, rng)
	if err := ctx.Err(); err != nil {
		return nil, err
	}

	sigs, err := d.findSignals()
	if err != nil {
		return nil, err
	}
	for _, e := range d.ecc {
		diag.Notes = append(diag.Notes, fmt.Sprintf("the signal at %.5g d is modelled as an eccentric orbit (e = %.2f), found by the eccentric orbit search: one Keplerian there explains several peaks of the sinusoid search (its harmonics and their aliases) better than they explain themselves", 1/e.f, e.sh.e))
	}
	if len(sigs) == 0 {
		diag.Notes = append(diag.Notes, fmt.Sprintf("no periodogram peak has a false-alarm probability below %g: no signal to judge", o.FAPThreshold))
	}
	freqs := make([]float64, len(sigs))
	for k := range sigs {
		freqs[k] = sigs[k].freq
	}
	given := len(o.Periods) > 0
	if given && len(freqs) > 0 {
		freqs = d.refineGiven(freqs)
	}
	var all *sineFit
	var rels []*relation
	var rivals []*aliasRival
	var cands [][]aliasRival
	var jointPow, jointBeta []float64
	if len(freqs) > 0 {
		all, err = d.fitRV(freqs)
		if err != nil {
			return nil, fmt.Errorf("activity: joint fit of %d signals: %w", len(freqs), err)
		}
		amps := make([]float64, len(freqs))
		for k := range amps {
			amps[k], _ = all.amplitude(k)
		}
		rels = d.relations(all, freqs, amps)
		jointPow, jointBeta = d.jointSignificance(freqs)
		rivals = make([]*aliasRival, len(freqs))
		cands = make([][]aliasRival, len(freqs))
		win := d.samplingPeaks()
		for k := range freqs {
			if rels[k] == nil {
				cands[k] = d.aliasCandidates(all, freqs, k, win, jointBeta[k])
				rivals[k] = likeliestRival(cands[k])
			}
		}
		tEff := d.tEff()
		for k := range sigs {
			sigs[k].freq = freqs[k]
			if !isFinite(jointPow[k]) {
				continue
			}
			fap := func(p float64) float64 {
				if given {
					return rvfit.FAPSingle(p, len(d.t), d.ninst)
				}
				return rvfit.BaluevFAP(p, len(d.t), d.ninst, d.grid.FMax(), tEff)
			}
			sigs[k].power = jointPow[k]
			sigs[k].fap = fap(jointPow[k])
			sigs[k].fapCorr = fap(jointPow[k] / math.Max(1, jointBeta[k]*jointBeta[k]))
		}
	}
	d.comps, d.orbitLike, d.freqs = make([][]float64, len(sigs)), make([]bool, len(sigs)), freqs
	for k := range sigs {
		d.comps[k] = make([]float64, len(d.t))
		for i, ti := range d.t {
			d.comps[k][i] = all.component(k, ti)
		}
	}
	for k, sg := range sigs {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		// The signal's own data: the RVs less the offsets and every other
		// signal's fitted curve (a sinusoid, or an eccentric orbit's).
		own := make([]float64, len(d.t))
		comp := make([]float64, len(d.t))
		for i := range d.t {
			own[i] = d.rv[i] - all.Offset[d.inst[i]]
			for j := range freqs {
				if j != k {
					own[i] -= d.comps[j][i]
				}
			}
			comp[i] = d.comps[k][i]
		}
		amp, ampErr := all.amplitude(k)
		sig := Signal{Period: Num(1 / sg.freq), Freq: Num(sg.freq), Source: sg.source, Power: Num(sg.power), FAP: Num(sg.fap),
			FAPCorrelated: Num(sg.fapCorr), Amplitude: Num(amp), AmplitudeErr: Num(ampErr),
			K: Num(amp), KErr: Num(ampErr)}
		sig.KFrom = kFromJoint(&sig)
		if given {
			sig.PeriodGiven = Num(o.Periods[k])
		}
		if r := rels[k]; r != nil {
			sig.RelatedTo = r.label
			sig.Caveat, sig.CaveatKind = "it is "+r.label, CaveatRelative
		}
		// An eccentric orbit's phase is that of its first Fourier term,
		// the sinusoid the tests at the period fit.
		phase := all.phase(k)
		if all.shape(k).e > 0 {
			if fund, err := fitSines(d.t, comp, d.err, d.inst, d.ninst, []float64{sg.freq}, d.t0); err == nil {
				phase = fund.phase(0)
			}
		}
		tr := &trial{d: d, f: sg.freq, own: own, comp: comp, amp: amp, ampErr: ampErr, phase: phase, shape: all.shape(k), rot: diag.Rotation, beta: jointBeta[k], k: k, rng: rand.New(rand.NewPCG(o.Seed, uint64(k+1)))}
		tr.run(&sig)
		// With the activity modelled by the GP of the model comparison,
		// the aliases are weighed again, and that answer replaces the
		// white-noise fits' (gpAliasRival).
		white := rivals[k]
		var gpClosest *aliasRival
		if rels[k] == nil && len(cands[k]) > 0 && d.ctx.Err() == nil {
			if r, ok := tr.gpAliasRival(all, freqs, k, cands[k]); ok {
				gpClosest, rivals[k] = r, nil
				if r != nil && r.odds() < aliasAmbiguityLimit {
					rivals[k] = r
				}
			}
		}
		if r := rivals[k]; r != nil {
			if sig.Caveat == "" || sig.Caveat == tr.caveat {
				sig.Caveat = fmt.Sprintf("its period is ambiguous: the %s at %.4g d fits the data about as well", r.label, 1/r.freq)
				sig.CaveatKind = CaveatAlias
			}
			how := "is about as probable as"
			if r.odds() < 0 {
				how = "is more probable than"
			}
			fit := "in units of the residual scatter (red noise allowed for)"
			if r.gp {
				fit = "(2 Δln L) with activity modelled by the GP of the model comparison"
			}
			sig.Evidence = append(sig.Evidence, Evidence{Name: "period_alias", Value: Num(r.odds()), Threshold: Num(aliasAmbiguityLimit), Points: TowardNeither,
				Reason: fmt.Sprintf("the %s at %.4g d %s the period, the other signals in the fit: Δχ² = %+.1f %s, %+.1f from a period prior uniform in ln P, %+.1f in all, below %.1f; the verdict cannot rest on the period", r.label, 1/r.freq, how, r.dchi, fit, r.prior, r.odds(), aliasAmbiguityLimit)})
		} else if white != nil && gpClosest != nil {
			sig.Evidence = append(sig.Evidence, Evidence{Name: "period_alias", Value: Num(gpClosest.odds()), Threshold: Num(aliasAmbiguityLimit), Points: TowardNeither,
				Reason: fmt.Sprintf("the %s at %.4g d fits about as well in sinusoid fits with the residual scatter scaled (odds %+.1f), but with activity modelled by the GP of the model comparison the likeliest alias, the %s at %.4g d, is less probable than the period: Δχ² = %+.1f (2 Δln L), %+.1f from a period prior uniform in ln P, %+.1f in all, above %.1f; the period stands", white.label, 1/white.freq, white.odds(), gpClosest.label, 1/gpClosest.freq, gpClosest.dchi, gpClosest.prior, gpClosest.odds(), aliasAmbiguityLimit)})
		}
		// A planet claim needs the signal to stay significant once
		// correlated noise is allowed for: by the red-noise factor of the
		// joint fit's residuals, by surviving the GP activity model, or by
		// growing like a periodic signal against simulations made of the
		// residuals themselves.
		if sig.Caveat == "" && !(float64(sig.FAPCorrelated) <= o.FAPThreshold) {
			survives := false
			for _, e := range sig.Evidence {
				if (e.Name == "model_comparison" || e.Name == "stacked_growth") && e.Points == TowardPlanet {
					survives = true
				}
			}
			if !survives {
				sig.CaveatKind = CaveatSignificance
				sig.Caveat = fmt.Sprintf("the signal is not significant once the residuals' correlated noise is allowed for (false-alarm probability %.2g with errors scaled by β = %.2f) and neither the GP activity model nor the stacked periodogram (with the residuals' own noise) confirms it", float64(sig.FAPCorrelated), jointBeta[k])
			}
		}
		// A period longer than the baseline is not seen through one cycle:
		// a companion on a wider orbit, a magnetic cycle or an
		// instrument's drift would trace the same arc (a periodicity is
		// claimed over one full cycle at least; common practice). It says
		// more than the missing indicators' caveat, which it replaces.
		if (sig.Caveat == "" || sig.Caveat == noCycleIndicatorCaveat) && 1/sg.freq > d.T {
			sig.CaveatKind = CaveatBaseline
			sig.Caveat = fmt.Sprintf("its period, %.4g d, is longer than the %.4g d the data span: they do not cover one cycle, and a companion on a wider orbit, a magnetic cycle or an instrument's drift would trace the same arc", 1/sg.freq, d.T)
		}
		if near, tol := nearYear(sg.freq, d.T, amp/ampErr, jointBeta[k]); near && !(amp > yearRVMax) && (sig.Caveat == "" || sig.Caveat == noCycleIndicatorCaveat) {
			sig.CaveatKind = CaveatYear
			sig.Caveat = yearCaveat(sg.freq, tol)
		}
		Score(&sig, &o)
		diag.Signals = append(diag.Signals, sig)
		tr.det.freq, tr.det.own, tr.det.comp = sg.freq, own, comp
		diag.details.signals = append(diag.details.signals, tr.det)
	}
	// The long steps stop early when ctx is cancelled, with whatever they
	// had: never return such a diagnosis as a result.
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	return diag, nil
}

// newData prepares the series s for the diagnosis with the options o
// (defaults applied): its instruments and the frequency grid searched.
func newData(ctx context.Context, s *rvfit.Series, o Options) (*data, error) {
	d := &data{s: s, t: s.Time, rv: s.RV, err: s.RVErr, t0: s.Time[0], T: s.Baseline(), opts: o, w: o.weights(), ctx: ctx}
	d.inst, d.ninst = groupIndex(s.Instrument)
	pmax := o.PMax
	if pmax == 0 {
		pmax = d.T
	}
	if !(o.PMin > 0) || !(pmax > o.PMin) {
		return nil, fmt.Errorf("%w: the periods searched, %g to %g d, are an empty range (the baseline is %.3g d)", ErrPeriodOutOfReach, o.PMin, pmax, d.T)
	}
	var err error
	d.grid, err = rvfit.NewGrid(s.Time, &rvfit.GridOptions{Oversampling: o.Oversampling, PMin: o.PMin, PMax: pmax})
	if err != nil {
		return nil, fmt.Errorf("activity: frequency grid: %w", err)
	}
	return d, nil
}

// found is one signal to judge.
type found struct {
	freq, power, fap float64
	fapCorr          float64 // with the red-noise factor (NaN until computed)
	source           string
}

// findSignals returns the given periods, or the significant peaks by
// iterative prewhitening.
func (d *data) findSignals() ([]found, error) {
	o := d.opts
	if len(o.Periods) > 0 {
		var out []found
		for _, p := range o.Periods {
			f := 1 / p
			fit, err := fitSines(d.t, d.rv, d.err, d.inst, d.ninst, []float64{f}, d.t0)
			if err != nil {
				return nil, fmt.Errorf("activity: fit at %g d: %w", p, err)
			}
			pow := powerOf(fit.ChiSq, d.chi2Offsets(d.rv))
			out = append(out, found{freq: f, power: pow, fap: rvfit.FAPSingle(pow, len(d.t), d.ninst), fapCorr: math.NaN(), source: "given"})
		}
		return out, nil
	}
	out, err := d.prewhiten(nil)
	if err != nil || len(out) < 2 {
		return out, err
	}
	freqs := make([]float64, len(out))
	for k := range out {
		freqs[k] = out[k].freq
	}
	orb, ok := d.eccentricSearch(freqs)
	if !ok {
		return out, nil
	}
	// One eccentric orbit explains several of the signals better than
	// their sinusoids do: the search starts again from the orbit, and
	// finds again whatever it leaves unexplained.
	d.ecc = []eccSignal{orb}
	return d.prewhiten([]found{{freq: orb.f, fapCorr: math.NaN(), source: sourceEccentric}})
}

// sourceEccentric is the Source of a signal the eccentric orbit search
// found (eccentricSearch).
const sourceEccentric = "eccentric orbit"

// prewhiten continues the blind search from the signals pre: the highest
// peaks of the residuals' periodogram, one at a time, while they are
// significant, every frequency refined in the joint fit after each.
func (d *data) prewhiten(pre []found) ([]found, error) {
	o := d.opts
	out := append([]found(nil), pre...)
	var freqs []float64
	for _, f := range out {
		freqs = append(freqs, f.freq)
	}
	resid := append([]float64(nil), d.rv...)
	chiPrev := d.chi2Offsets(d.rv)
	if len(freqs) > 0 {
		fit, err := d.fitRV(freqs)
		if err != nil {
			return nil, fmt.Errorf("activity: joint fit of %d signals: %w", len(freqs), err)
		}
		chiPrev = fit.ChiSq
		for i, ti := range d.t {
			resid[i] = d.rv[i] - fit.model(i, ti)
		}
	}
	for len(out) < o.MaxSignals {
		pg, err := rvfit.GLS(d.t, resid, d.err, d.grid, &rvfit.GLSOptions{Instrument: d.s.Instrument, Context: d.ctx})
		if err != nil {
			return nil, fmt.Errorf("activity: RV periodogram: %w", err)
		}
		// The periodogram's highest peaks are each refined in the joint
		// fit (within a grid step), and the one that fits best is the
		// signal. The grid's peak, interpolated, is within a fraction of a
		// step of the best frequency, but a strong signal's peak is so
		// sharp in χ² that this fraction can put one of its aliases above
		// it on the grid, and leaves a residual that the next step would
		// find as a second signal within the resolution of the first.
		best, bestChi := math.NaN(), math.Inf(1)
		trial := append(append([]float64(nil), freqs...), 0)
		for _, k := range rvfit.LocalMaxima(pg.Power, d.grid, 1/d.T, candidatePeaks) {
			trial[len(freqs)] = refinePeak(pg, k)
			f := d.refineFreq(trial, len(freqs), d.grid.DF, 2)
			trial[len(freqs)] = f
			if fit, err := d.fitRV(trial); err == nil && fit.ChiSq < bestChi {
				best, bestChi = f, fit.ChiSq
			}
		}
		if math.IsNaN(best) {
			break
		}
		// Its power is the share of the residual χ² it removes, the
		// other signals refitted with it.
		pow := powerOf(bestChi, chiPrev)
		fap := rvfit.BaluevFAP(pow, pg.NObs, pg.NOffsets, d.grid.FMax(), pg.TEff)
		if fap > o.FAPThreshold {
			break
		}
		freqs = append(freqs, best)
		out = append(out, found{power: pow, fap: fap, fapCorr: math.NaN(), source: "periodogram"})
		// Every frequency is refined again, the earlier ones with the new
		// signal in the fit, the new one with the earlier ones as they
		// moved.
		for j := range freqs {
			f := d.refineFreq(freqs, j, d.grid.DF, 2)
			d.moveEcc(freqs[j], f)
			freqs[j] = f
			out[j].freq = f
		}
		fit, err := d.fitRV(freqs)
		if err != nil {
			break
		}
		chiPrev = fit.ChiSq
		for i, ti := range d.t {
			resid[i] = d.rv[i] - fit.model(i, ti)
		}
	}
	return out, nil
}

// candidatePeaks is how many of the periodogram's highest peaks (one per
// resolution element) the blind search refines before it picks the
// signal: enough for a peak, its 1-day aliases on either side and the
// sampling window's.
const candidatePeaks = 5

// tEff is the effective time span sqrt(4π Var_w(t)) of Baluev (2008),
// weights 1/σ².
func (d *data) tEff() float64 {
	sw, st, stt := 0.0, 0.0, 0.0
	for i, ti := range d.t {
		w := 1 / (d.err[i] * d.err[i])
		x := ti - d.t0
		sw, st, stt = sw+w, st+w*x, stt+w*x*x
	}
	v := stt/sw - (st/sw)*(st/sw)
	return math.Sqrt(4 * math.Pi * math.Max(v, 0))
}

// chi2Offsets returns the χ² of y about per-instrument weighted means.
func (d *data) chi2Offsets(y []float64) float64 {
	sw := make([]float64, d.ninst)
	swy := make([]float64, d.ninst)
	for i := range y {
		w := 1 / (d.err[i] * d.err[i])
		sw[d.inst[i]] += w
		swy[d.inst[i]] += w * y[i]
	}
	c := 0.0
	for i := range y {
		r := (y[i] - swy[d.inst[i]]/sw[d.inst[i]]) / d.err[i]
		c += r * r
	}
	return c
}

// powerOf is the GLS power of a fit: the fraction of χ² it removes.
func powerOf(chi2, chi20 float64) float64 {
	if !(chi20 > 0) {
		return 0
	}
	return math.Max(0, 1-chi2/chi20)
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

// refinePeak returns the frequency of a periodogram peak refined by a
// parabola through the peak and its neighbours.
func refinePeak(pg *rvfit.Periodogram, k int) float64 {
	f := pg.Grid.Freq(k)
	if k == 0 || k == len(pg.Power)-1 {
		return f
	}
	a, b, c := pg.Power[k-1], pg.Power[k], pg.Power[k+1]
	den := a - 2*b + c
	if den >= 0 {
		return f
	}
	return f + 0.5*(a-c)/den*pg.Grid.DF
}

// trial holds one signal under test.
type trial struct {
	d      *data
	f      float64
	own    []float64 // the signal's own data (offsets and other signals removed)
	k      int       // the signal's index in d.comps
	comp   []float64 // the fitted curve at each epoch (sinusoid or eccentric orbit)
	amp    float64
	ampErr float64
	// phase is the fitted sinusoid's phase φ (for an eccentric orbit, its
	// first Fourier term's), the sinusoid being amp·cos(2πf(t − t0) − φ)
	// with t0 the data's phase reference.
	phase float64
	// shape is the signal's shape in the joint fit (an eccentric orbit's,
	// or a sinusoid's).
	shape orbitShape
	rot   Rotation
	rng   *rand.Rand
	// beta is the red-noise factor of the joint fit's residuals at the
	// period (NaN when unknown).
	beta float64
	// strongRotation reports whether the period sits at P_rot or P_rot/2
	// of a rotation hypothesis; gpDegenerate is the share of the rotation
	// hypotheses at one of whose harmonics up to P_rot/4 it sits, where a
	// sinusoid fits activity as well as an orbit (but see gpHarmonic);
	// caveat is why the signal cannot be planet-like, caveatKind its kind
	// (Signal.CaveatKind).
	strongRotation bool
	gpDegenerate   float64
	// gpHarmonic is 3 or 4 when the one rotation period puts the signal
	// at P_rot/3 or P_rot/4: the model comparison's activity model then
	// has an oscillator there too (gpModel.mode), instead of the test
	// taking no side.
	gpHarmonic int
	caveat     string
	caveatKind string
	// det collects what the report draws.
	det  signalDetails
	ev   []Evidence
	skip []Skipped
}

func (tr *trial) add(e Evidence) { tr.ev = append(tr.ev, e) }

func (tr *trial) skipped(name, why string) { tr.skip = append(tr.skip, Skipped{name, why}) }

// run performs every test on the signal and stores the evidence in sig.
func (tr *trial) run(sig *Signal) {
	tr.significance(sig)
	tr.rotationMatch()
	tr.cycleMatch()
	tr.indicatorTests()
	// The season test runs after the model comparison, whose GP gives its
	// errors (seasonCoherence), and its item keeps its place in the list.
	at, nskip := len(tr.ev), len(tr.skip)
	tr.stackedGrowth()
	tr.chromaticity()
	tr.ffPrime()
	if tr.d.opts.SkipModels {
		tr.skipped("model_comparison", "Gaussian-process fits were switched off")
	} else {
		tr.modelComparison()
	}
	after, afterSkip := append([]Evidence(nil), tr.ev[at:]...), append([]Skipped(nil), tr.skip[nskip:]...)
	tr.ev, tr.skip = tr.ev[:at], tr.skip[:nskip]
	tr.seasonCoherence()
	tr.ev, tr.skip = append(tr.ev, after...), append(tr.skip, afterSkip...)
	sig.Evidence = tr.ev
	sig.Skipped = tr.skip
	if tr.caveat != "" && sig.Caveat == "" {
		sig.Caveat, sig.CaveatKind = tr.caveat, tr.caveatKind
	}
}
