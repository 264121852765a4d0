package starsim

import (
	"math"
	"testing"
)

// The light curve is the same disk as the spectra: at the reference
// wavelength its noise-free flux equals each epoch's Flux (the total weight
// of the disk's velocity histogram), and it has the planned gaps and noise.
func TestLightCurve(t *testing.T) {
	sc := oneSpot(5, 0.02, 40)
	sc.Observing.End = 160
	sc.Observing.Step = 1.5
	res := mustSimulate(t, sc, 3, nil)
	var times []float64
	for _, e := range res.Epochs {
		times = append(times, e.Time)
	}
	f := res.DiskFlux(times, RefWavelength)
	for i, e := range res.Epochs {
		if math.Abs(f[i]-e.Flux) > 1e-12 {
			t.Fatalf("epoch %d: disk flux %v, epoch flux %v", i, f[i], e.Flux)
		}
	}
	plan := &Photometry{Noise: 1e-3}
	lc, err := res.LightCurve(plan)
	if err != nil {
		t.Fatal(err)
	}
	n := len(lc.Time)
	// 60 days at 30-minute cadence less two sector gaps (1 d each) and
	// about 10% outages (the plan's defaults).
	full := 60 * 48.0
	if n < int(0.8*full) || n > int(0.97*full) {
		t.Errorf("%d points of %g", n, full)
	}
	var dip, resid float64
	for i := range lc.Time {
		dip = math.Max(dip, 1-lc.TrueFlux[i])
		d := lc.Flux[i] - lc.TrueFlux[i]
		resid += d * d
		if lc.Sector[i] != "season1" {
			t.Errorf("60 days are one season, got %q", lc.Sector[i])
		}
	}
	// A 2% spot 3000 K cooler dims the star by about 2% at disc centre
	// (limb darkening raises it, the contrast of 0.02 at 6500 Å lowers it).
	if dip < 0.01 || dip > 0.04 {
		t.Errorf("deepest dip %v, want about 0.02", dip)
	}
	if rms := math.Sqrt(resid / float64(n)); math.Abs(rms-1e-3) > 1e-4 {
		t.Errorf("noise rms %v, want 1e-3", rms)
	}
	lc2, _ := res.LightCurve(plan)
	if lc2.Flux[n/2] != lc.Flux[n/2] {
		t.Error("the same seed gave a different light curve")
	}
}
