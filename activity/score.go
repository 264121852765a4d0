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

// Weights holds every test's weight, in one place. The asymmetries follow
// docs/methods.md §3 and §12: a period at a rotation harmonic or an indicator
// varying with the signal is strong evidence of activity, while their
// absence is weak evidence of a planet (spot signals of slow rotators may
// leave the line shape untouched, Desort et al. 2007); a Keplerian that
// survives a joint fit with activity noise is the strongest planet-side
// evidence. The values were set by running the calibration (see
// TestCalibration and the README's confusion matrix) over the simulator's
// scenarios, not by tuning to a single test.
var Weights = struct {
	RotationMatch        float64 // period at P_rot or P_rot/2
	RotationMatchWeak    float64 // period at P_rot/3, 2 P_rot or an alias of a harmonic
	RotationMismatch     float64 // period unrelated to a known rotation
	IndicatorPower       Weight  // indicator periodograms at the signal's frequency
	IndicatorCorrelation Weight  // indicator against the fitted signal
	SeasonCoherence      Weight  // amplitude and phase season by season
	StackedGrowth        Weight  // growth of power with epochs
	ModelComparison      Weight  // GP alone against GP + Keplerian
	Chromaticity         Weight  // chromatic slope at the signal's frequency
}{
	RotationMatch:        3,
	RotationMatchWeak:    1.5,
	RotationMismatch:     1,
	IndicatorPower:       Weight{Activity: 4, Planet: 1},
	IndicatorCorrelation: Weight{Activity: 1.5, Planet: 0.5},
	SeasonCoherence:      Weight{Activity: 1.5, Planet: 1},
	StackedGrowth:        Weight{Activity: 1, Planet: 0.5},
	ModelComparison:      Weight{Activity: 2, Planet: 2.5},
	Chromaticity:         Weight{Activity: 1.5, Planet: 0.5},
}

// totalWeight is the weight of every test spotsift knows: the score's
// denominator, so that tests that could not run count as zero.
func totalWeight() float64 {
	w := Weights
	return math.Max(w.RotationMatch, w.RotationMismatch) + w.IndicatorPower.max() + w.IndicatorCorrelation.max() +
		w.SeasonCoherence.max() + w.StackedGrowth.max() + w.ModelComparison.max() +
		w.Chromaticity.max()
}

// IndicatorAlpha is the family-wise level (Holm-corrected) at which an
// indicator's power at the signal's period, or its correlation with the
// fitted signal, counts as activity.
const IndicatorAlpha = 0.001

// VerdictThreshold is the |score| above which a significant signal gets a
// verdict other than inconclusive.
const VerdictThreshold = 0.2

// Score sets sig.Score, sig.Coverage, sig.Verdict and sig.Summary from its
// evidence:
//
//	score = Σ weight_i / W,  W = Σ over all tests of max(activity, planet weight)
//
// A signal whose false-alarm probability exceeds fapThreshold is
// inconclusive whatever its score; otherwise score ≥ VerdictThreshold is
// activity-like, score ≤ −VerdictThreshold planet-like, anything between
// inconclusive.
func Score(sig *Signal, fapThreshold float64) {
	total := totalWeight()
	sum := 0.0
	ran := map[string]float64{}
	for _, e := range sig.Evidence {
		sum += e.Weight
		fam := family(e.Name)
		ran[fam] = math.Max(ran[fam], familyWeight(fam))
	}
	cov := 0.0
	for _, w := range ran {
		cov += w
	}
	sig.Score = sum / total
	sig.Coverage = cov / total
	switch {
	case !(float64(sig.FAP) <= fapThreshold):
		sig.Verdict = Inconclusive
		sig.Summary = fmt.Sprintf("not significant (false-alarm probability %.2g above %g)", float64(sig.FAP), fapThreshold)
		return
	case sig.Score >= VerdictThreshold:
		sig.Verdict = ActivityLike
	case sig.Score <= -VerdictThreshold:
		sig.Verdict = PlanetLike
	default:
		sig.Verdict = Inconclusive
	}
	why := summaryOf(sig)
	switch sig.Verdict {
	case Inconclusive:
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
func familyWeight(fam string) float64 {
	w := Weights
	switch fam {
	case "rotation_match":
		return math.Max(w.RotationMatch, w.RotationMismatch)
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
	}
	return 0
}

// chi2Survival returns P(χ²_dof ≥ x).
func chi2Survival(x float64, dof int) float64 {
	if dof <= 0 {
		return 1
	}
	return distuv.ChiSquared{K: float64(dof)}.Survival(x)
}
