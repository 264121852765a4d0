package starsim

import (
	"math"
	"testing"
)

// quietScenario returns an unspotted star with a linear limb-darkening law
// and no convective blueshift, observed a few times.
func quietScenario(vsini, sigma, eps float64) *Scenario {
	return &Scenario{
		Name:      "quiet",
		Star:      Star{VEq: vsini, RotationPeriod: 10, LinearLimb: true, LimbU1: eps, LineSigma: sigma},
		Observing: Observing{Start: 100, End: 103, Step: 1},
		Spectrum:  smallSpectrum,
	}
}

// TestGrayKernel checks the disk-integrated profile of an unspotted star
// against Gray's rotational broadening kernel with linear limb darkening
// convolved with the local Gaussian (docs/methods.md §13; reference FWHMs from
// scipy in testdata/starsim/ref.json). The issue asks for FWHM within 1 %.
func TestGrayKernel(t *testing.T) {
	ref := loadRef(t)
	if len(ref.GrayFWHM) == 0 {
		t.Fatal("no reference values")
	}
	for _, c := range ref.GrayFWHM {
		sc := quietScenario(c.VSinI, c.Sigma, c.Eps)
		if c.Eps == 0 {
			// An explicit 0, as a scenario file would give it.
			sc.zeros = map[string]bool{"star.limb_u1": true}
		}
		res := mustSimulate(t, sc, 1, nil)
		p, err := res.Profile(0)
		if err != nil {
			t.Fatal(err)
		}
		got := halfWidth(p.Velocity, p.Flux)
		if rel := math.Abs(got/c.FWHM - 1); rel > 0.01 {
			t.Errorf("vsini %g, σ %g, ε %g: FWHM = %.5f km/s, want %.5f (scipy) within 1%%, off by %.3g", c.VSinI, c.Sigma, c.Eps, got, c.FWHM, rel)
		}
		// Tighter than the issue asks: the 200-cell grid is good to 0.2 %.
		if rel := math.Abs(got/c.FWHM - 1); rel > 0.002 {
			t.Errorf("vsini %g: FWHM off by %.3g, more than the grid's 0.2 %%", c.VSinI, rel)
		}
	}
}

// TestQuietStarRV checks that an unspotted star has no activity RV: the
// Gaussian-fit centre of its profile is 0 to 1 mm/s without convective
// blueshift (the grid is symmetric), its bisector span is 0, and with a
// convective blueshift the activity RV (relative to the quiet star) is 0
// while the raw centre is a blueshift between the disk-average projection
// and the disk-centre value.
func TestQuietStarRV(t *testing.T) {
	sc := quietScenario(3, 2, 0.6)
	res := mustSimulate(t, sc, 1, nil)
	p, _ := res.Profile(0)
	fit, err := FitGaussian(p)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(fit.V0*1e6) > 1 {
		t.Errorf("quiet star RV = %.3g mm/s, want |RV| < 1 mm/s", fit.V0*1e6)
	}
	if b := p.BIS(); math.Abs(b*1e6) > 1 {
		t.Errorf("quiet star BIS = %.3g mm/s, want 0", b*1e6)
	}
	sc.Star.ConvectiveBlueshift = 350
	sc.Star.LinearLimb = false
	res = mustSimulate(t, sc, 1, nil)
	for _, e := range res.Epochs {
		if math.Abs(e.ActivityRV) > 1e-3 {
			t.Errorf("t = %g: activity RV %.3g m/s with no active region, want 0 to 1 mm/s", e.Time, e.ActivityRV)
		}
	}
	p, _ = res.Profile(0)
	fit, _ = FitGaussian(p)
	// The local shift is −350 μ m/s; weighted by the limb-darkened disk, μ
	// averages between 1/2 and 1.
	if v := fit.V0 * 1000; !(v > -350 && v < -175) {
		t.Errorf("raw centre with convective blueshift = %.1f m/s, want in (−350, −175)", v)
	}
}

// TestPlanck checks the Planck law against astropy's BlackBody
// (testdata/starsim/ref.json) and the spot contrast against its definition.
func TestPlanck(t *testing.T) {
	ref := loadRef(t)
	for _, c := range ref.Planck {
		if got := Planck(c.Lambda, c.T); math.Abs(got/c.B-1) > 1e-9 {
			t.Errorf("Planck(%g Å, %g K) = %.10g, want %.10g (astropy)", c.Lambda, c.T, got, c.B)
		}
	}
	// The Wien limit: B(T−dT)/B(T) → exp(−hc/λk (1/(T−dT) − 1/T)) when
	// hc/λkT ≫ 1 [analytic]; at 3000 Å and 3000/2000 K it holds to 1e-6.
	x := hPlanck * cLight / (3000e-10 * kBoltz)
	want := math.Exp(-x * (1/2000.0 - 1/3000.0))
	if got := SpotContrast(3000, 3000, 1000); math.Abs(got/want-1) > 1e-6 {
		t.Errorf("SpotContrast Wien limit = %.8g, want %.8g", got, want)
	}
	if got := SpotContrast(5500, 5750, 0); got != 1 {
		t.Errorf("SpotContrast with dT = 0 = %v, want 1", got)
	}
}

func TestLimbDarkening(t *testing.T) {
	for _, c := range []struct{ mu, u1, u2, want float64 }{
		{1, 0.45, 0.2, 1},                  // disk centre [definition]
		{0, 0.45, 0.2, 0.35},               // limb: 1 − u1 − u2
		{0.5, 0.6, 0, 0.7},                 // linear: 1 − 0.6·0.5
		{0.5, 0.45, 0.2, 1 - 0.225 - 0.05}, // quadratic at μ = 0.5
	} {
		if got := LimbDarkening(c.mu, c.u1, c.u2); math.Abs(got-c.want) > 1e-15 {
			t.Errorf("LimbDarkening(%g, %g, %g) = %v, want %v", c.mu, c.u1, c.u2, got, c.want)
		}
	}
}
