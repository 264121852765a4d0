package activity

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"spotsift/activity/photometry"
)

// lightCurveMethod prefixes the Method of the rotation estimate from the
// light curve (Options.LightCurve).
const lightCurveMethod = "light curve"

// lightCurveWhy is the Why of the rotation hypothesis from the light curve.
const lightCurveWhy = "measured in the light curve"

// DefaultLightCurveWeight is the weight of the light curve's rotation
// period against the indicators' hypotheses taken together (which weigh
// 1): the odds, with the rule of succession, that the light curve is
// right where the two disagree, measured on the calibration's training
// stars (TestCalibrationPhotometry, seeds 1–3: the light curve right 2
// times, the indicators 0, (2+1)/(0+1) = 3). Its share is then 3/4; an
// indicators' hypothesis elsewhere keeps a share of 10% or more (the
// level at which a rotation hypothesis bars a planet-like verdict at its
// P_rot and P_rot/2) when it held 40% or more of the indicators' own.
const DefaultLightCurveWeight = 3

// lightCurveEstimates returns the rotation period the light curve gives
// (see photometry.EstimateRotation), as one estimate; none when there is
// no light curve or it shows no rotation.
func (d *data) lightCurveEstimates() []RotationEstimate {
	lc := d.opts.LightCurve
	if lc == nil {
		return nil
	}
	r, err := photometry.EstimateRotation(lc, &photometry.RotationOptions{SkipGP: d.opts.SkipModels, Seed: d.opts.Seed})
	if err != nil || !r.Detected {
		return nil
	}
	return []RotationEstimate{{
		Method: fmt.Sprintf("%s (%s)", lightCurveMethod, r.Method),
		Period: r.Period, Err: r.Err,
		Note: fmt.Sprintf("semi-amplitude %.2g of the flux; %s", r.Amplitude, r.Agreement),
	}}
}

// withLightCurve returns the rotation hypotheses when the light curve
// measures a period: the light curve's period with weight w (zero: the
// default) and the indicators' hypotheses (ind, shares adding up to 1)
// with weight 1 between them, so that the light curve's share is
// w/(1+w) and each indicator hypothesis keeps its share of the rest. An
// indicator hypothesis within 2σ or 10% of the light curve's period is the
// same period measured twice: its share joins the light curve's. Without
// indicator hypotheses the light curve's period is the only one. Sorted by
// share.
func withLightCurve(lc RotationEstimate, ind []RotationHypothesis, w float64) []RotationHypothesis {
	if !(w > 0) {
		w = DefaultLightCurveWeight
	}
	top := RotationHypothesis{Period: lc.Period, Err: lc.Err, Share: 1, Why: lightCurveWhy, FAP: Num(math.NaN())}
	if len(ind) == 0 {
		return []RotationHypothesis{top}
	}
	top.Share = w / (1 + w)
	out := []RotationHypothesis{top}
	var joined []string
	for _, h := range ind {
		h.Share /= 1 + w
		if math.Abs(h.Period-lc.Period) <= math.Max(2*math.Hypot(h.Err, lc.Err), 0.1*lc.Period) {
			out[0].Share += h.Share
			joined = append(joined, fmt.Sprintf("%.4g d", h.Period))
			continue
		}
		out = append(out, h)
	}
	if len(joined) > 0 {
		out[0].Why += "; the indicators' joint periodogram agrees (" + strings.Join(joined, ", ") + ")"
	}
	sort.SliceStable(out, func(a, b int) bool { return out[a].Share > out[b].Share })
	return out
}

// indicatorSource names the source of an indicator hypothesis adopted as
// the rotation period: the joint periodogram, or the GP fit that refined
// it.
func indicatorSource(h RotationHypothesis) string {
	if strings.Contains(h.Why, "refined by gp fit to ") {
		return "gp fit to " + strings.SplitN(strings.SplitN(h.Why, "refined by gp fit to ", 2)[1], ";", 2)[0]
	}
	return "joint periodogram of the indicators"
}
