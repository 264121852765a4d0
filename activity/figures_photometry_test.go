package activity

import (
	"bytes"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"spotsift/activity/photometry"
)

// The photometry figure draws a light curve longer than its bin limit,
// names the light curve's period in its caption, and says so when the
// light curve shows no rotation.
func TestFigPhotometry(t *testing.T) {
	lc := &photometry.LightCurve{Name: "lc"}
	for i := 0; i < 5000; i++ {
		ti := 100 + 0.02*float64(i)
		lc.Time = append(lc.Time, ti)
		lc.Flux = append(lc.Flux, 1+0.01*math.Sin(2*math.Pi*ti/7))
		lc.Err = append(lc.Err, 1e-3)
	}
	dg := &Diagnosis{Rotation: Rotation{Period: 7, Err: 0.1, Estimates: []RotationEstimate{{Method: lightCurveMethod + " (ACF)", Period: 7.01, Err: 0.05}}}}
	f := figPhotometry(lc, dg)
	if f == nil {
		t.Fatal("no figure")
	}
	if !strings.Contains(f.caption, "7.01 d") {
		t.Errorf("caption %q", f.caption)
	}
	b, err := f.svg()
	if err != nil || !bytes.Contains(b, []byte("<svg")) {
		t.Fatalf("svg: %v", err)
	}
	rng := rand.New(rand.NewPCG(1, 1))
	for i := range lc.Flux {
		lc.Flux[i] = 1 + 1e-3*rng.NormFloat64()
	}
	dg.Rotation.Estimates = nil
	if f := figPhotometry(lc, dg); f == nil || !strings.Contains(f.caption, "no rotation detected") {
		t.Errorf("flat light curve: caption %v", f)
	}
}
