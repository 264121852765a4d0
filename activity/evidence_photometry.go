package activity

import (
	"fmt"
	"math"

	"spotsift/activity/photometry"
)

// FFPrimeWeight is the weight toward activity of a signal that the FF'
// prediction from the light curve explains. It is not yet among Weights:
// the calibration with photometry (TestCalibrationPhotometry) reports its
// effect, and it joins them when the verdict's weights are next set.
const FFPrimeWeight = 2.0

// ffPrime is the test of the FF' prediction (Aigrain, Pont & Zucker 2012):
// where the light curve covers the RV epochs, the spot RV it predicts (F F'
// and F² regressors, see photometry.PredictFFPrime) is fitted to the
// signal's own RVs together with the signal's sinusoid. When the FF' terms
// are needed (ΔBIC ≤ −10 against offsets alone; Kass & Raftery 1995, from
// memory) and take more than half of the sinusoid's amplitude, the signal
// is the spots' doing: activity-like. Otherwise the test is shown for
// information.
func (tr *trial) ffPrime() {
	d := tr.d
	lc := d.opts.LightCurve
	if lc == nil {
		return
	}
	// Local fits over a tenth of the rotation period (0.5 d when unknown)
	// follow a spot's passage without smoothing it away.
	window := 0.5
	if p := float64(tr.rot.Period); p > 0 {
		window = p / 10
	}
	pred, err := photometry.PredictFFPrime(lc, d.t, window)
	if err != nil {
		tr.skipped("ff_prime", "the light curve does not cover the RV epochs")
		return
	}
	fit, err := photometry.FitFFPrime(pred, tr.own, d.err, d.inst, tr.f)
	if err != nil {
		tr.skipped("ff_prime", fmt.Sprintf("%d RV epochs within the light curve, too few for the FF' fit", pred.NCovered()))
		return
	}
	ratio := fit.K1 / fit.K0
	e := Evidence{Name: "ff_prime", Value: Num(ratio), Threshold: 0.5}
	switch {
	case !(fit.K0 >= 3*fit.K0Err):
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("on the %d RV epochs the light curve covers, the signal's sinusoid is not detected (%.2f ± %.2f m/s), so the FF' prediction cannot be tested against it", fit.N, fit.K0, fit.K0Err)
	case fit.DeltaBIC <= -10 && ratio < 0.5:
		e.Points, e.Weight = TowardActivity, FFPrimeWeight
		e.Reason = fmt.Sprintf("the spot RV predicted from the light curve (FF', ΔBIC = %.1f over %d epochs) takes the signal's sinusoid from %.2f to %.2f ± %.2f m/s", fit.DeltaBIC, fit.N, fit.K0, fit.K1, fit.K1Err)
	default:
		e.Points = TowardNeither
		e.Reason = fmt.Sprintf("the spot RV predicted from the light curve (FF', ΔBIC = %.1f over %d epochs) leaves the signal's sinusoid at %.2f ± %.2f m/s of %.2f", fit.DeltaBIC, fit.N, fit.K1, fit.K1Err, fit.K0)
	}
	if math.IsNaN(ratio) {
		e.Value = Num(math.NaN())
	}
	tr.add(e)
}
