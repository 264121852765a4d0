package starsim_test

import (
	"bytes"
	"fmt"
	"math"
	"testing"

	"gonum.org/v1/gonum/stat"

	"spotsift/activity"
	"spotsift/activity/starsim"
	"spotsift/indicators"
)

func ExampleSimulate() {
	sc, err := starsim.DemoScenario("quiet-planet")
	if err != nil {
		fmt.Println(err)
		return
	}
	res, err := starsim.Simulate(sc, 1, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	s := res.Series()
	fmt.Println(sc.Name, "has", len(sc.Planets), "planet; columns:", s.Indicators[0].Name, s.Indicators[1].Name, s.Indicators[2].Name)
	fmt.Println("instruments:", s.Instruments())
	// Output:
	// Veyla-9 has 1 planet; columns: fwhm bis s_index
	// instruments: [ORCA KESTREL]
}

// TestMeasuredByIndicators measures simulated spectra with the indicators
// package (CCF against the simulator's own line list), in the observatory
// frame with a barycentric correction of up to 25 km/s, and checks that the
// barycentric RVs recover the planet's Keplerian within 5 σ of the
// photon noise that indicators reports, and that its noise estimate agrees
// with the simulator's (Bouchy et al. 2001) within 25 %, as do those of the
// FWHM and the bisector span: two independent
// implementations of the same physics.
func TestMeasuredByIndicators(t *testing.T) {
	if testing.Short() {
		t.Skip("measures 6 full spectra")
	}
	sc := &starsim.Scenario{
		Name:        "e2e",
		Star:        starsim.Star{VEq: 2.5, RotationPeriod: 20, ConvectiveBlueshift: 300},
		Planets:     []starsim.Planet{{Period: 3.7, K: 25, Tc: 2460000.9}},
		Observing:   starsim.Observing{Start: 2460000.6, End: 2460200.6, MaxEpochs: 6, Step: 30, BERVAmplitude: 25, BERVPhase: 40},
		Instruments: []starsim.Instrument{{Name: "A", SNR: 200, Resolution: 110000}},
		Spectrum:    starsim.SpectrumPlan{Full: true, Pixels: 200000, LambdaMin: 4500, LambdaMax: 6000, Lines: 2000},
	}
	res, err := starsim.Simulate(sc, 3, nil)
	if err != nil {
		t.Fatal(err)
	}
	wl, depth := res.LineList()
	mask, err := indicators.NewMask(wl, depth, false)
	if err != nil {
		t.Fatal(err)
	}
	var rv0 float64
	for i, e := range res.Epochs {
		sp, err := res.Spectrum(i)
		if err != nil {
			t.Fatal(err)
		}
		if sp.BERV != e.BERV || math.Abs(e.BERV) < 1000 {
			t.Fatalf("epoch %d: BERV %v in the spectrum, %v in the truth, want a few km/s", i, sp.BERV, e.BERV)
		}
		m, err := indicators.Measure(sp, mask, &indicators.Options{NoIndices: true})
		if err != nil {
			t.Fatal(err)
		}
		if !m.RV.OK() {
			t.Fatalf("epoch %d: %v", i, m.RV.Err)
		}
		truth := e.PlanetRV[0] + e.ActivityRV
		if i == 0 {
			// The CCF of a star with convective blueshift has its own zero
			// point: take it from the first epoch.
			rv0 = m.RV.Value - truth
		}
		got := m.RV.Value - rv0
		t.Logf("epoch %d: indicators RV %.3f ± %.3f m/s, truth %.3f, simulator σ %.3f; FWHM σ %.3f (sim %.3f), BIS σ %.3f (sim %.3f); FWHM %.1f (sim %.1f), BIS %.2f (sim %.2f)", i, got, m.RV.Sigma, truth, e.RVErr, m.FWHM.Sigma, e.FWHMErr, m.BIS.Sigma, e.BISErr, m.FWHM.Value, e.TrueFWHM, m.BIS.Value, e.TrueBIS)
		if d := math.Abs(got - truth); i > 0 && d > 5*math.Sqrt2*m.RV.Sigma {
			t.Errorf("epoch %d: indicators RV %.3f m/s, truth %.3f (σ %.3f)", i, got, truth, m.RV.Sigma)
		}
		if r := m.RV.Sigma / e.RVErr; r < 0.8 || r > 1.25 {
			t.Errorf("epoch %d: indicators σ_RV %.3f m/s, simulator %.3f m/s", i, m.RV.Sigma, e.RVErr)
		}
		// The line-shape errors, from the profile's fit covariance and
		// bisector gradient, agree with indicators' exact propagation on the
		// CCF to 20 % (they agree to about 10 %).
		if r := m.FWHM.Sigma / e.FWHMErr; r < 0.8 || r > 1.25 {
			t.Errorf("epoch %d: indicators σ_FWHM %.3f m/s, simulator %.3f m/s", i, m.FWHM.Sigma, e.FWHMErr)
		}
		if r := m.BIS.Sigma / e.BISErr; r < 0.8 || r > 1.25 {
			t.Errorf("epoch %d: indicators σ_BIS %.3f m/s, simulator %.3f m/s", i, m.BIS.Sigma, e.BISErr)
		}
	}
}

// TestStarFileReadsBack checks that the star file a simulation writes is
// read by the activity package, with the simulated v sin i and period.
func TestStarFileReadsBack(t *testing.T) {
	sc, err := starsim.DemoScenario("active-no-planet")
	if err != nil {
		t.Fatal(err)
	}
	sc.Observing.End = sc.Observing.Start + 20
	res, err := starsim.Simulate(sc, 1, nil)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := res.WriteStar(&buf); err != nil {
		t.Fatal(err)
	}
	st, err := activity.ParseStar(buf.Bytes(), "star.toml")
	if err != nil {
		t.Fatalf("%v\n%s", err, buf.String())
	}
	want := sc.Star.VEq * math.Sin(sc.Star.Inclination*math.Pi/180)
	if st.Name != sc.Name || math.Abs(st.VSinI-want) > 1e-12 || st.RotationPeriod != sc.Star.RotationPeriod || st.Vacuum || st.BV != res.Scenario.Star.BV {
		t.Errorf("star file read back as %+v", st)
	}
}

// TestSIndexMatchesIndicators checks the simulator's S-index against the
// indicators package measuring the same noise-free spectra: indicators
// returns the instrumental (H + K)/(R + V), which times SIndexScale (19.2)
// must equal the tabulated S to 0.1 % (it does to 2e-4), and both must follow the facular
// coverage.
func TestSIndexMatchesIndicators(t *testing.T) {
	sc := &starsim.Scenario{
		Name:        "chromo",
		Star:        starsim.Star{VEq: 3, RotationPeriod: 10, ConvectiveBlueshift: 300},
		Activity:    starsim.Activity{Regions: []starsim.Region{{Lat: 15, SpotArea: 0.01, FaculaArea: 0.06}}},
		Observing:   starsim.Observing{Start: 2460000, End: 2460009, Step: 1.5},
		Instruments: []starsim.Instrument{{Name: "A", SNR: 150, Resolution: 100000}},
		Spectrum:    starsim.SpectrumPlan{Full: true, Pixels: 30000, LambdaMin: 3850, LambdaMax: 4100, Lines: 60},
	}
	res, err := starsim.Simulate(sc, 2, &starsim.Options{NoNoise: true})
	if err != nil {
		t.Fatal(err)
	}
	for i, e := range res.Epochs {
		sp, err := res.Spectrum(i)
		if err != nil {
			t.Fatal(err)
		}
		s, _, err := indicators.SIndex(sp, 0, nil)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("epoch %d: S %.5f vs %.5f, f_fac %.4f", i, s*starsim.SIndexScale, e.TrueSIndex, e.FaculaFilling)
		if got := s * starsim.SIndexScale; math.Abs(got/e.TrueSIndex-1) > 0.001 {
			t.Errorf("epoch %d: indicators S × 19.2 = %.5f, simulator %.5f (facular filling %.4f)", i, got, e.TrueSIndex, e.FaculaFilling)
		}
	}
}

// TestChromaticSlopeByIndicators checks that the spot's chromatic RV
// reaches the spectra: indicators' chromatic slope (per-order RVs against
// ln λ, Zechmeister et al. 2018, A&A 609, A12) of a spotted star is
// anticorrelated with its RV (the cool spot removes more light in the blue,
// so the blue RV is the larger), while a planet alone leaves the slope
// unchanged.
func TestChromaticSlopeByIndicators(t *testing.T) {
	if testing.Short() {
		t.Skip("measures 20 full spectra")
	}
	run := func(sc *starsim.Scenario) (rv, slope, sigma []float64) {
		res, err := starsim.Simulate(sc, 4, nil)
		if err != nil {
			t.Fatal(err)
		}
		wl, depth := res.LineList()
		mask, err := indicators.NewMask(wl, depth, false)
		if err != nil {
			t.Fatal(err)
		}
		for i := range res.Epochs {
			sp, err := res.Spectrum(i)
			if err != nil {
				t.Fatal(err)
			}
			m, err := indicators.Measure(sp, mask, &indicators.Options{NoIndices: true})
			if err != nil {
				t.Fatalf("epoch %d: %v", i, err)
			}
			if !m.Chromatic.OK() {
				t.Fatalf("epoch %d: chromatic slope: %v", i, m.Chromatic.Err)
			}
			rv = append(rv, m.RV.Value)
			slope = append(slope, m.Chromatic.Value)
			sigma = append(sigma, m.Chromatic.Sigma)
		}
		return rv, slope, sigma
	}
	base := starsim.Scenario{
		Name:        "chromatic",
		Star:        starsim.Star{VEq: 6, RotationPeriod: 10},
		Observing:   starsim.Observing{Start: 2460000, End: 2460009.5, Step: 1},
		Instruments: []starsim.Instrument{{Name: "A", SNR: 300, Resolution: 100000}},
		Spectrum:    starsim.SpectrumPlan{Full: true, Pixels: 150000, Lines: 1500},
	}
	spotted := base
	spotted.Activity = starsim.Activity{Regions: []starsim.Region{{SpotArea: 0.02}}, SpotTempDiff: 1200}
	rv, slope, _ := run(&spotted)
	r := stat.Correlation(rv, slope, nil)
	if r > -0.7 {
		t.Errorf("spotted star: r(RV, chromatic slope) = %.3f, want < −0.7\nRV %.2f\nslope %.2f", r, rv, slope)
	}
	planet := base
	planet.Planets = []starsim.Planet{{Period: 4.1, K: 30}}
	prv, pslope, sigma := run(&planet)
	// A fixed per-order zero point (blends, strong lines) gives a constant
	// slope; a pure shift must not change it: no correlation with RV and a
	// scatter about the mean within the errors (χ²/ν < 3).
	if r := stat.Correlation(prv, pslope, nil); math.Abs(r) > 0.7 {
		t.Errorf("planet alone: r(RV, chromatic slope) = %.3f, want |r| < 0.7", r)
	}
	var mean, chi2 float64
	for _, v := range pslope {
		mean += v / float64(len(pslope))
	}
	for i, v := range pslope {
		chi2 += (v - mean) * (v - mean) / (sigma[i] * sigma[i])
	}
	if nu := float64(len(pslope) - 1); chi2/nu > 3 {
		t.Errorf("planet alone: chromatic slope scatters with χ²/ν = %.2f\nslope %.2f ± %.2f", chi2/nu, pslope, sigma)
	}
}

// TestHAlphaNaDFollowFaculae checks that the H-alpha and Na I D emission
// cores of the spectra strengthen with the visible facular coverage, as
// indicators' H-alpha (Gomes da Silva et al. 2011 bands) and Na I D (Díaz
// et al. 2007) indices see them: both correlate with the facular filling
// factor (r > 0.95) on noise-free spectra.
func TestHAlphaNaDFollowFaculae(t *testing.T) {
	sc := &starsim.Scenario{
		Name:        "chromo-red",
		Star:        starsim.Star{VEq: 3, RotationPeriod: 10},
		Activity:    starsim.Activity{Regions: []starsim.Region{{Lat: 20, SpotArea: 0.005, FaculaArea: 0.08}}},
		Observing:   starsim.Observing{Start: 2460000, End: 2460009.5, Step: 0.75},
		Instruments: []starsim.Instrument{{Name: "A", SNR: 150}},
		Spectrum:    starsim.SpectrumPlan{Full: true, Pixels: 60000, LambdaMin: 5700, LambdaMax: 6700, Lines: 100},
	}
	res, err := starsim.Simulate(sc, 2, &starsim.Options{NoNoise: true})
	if err != nil {
		t.Fatal(err)
	}
	var ff, ha, na []float64
	for i, e := range res.Epochs {
		sp, err := res.Spectrum(i)
		if err != nil {
			t.Fatal(err)
		}
		h, _, err := indicators.HAlphaIndex(sp, 0, 0)
		if err != nil {
			t.Fatal(err)
		}
		d, _, err := indicators.NaDIndex(sp, 0)
		if err != nil {
			t.Fatal(err)
		}
		// The range lacks Ca II: the S-index comes from the side model of
		// the window, on the same law S = s_quiet + s_gain f_fac (defaults
		// 0.17 and 3).
		if want := 0.17 + 3*e.FaculaFilling; math.Abs(e.TrueSIndex-want) > 1e-3 {
			t.Errorf("epoch %d: S = %.5f, want %.5f", i, e.TrueSIndex, want)
		}
		ff = append(ff, e.FaculaFilling)
		ha = append(ha, h)
		na = append(na, d)
	}
	if r := stat.Correlation(ff, ha, nil); r < 0.95 {
		t.Errorf("r(facular filling, H-alpha index) = %.3f, want > 0.95\n%.4f\n%.5f", r, ff, ha)
	}
	if r := stat.Correlation(ff, na, nil); r < 0.95 {
		t.Errorf("r(facular filling, Na I D index) = %.3f, want > 0.95\n%.4f\n%.5f", r, ff, na)
	}
}
