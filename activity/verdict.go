package activity

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"io"
	"math"
	"os"
	"strconv"

	"spotsift/rvfit"
)

// Verdicts of a signal.
const (
	PlanetLike   = "planet-like"
	ActivityLike = "activity-like"
	Inconclusive = "inconclusive"
)

// Which way an evidence item points.
const (
	TowardPlanet   = "planet"
	TowardActivity = "activity"
	TowardNeither  = "neither"
)

// Kinds of caveat (Signal.CaveatKind): what keeps a signal from being
// planet-like whatever its score. The kinds that doubt the period
// (relative, period_alias) have a calibrated probability of their own; the
// others, where the data cannot tell a planet from activity, get at most
// even odds (Calibration).
const (
	CaveatRelative     = "relative"     // an alias or harmonic of a stronger signal's period
	CaveatAlias        = "period_alias" // its own 1-day or 1-year alias fits about as well
	CaveatRotation     = "rotation"     // at a harmonic of a rotation hypothesis, or where the activity–rotation relations put the rotation
	CaveatCycle        = "cycle"        // at the magnetic cycle, or long with no indicator that follows a cycle
	CaveatBaseline     = "baseline"     // longer than the data span
	CaveatSignificance = "significance" // not significant once correlated noise is allowed for
	CaveatYear         = "year"         // one year within its precision, where instruments' systematics repeat
)

// Caution is the sentence every verdict output carries.
const Caution = "This verdict is a statistical diagnosis of the data given; it informs, and does not replace, the team's scientific judgement."

// Num is a float64 that is written to JSON as null when it is NaN or
// infinite (JSON has no such numbers).
type Num float64

// MarshalJSON writes the number, or null.
func (x Num) MarshalJSON() ([]byte, error) {
	f := float64(x)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, f, 'g', -1, 64), nil
}

// UnmarshalJSON reads a number, or null as NaN.
func (x *Num) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*x = Num(math.NaN())
		return nil
	}
	var f float64
	if err := json.Unmarshal(b, &f); err != nil {
		return err
	}
	*x = Num(f)
	return nil
}

// Evidence is one test of a signal: a number, the threshold it is judged
// against, the side it points to, its signed contribution to the score and
// a one-line reason.
type Evidence struct {
	// Name identifies the test, e.g. "rotation_match" or
	// "indicator_power:fwhm".
	Name string `json:"name"`
	// Value is the test's statistic (its meaning is in Reason), Threshold
	// the value at which the test changes side.
	Value     Num `json:"value"`
	Threshold Num `json:"threshold"`
	// Bound is "<" when Value is an upper limit (a Monte Carlo p-value
	// with no draw reaching the observed statistic is bounded by the
	// resolution 1/(draws+1), not equal to it), "" otherwise.
	Bound string `json:"bound,omitempty"`
	// Points is TowardPlanet, TowardActivity or TowardNeither.
	Points string `json:"points"`
	// Weight is the contribution to the score: positive toward activity,
	// negative toward a planet, zero for items shown for information.
	Weight float64 `json:"weight"`
	// Reason says in one line what the test found.
	Reason string `json:"reason"`
}

// Skipped names a test that could not be run on a signal, and why.
type Skipped struct {
	Name string `json:"name"`
	Why  string `json:"why"`
}

// Signal is one periodic RV signal with its verdict.
type Signal struct {
	// Period in days and frequency in c/d.
	Period Num `json:"period"`
	Freq   Num `json:"freq"`
	// Source is "given" (named by the user), "periodogram" (found by
	// iterative prewhitening) or "eccentric orbit" (found by the eccentric
	// orbit search, and modelled as a Keplerian in the joint fit).
	Source string `json:"source"`
	// Power is the fraction of χ² the signal removes from a joint fit of
	// all the other signals; FAP its false-alarm probability (Baluev 2008
	// for a found peak, the single-frequency value for a given period).
	Power Num `json:"power"`
	FAP   Num `json:"fap"`
	// FAPCorrelated is the false-alarm probability with the χ² gain
	// divided by β², the red-noise factor of the joint fit's residuals at
	// the period (Pont, Zucker & Queloz 2006).
	FAPCorrelated Num `json:"fap_correlated"`
	// PeriodGiven is the period as given, before its refinement within the
	// frequency resolution (0 for a signal found in the periodogram).
	PeriodGiven Num `json:"period_given,omitempty"`
	// K is the adopted semi-amplitude in m/s, KErr its one-sigma error and
	// KFrom the model it comes from: KFromKeplerian (the orbital solution,
	// for planet-like and inconclusive signals, or the eccentric orbit
	// search's Keplerian) or KFromSinusoid (the joint sinusoid fit, for
	// activity-like signals or when no Keplerian fit is available). Diagnose sets the sinusoid's; AdoptK (which the
	// commands and WriteReport call) replaces it by the Keplerian fit's.
	K     Num    `json:"k"`
	KErr  Num    `json:"k_err"`
	KFrom string `json:"k_from"`
	// Amplitude is the semi-amplitude in m/s of the signal's sinusoid in
	// the diagnosis's joint fit of every signal and the instrument offsets
	// (for a signal of the eccentric orbit search, its Keplerian's), and
	// AmplitudeErr its one-sigma error: what the tests start from, not the
	// K to quote (that is K).
	Amplitude    Num `json:"sinusoid_amplitude"`
	AmplitudeErr Num `json:"sinusoid_amplitude_err"`
	// Verdict is PlanetLike, ActivityLike or Inconclusive.
	Verdict string `json:"verdict"`
	// Score lies in [−1, 1]: the weighted evidence, positive toward
	// activity, divided by the weight of every test spotsift knows (tests
	// that could not run count as zero, so missing data pull the score
	// toward 0).
	Score float64 `json:"score"`
	// Coverage is the fraction of the total test weight that could run.
	Coverage float64 `json:"coverage"`
	// Probability is the calibrated probability that the signal is
	// planetary, from its score and the kind of its caveat (see
	// Calibration); null when not computed.
	Probability Num `json:"probability"`
	// Caveat, when set, says why the signal cannot be planet-like whatever
	// its score: it sits at P_rot or P_rot/2 of a rotation hypothesis, or
	// it is an alias or a harmonic of a stronger signal, among others;
	// CaveatKind names its kind (one of the Caveat… constants).
	Caveat     string `json:"caveat,omitempty"`
	CaveatKind string `json:"caveat_kind,omitempty"`
	// RelatedTo, when set, names the stronger signal this one is an alias
	// or harmonic of (e.g. "1-day alias of signal 1 (12.92 d)").
	RelatedTo string `json:"related_to,omitempty"`
	// Summary is the one-line reason for the verdict.
	Summary  string     `json:"summary"`
	Evidence []Evidence `json:"evidence"`
	Skipped  []Skipped  `json:"skipped,omitempty"`
}

// Rotation is the star's rotation period as spotsift adopted it, with
// every estimate behind it.
type Rotation struct {
	// Period and Err in days; Period is NaN when nothing could be
	// estimated.
	Period Num `json:"period"`
	Err    Num `json:"err"`
	// Source is the Method of the adopted estimate.
	Source    string             `json:"source"`
	Estimates []RotationEstimate `json:"estimates"`
	// Agreement says whether the estimates agree (directly or as
	// harmonics).
	Agreement string `json:"agreement"`
	// Hypotheses are the rotation periods the data support, with their
	// shares of the posterior, the adopted one first; every test that
	// refers to the rotation considers each of them.
	Hypotheses []RotationHypothesis `json:"hypotheses,omitempty"`
	// Cycle is the magnetic cycle seen in an activity indicator, nil when
	// none is.
	Cycle *CycleEstimate `json:"cycle,omitempty"`
}

// RotationHypothesis is one rotation period the data support.
type RotationHypothesis struct {
	// Period and Err in days.
	Period float64 `json:"period"`
	Err    float64 `json:"err"`
	// Share is its share of the posterior among the hypotheses (they add
	// up to 1).
	Share float64 `json:"share"`
	// FAP is the false-alarm probability of its peak in the joint
	// periodogram of the indicators (NaN for a star file's period).
	FAP Num `json:"fap"`
	// Why says where the hypothesis comes from.
	Why string `json:"why"`
}

// CycleEstimate is a magnetic cycle seen in an activity indicator.
type CycleEstimate struct {
	Period    float64 `json:"period"`
	Err       float64 `json:"err"`
	Indicator string  `json:"indicator"`
	FAP       float64 `json:"fap"`
}

// Provenance records what a diagnosis was computed from.
type Provenance struct {
	Version string `json:"version"`
	Seed    uint64 `json:"seed"`
	// Command is the full command line that produced the diagnosis.
	Command string      `json:"command,omitempty"`
	Inputs  []InputHash `json:"inputs,omitempty"`
	// Settings are the options that shaped the result beyond the command
	// line (for a survey star: the survey seed, the shard, the diagnosis
	// options), so that the star's report can be reproduced from them.
	Settings map[string]string `json:"settings,omitempty"`
}

// InputHash is the SHA-256 of one input file.
type InputHash struct {
	Path   string `json:"path"`
	SHA256 string `json:"sha256"`
}

// Diagnosis is the verdict on every signal of one star.
type Diagnosis struct {
	Star     string   `json:"star"`
	NEpochs  int      `json:"n_epochs"`
	Baseline Num      `json:"baseline"`
	Rotation Rotation `json:"rotation"`
	Signals  []Signal `json:"signals"`
	// Notes are warnings about the diagnosis as a whole (tests that could
	// not run for any signal, too few epochs for a test...).
	Notes      []string   `json:"notes,omitempty"`
	Caution    string     `json:"caution"`
	Provenance Provenance `json:"provenance"`

	// details holds what the figures need beyond the JSON: nil for a
	// diagnosis read back from a file.
	details *details
}

// details is the working data of a diagnosis that the report draws.
type details struct {
	// orbit is the orbital solution AdoptK computed (orbitDone once it
	// ran; orbit may be nil).
	orbit     *OrbitSolution
	orbitDone bool
	grid      rvfit.Grid
	signals   []signalDetails
}

// signalDetails is what the tests of one signal computed.
type signalDetails struct {
	freq    float64
	own     []float64 // the signal's own RVs (offsets and other signals removed)
	comp    []float64 // the fitted sinusoid at each epoch
	seasons []seasonPoint
	stacked *stackedCurve
	gp      *gpModel  // GP + sinusoid model of the model comparison, nil if not run
	gpFit   *gpResult // its MAP
	// multi is the multi-output GP with the sinusoid of the whole-model
	// comparison (RVs and indicators), nil when it did not run.
	multi *GPActivityFit
	// indVals holds, by indicator name, the indicator as its correlation
	// with the signal saw it (zero points, and the cycle and rotation
	// terms fitted beside the period, removed; NaN where it has no value).
	indVals map[string][]float64
}

// seasonPoint is the signal fitted in one season (or half).
type seasonPoint struct {
	tMid, amp, ampErr, phase, phaseErr float64
	n                                  int
}

// stackedCurve is the power at the signal's frequency against the number
// of epochs, with the band of the strictly periodic simulations.
type stackedCurve struct {
	n0               int
	obs, lo, med, hi []float64
}

// HashFile returns the hex SHA-256 of a file's bytes, as provenance blocks
// record their inputs.
func HashFile(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", err
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", err
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}
