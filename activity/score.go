package activity

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// Weight is the pull of one test: Activity when it finds the signal
// behaves like activity, Planet when it finds it behaves like an orbit.
// Both are ≥ 0; the planet side enters the score with a minus sign.
type Weight struct {
	Activity, Planet float64
}

// max returns the larger side.
func (w Weight) max() float64 { return math.Max(w.Activity, w.Planet) }

// Weights holds every test's weight. The zero value of Options.Weights (nil)
// means DefaultWeights, the values set by the calibration (see
// TestCalibration and the README's confusion matrices).
//
// The asymmetries follow the literature: a period at a rotation harmonic or
// an indicator varying with the signal is strong evidence of activity,
// while their absence is weak evidence of a planet (spot signals of slow
// rotators may leave the line shape untouched, Desort et al. 2007), and
// counts only as far as the indicator could have shown the signal; a
// Keplerian that survives a joint fit with activity noise is the strongest
// planet-side evidence.
type Weights struct {
	RotationMatch        float64 // period at P_rot or P_rot/2
	RotationMatchWeak    float64 // period at P_rot/3, P_rot/4, 2 P_rot or an alias of a harmonic (scaled by the window's share of the axis)
	RotationMismatch     float64 // period unrelated to every rotation hypothesis
	CycleMatch           float64 // long period at the magnetic cycle seen in an indicator
	IndicatorPower       Weight  // indicator periodograms at the signal's frequency
	IndicatorCorrelation Weight  // indicator against the fitted signal (grouped with IndicatorPower)
	SeasonCoherence      Weight  // amplitude and phase season by season
	StackedGrowth        Weight  // growth of power with epochs
	ModelComparison      Weight  // GP alone against GP + Keplerian
	Chromaticity         Weight  // chromatic slope at the signal's frequency
	FFPrime              float64 // the light curve's FF' prediction explains the signal
}

// DefaultWeights returns the calibrated weights.
func DefaultWeights() Weights {
	return Weights{
		RotationMatch:        3,
		RotationMatchWeak:    1.5,
		RotationMismatch:     1,
		CycleMatch:           2,
		IndicatorPower:       Weight{Activity: 4, Planet: 1},
		IndicatorCorrelation: Weight{Activity: 1.5, Planet: 0.5},
		SeasonCoherence:      Weight{Activity: 1.5, Planet: 1},
		StackedGrowth:        Weight{Activity: 1, Planet: 0.5},
		ModelComparison:      Weight{Activity: 2, Planet: 2.5},
		Chromaticity:         Weight{Activity: 1.5, Planet: 0.5},
		FFPrime:              FFPrimeWeight,
	}
}

// Default thresholds (the zero values of the Options fields).
const (
	// DefaultIndicatorAlpha is the family-wise level (Holm-corrected) at
	// which an indicator's power at the signal's period, or its correlation
	// with the fitted signal, counts as activity.
	DefaultIndicatorAlpha = 0.001
	// DefaultVerdictThreshold is the |score| above which a significant
	// signal gets a verdict other than inconclusive.
	DefaultVerdictThreshold = 0.2
)

// scoreTolerance is the one tolerance of the threshold comparisons: a
// score within it of the threshold counts as on it (sums of weights such
// as 3/15 are not exact in binary floating point: 0.2 may come out as
// 0.19999999999999998).
const scoreTolerance = 1e-9

// groups lists the test families that share one piece of information and
// so count once: an indicator varying at the period shows in its
// periodogram and in its correlation with the fitted signal alike, and a
// period at the magnetic cycle is a period where the indicator that shows
// the cycle varies (a long period too close to the cycle to be fitted
// apart from it sees the cycle in its indicator tests). Each side of a
// group counts with the largest of its families' pulls.
var groups = map[string]string{
	"indicator_power":       "indicator",
	"indicator_correlation": "indicator",
	"cycle_match":           "indicator",
	"rotation_match":        "period",
}

// groupOf returns the group of a test family (the family itself when it
// is in none).
func groupOf(fam string) string {
	if g, ok := groups[fam]; ok {
		return g
	}
	return fam
}

// totalWeight is the weight of every test spotsift knows: the score's
// denominator, so that tests that could not run count as zero.
func (w *Weights) totalWeight() float64 {
	per := map[string]float64{}
	for _, fam := range []string{"rotation_match", "cycle_match", "indicator_power", "indicator_correlation", "season_coherence", "stacked_growth", "model_comparison", "chromaticity"} {
		// ff_prime runs only with a light curve: it is left out of the
		// denominator, so that stars without photometry keep their scale.
		g := groupOf(fam)
		per[g] = math.Max(per[g], w.familyWeight(fam))
	}
	s := 0.0
	for _, k := range sortedKeysOf(per) {
		s += per[k]
	}
	return s
}

// Score sets sig.Score, sig.Coverage, sig.Probability, sig.Verdict and
// sig.Summary from its evidence, with the weights and thresholds of o
// (nil: the defaults):
//
//	score = Σ weight_i / W,  W = Σ over test groups of the largest weight
//
// Within a group of tests that share their information (see groups) the
// items of the families that pull less on a side are shown with zero
// weight, so the weights shown always add up to the score.
//
// A signal whose false-alarm probability exceeds the threshold is
// inconclusive whatever its score; otherwise score ≥ threshold is
// activity-like, score ≤ −threshold planet-like, anything between
// inconclusive. A signal flagged as sitting at P_rot or P_rot/2 (or as an
// alias or harmonic of a stronger signal) is never planet-like.
func Score(sig *Signal, opts *Options) {
	o := opts.withDefaults()
	w := o.weights()
	// Per group and side, the family that pulls most.
	type pull struct{ act, pla map[string]float64 }
	pulls := map[string]*pull{}
	for _, e := range sig.Evidence {
		fam := family(e.Name)
		g := groupOf(fam)
		if pulls[g] == nil {
			pulls[g] = &pull{map[string]float64{}, map[string]float64{}}
		}
		if e.Weight > 0 {
			pulls[g].act[fam] += e.Weight
		} else if e.Weight < 0 {
			pulls[g].pla[fam] -= e.Weight
		}
	}
	top := func(m map[string]float64) string {
		best, bv := "", -1.0
		for _, k := range sortedKeysOf(m) {
			if m[k] > bv {
				best, bv = k, m[k]
			}
		}
		return best
	}
	sum := 0.0
	ran := map[string]float64{}
	for i := range sig.Evidence {
		e := &sig.Evidence[i]
		fam := family(e.Name)
		g := groupOf(fam)
		p := pulls[g]
		if e.Weight > 0 && top(p.act) != fam || e.Weight < 0 && top(p.pla) != fam {
			keep := top(p.act)
			if e.Weight < 0 {
				keep = top(p.pla)
			}
			e.Reason += fmt.Sprintf(" (counted once, within %s: the two tests share one signal)", keep)
			e.Weight = 0
		}
		sum += e.Weight
		ran[g] = math.Max(ran[g], w.familyWeight(fam))
	}
	cov := 0.0
	for _, k := range sortedKeysOf(ran) {
		cov += ran[k]
	}
	total := w.totalWeight()
	sig.Score = sum / total
	sig.Coverage = cov / total
	sig.Probability = Num(o.Probability.of(sig.Caveat != "", sig.CaveatKind, sig.Score))
	thr := o.VerdictThreshold
	blocked := sig.Caveat != ""
	switch {
	case !(float64(sig.FAP) <= o.FAPThreshold):
		sig.Verdict = Inconclusive
		sig.Summary = fmt.Sprintf("not significant (false-alarm probability %.2g above %g)", float64(sig.FAP), o.FAPThreshold)
		return
	case sig.Score >= thr-scoreTolerance:
		sig.Verdict = ActivityLike
	case sig.Score <= -thr+scoreTolerance && !blocked:
		sig.Verdict = PlanetLike
	default:
		sig.Verdict = Inconclusive
	}
	why := summaryOf(sig)
	switch {
	case sig.Verdict == Inconclusive && blocked && sig.Score <= -thr+scoreTolerance:
		sig.Summary = fmt.Sprintf("the tests lean planet-like (score %+.2f), but %s, so the verdict cannot rest on them", sig.Score, sig.Caveat)
	case sig.Verdict == Inconclusive:
		sig.Summary = fmt.Sprintf("the evidence is mixed or thin (score %+.2f, %.0f%% of the tests could run)", sig.Score, 100*sig.Coverage)
		if why != "" {
			sig.Summary += ": " + why
		}
	default:
		sig.Summary = why
	}
}

// family is the test an evidence name belongs to ("indicator_power:fwhm"
// belongs to "indicator_power").
func family(name string) string {
	for i := 0; i < len(name); i++ {
		if name[i] == ':' {
			return name[:i]
		}
	}
	return name
}

// familyWeight is the largest weight a test family can carry.
func (w *Weights) familyWeight(fam string) float64 {
	switch fam {
	case "rotation_match":
		return math.Max(w.RotationMatch, w.RotationMismatch)
	case "cycle_match":
		return w.CycleMatch
	case "indicator_power":
		return w.IndicatorPower.max()
	case "indicator_correlation":
		return w.IndicatorCorrelation.max()
	case "season_coherence":
		return w.SeasonCoherence.max()
	case "stacked_growth":
		return w.StackedGrowth.max()
	case "model_comparison":
		return w.ModelComparison.max()
	case "chromaticity":
		return w.Chromaticity.max()
	case "ff_prime":
		return w.FFPrime
	}
	return 0
}

// Logistic maps a score to the probability that a signal is planetary:
//
//	P(planet) = 1 / (1 + exp(A + B·score))
//
// fitted by maximum likelihood to the verdicts of simulated stars whose
// truth is known (Platt scaling; Platt 1999).
type Logistic struct {
	A, B float64
}

// of returns the probability of score s.
func (l Logistic) of(s float64) float64 {
	return 1 / (1 + math.Exp(l.A+l.B*s))
}

// Calibration maps a signal's score to the probability that it is
// planetary with one Logistic per kind of caveat (the key; "" for signals
// without one). A caveat is information the score does not carry: on
// the training seeds, signals that are an alias or harmonic of a
// stronger signal were planets at their own period far less often than
// signals at the same score whose only doubt is their own alias, and
// these far less often than signals with no caveat (docs/methods.md
// §14.16). A nil Calibration, or a kind missing from it, means the
// default of that kind.
//
// Only the kinds of calibratedKinds are calibrated. The others — a period
// at a rotation harmonic, at the magnetic cycle or beyond the data span,
// or a signal that is not significant with correlated noise — are
// caveats where the data cannot tell the two explanations apart, so the
// share of planets among such signals is set by how often planets and
// activity land there, which a simulated case mix (one case in three
// puts a planet at P_rot) cannot tell: they keep the uncaveated mapping
// with the planet-side evidence set aside (score at least 0), at most
// even odds.
type Calibration map[string]Logistic

// calibratedKinds are the caveat kinds with a logistic of their own (""
// for signals without a caveat): those where the caveat is a doubt about
// the period or about which signal is the real one.
var calibratedKinds = []string{"", CaveatRelative, CaveatAlias}

// defaultCalibration is the mapping in use, fitted by FitCalibration to
// the signals of training seeds: the FF' generator's seeds 21–212 with
// their indicators and 21–116 from their RVs alone, and the simulator's
// seeds 1–15 (TestCalibrationMisses prints the fit of the seeds it runs;
// docs/methods.md §14.16 gives the counts and checks).
var defaultCalibration = Calibration{
	"":             {A: -0.196, B: 12.35},
	CaveatRelative: {A: 2.78, B: 4.73},
	CaveatAlias:    {A: 2.01, B: 5.52},
}

// of returns the probability of a signal with score s and, when caveat,
// a caveat of the given kind. A caveat of a kind with no mapping keeps
// the mapping of signals without one with the signal's planet-side
// evidence set aside (score at least 0).
func (c Calibration) of(caveat bool, kind string, s float64) float64 {
	if !caveat {
		l, _ := c.mapping("")
		return l.of(s)
	}
	if l, ok := c.mapping(kind); ok && kind != "" {
		return l.of(s)
	}
	open, _ := c.mapping("")
	return open.of(math.Max(s, 0))
}

// mapping returns the Logistic of a kind: c's, else the default's; ok is
// false when neither has one.
func (c Calibration) mapping(kind string) (l Logistic, ok bool) {
	if l, ok = c[kind]; ok {
		return l, true
	}
	l, ok = defaultCalibration[kind]
	return l, ok
}

// chi2Survival returns P(χ²_dof ≥ x).
func chi2Survival(x float64, dof int) float64 {
	if dof <= 0 {
		return 1
	}
	return distuv.ChiSquared{K: float64(dof)}.Survival(x)
}
