package activity

import (
	"fmt"

	"spotsift/activity/photometry"
)

// lightCurveMethod prefixes the Method of the rotation estimate from the
// light curve (Options.LightCurve).
const lightCurveMethod = "light curve"

// lightCurveEstimates returns the rotation period the light curve gives
// (see photometry.EstimateRotation), as one estimate; none when there is
// no light curve or it shows no rotation.
func (d *data) lightCurveEstimates() []RotationEstimate {
	lc := d.opts.LightCurve
	if lc == nil {
		return nil
	}
	r, err := photometry.EstimateRotation(lc, &photometry.RotationOptions{SkipGP: d.opts.SkipModels})
	if err != nil || !r.Detected {
		return nil
	}
	return []RotationEstimate{{
		Method: fmt.Sprintf("%s (%s)", lightCurveMethod, r.Method),
		Period: r.Period, Err: r.Err,
		Note: fmt.Sprintf("semi-amplitude %.2g of the flux; %s", r.Amplitude, r.Agreement),
	}}
}
