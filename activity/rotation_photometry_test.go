package activity

import (
	"math"
	"strings"
	"testing"
)

// The light curve's period joins the indicators' hypotheses with its
// weight: share w/(1+w) (arithmetic of the weighting), an indicator
// hypothesis at the same period adds its share to it, and one elsewhere
// keeps its share of the rest.
func TestWithLightCurve(t *testing.T) {
	lc := RotationEstimate{Method: "light curve (x)", Period: 20, Err: 0.5}
	only := withLightCurve(lc, nil, 4)
	if len(only) != 1 || only[0].Share != 1 || only[0].Period != 20 {
		t.Fatalf("alone: %+v", only)
	}
	ind := []RotationHypothesis{{Period: 10.1, Err: 0.3, Share: 0.6, Why: "highest peak"}, {Period: 20.6, Err: 0.8, Share: 0.4, Why: "twice the highest peak"}}
	h := withLightCurve(lc, ind, 4)
	if len(h) != 2 {
		t.Fatalf("got %+v", h)
	}
	// 4/5 + 0.4/5 = 0.88 for the light curve's period; 0.6/5 = 0.12 for
	// the indicators' 10.1 d.
	if math.Abs(h[0].Share-0.88) > 1e-12 || h[0].Period != 20 || !strings.HasPrefix(h[0].Why, lightCurveWhy) {
		t.Errorf("light curve's hypothesis %+v", h[0])
	}
	if math.Abs(h[1].Share-0.12) > 1e-12 || h[1].Period != 10.1 {
		t.Errorf("indicators' hypothesis %+v", h[1])
	}
	// A weight below 1 lets indicators that disagree lead: 1/1.5 against
	// 0.5/1.5.
	h = withLightCurve(lc, []RotationHypothesis{{Period: 33, Err: 1, Share: 1}}, 0.5)
	if h[0].Period != 33 || math.Abs(h[0].Share-2.0/3) > 1e-12 || math.Abs(h[1].Share-1.0/3) > 1e-12 {
		t.Errorf("weight 0.5: %+v", h)
	}
}
