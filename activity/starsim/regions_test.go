package starsim

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat"
)

// oneSpot returns an equator-on star with a single dark equatorial spot
// (3000 K cooler: contrast 0.007 at 5500 Å), no faculae and no convective
// blueshift, observed n times evenly over one rotation of P days.
func oneSpot(vsini, f float64, n int) *Scenario {
	const P = 10.0
	return &Scenario{
		Name:      "one-spot",
		Star:      Star{VEq: vsini, RotationPeriod: P},
		Activity:  Activity{Regions: []Region{{SpotArea: f}}, SpotTempDiff: 3000},
		Observing: Observing{Start: 100, End: 100 + P*(1-1.0/float64(n)), Step: P / float64(n)},
		Spectrum:  smallSpectrum,
	}
}

func semiAmplitude(r *Result) float64 {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, e := range r.Epochs {
		lo = math.Min(lo, e.ActivityRV)
		hi = math.Max(hi, e.ActivityRV)
	}
	return (hi - lo) / 2
}

// TestSpotScaling checks the RV semi-amplitude of one equatorial spot on an
// equator-on star against Saar & Donahue (1997, ApJ 485, 319; from memory,
// docs/methods.md §13): A ≈ 6.5 f_S^0.9 v sin i m/s with f_S in per cent of the
// disk and v sin i in km/s. The issue asks for the slope 0.9 in f_S (the
// test allows ±0.15: our Gaussian-fit model is nearly linear, slope ≈ 1.0),
// linearity in v sin i (log-log slope within [0.85, 1.2]) and the
// normalisation within a factor of 2 (whether the paper's A is a semi- or a
// full amplitude is uncertain, docs/methods.md §13).
func TestSpotScaling(t *testing.T) {
	fs := []float64{0.005, 0.01, 0.02}
	var lf, la []float64
	for _, f := range fs {
		a := semiAmplitude(mustSimulate(t, oneSpot(4, f, 100), 1, nil))
		lf = append(lf, math.Log(f))
		la = append(la, math.Log(a))
		norm := a / (math.Pow(100*f, 0.9) * 4)
		if norm < 6.5/2 || norm > 6.5*2 {
			t.Errorf("f_S = %g %%, v sin i = 4: A = %.2f m/s, normalisation %.2f, want 6.5 within a factor 2", 100*f, a, norm)
		}
	}
	if s := slope(lf, la); math.Abs(s-0.9) > 0.15 {
		t.Errorf("d ln A / d ln f_S = %.3f, want 0.9 ± 0.15 (Saar & Donahue 1997)", s)
	}
	// Linear in v sin i: A = a·v sin i + b fits to 5 %; Hatzes (2002, AN
	// 323, 392; from memory, docs/methods.md §13) found the same form with a small
	// negative intercept, A ≈ (8.6 v sin i − 1.6) f_S^0.9.
	vs := []float64{3, 6, 12}
	var as []float64
	for _, v := range vs {
		as = append(as, semiAmplitude(mustSimulate(t, oneSpot(v, 0.01, 100), 1, nil)))
	}
	a := slope(vs, as)
	b := (as[0] + as[1] + as[2] - a*(vs[0]+vs[1]+vs[2])) / 3
	for i, v := range vs {
		if r := math.Abs(a*v+b-as[i]) / as[i]; r > 0.05 {
			t.Errorf("v sin i = %g: A = %.2f m/s, linear fit %.2f, off by %.1f %%", v, as[i], a*v+b, 100*r)
		}
	}
	if a < 6.5/2 || a > 6.5*2 || b > 0.1*a*vs[0] {
		t.Errorf("A = %.2f v sin i %+.2f m/s per %% of f_S, want slope 6.5 within a factor 2 and a negative or small intercept", a, b)
	}
	t.Logf("one spot, f_S = 1 %%: A = %.2f v sin i %+.2f m/s (A = %.2f m/s at v sin i = %v km/s)", a, b, as, vs)
}

// slope returns the least-squares slope of y on x.
func slope(x, y []float64) float64 {
	var mx, my float64
	for i := range x {
		mx += x[i]
		my += y[i]
	}
	mx /= float64(len(x))
	my /= float64(len(y))
	var sxy, sxx float64
	for i := range x {
		sxy += (x[i] - mx) * (y[i] - my)
		sxx += (x[i] - mx) * (x[i] - mx)
	}
	return sxy / sxx
}

// TestSpotRVBISAnticorrelation checks that a spot's RV and bisector span are
// anticorrelated over a rotation, as Queloz et al. (2001, A&A 379, 279)
// observed on HD 166435. The single-spot model gives r ≈ −0.75; the test
// asks for r < −0.5.
func TestSpotRVBISAnticorrelation(t *testing.T) {
	res := mustSimulate(t, oneSpot(5, 0.01, 100), 1, nil)
	var rv, bis []float64
	for _, e := range res.Epochs {
		rv = append(rv, e.ActivityRV)
		bis = append(bis, e.TrueBIS)
	}
	if r := stat.Correlation(rv, bis, nil); r > -0.5 {
		t.Errorf("Pearson r(RV, BIS) = %.3f, want < −0.5", r)
	}
}

// TestSpotPeriodogram checks that the RV of a spotted star, sampled at 120
// random times over 6 rotations, has its strongest periodogram power at the
// rotation period or its first harmonic (within 3 %).
func TestSpotPeriodogram(t *testing.T) {
	const P = 10.0
	rng := rand.New(rand.NewPCG(1, 1))
	sc := oneSpot(5, 0.01, 2)
	sc.Star.Inclination = 70
	sc.Activity.Regions[0].Lat = 20
	sc.Observing = Observing{Start: 100, End: 100 + 6*P, Step: 6 * P / 120}
	res := mustSimulate(t, sc, 1, nil)
	var tt, y []float64
	for _, e := range res.Epochs {
		// Irregular sampling: keep a random 80 %.
		if rng.Float64() < 0.8 {
			tt = append(tt, e.Time)
			y = append(y, e.ActivityRV)
		}
	}
	f := glsPeak(tt, y, 1/(3*P), 1.0)
	if math.Abs(f*P-1) > 0.03 && math.Abs(f*P-2) > 0.06 {
		t.Errorf("periodogram peak at %.4f d, want %.4g d (P_rot) or %.4g d (P_rot/2)", 1/f, P, P/2)
	}
}

// TestRegionLifecycle checks the growth and decay of a region's area and
// that random regions follow the scenario: latitudes inside the band,
// count close to rate × time.
func TestRegionLifecycle(t *testing.T) {
	r := activeRegion{start: 10, grow: 2, decay: 8, spot: 0.01, fac: 0.03}
	for _, c := range []struct{ t, want float64 }{
		{9, 0}, {11, 0.005}, {12, 0.01}, {16, 0.005}, {20, 0}, {25, 0},
	} {
		if s, f := r.areas(c.t); math.Abs(s-c.want) > 1e-15 || math.Abs(f-3*c.want) > 1e-15 {
			t.Errorf("areas(%g) = %g, %g, want %g, %g", c.t, s, f, c.want, 3*c.want)
		}
	}
	sc := (&Scenario{
		Star:      Star{VEq: 2, RotationPeriod: 20},
		Activity:  Activity{EmergenceRate: 0.5, LatMin: 10, LatMax: 30},
		Observing: Observing{Start: 0, End: 2000},
	}).Defaults()
	regs := buildRegions(sc, rand.New(rand.NewPCG(1, 1)))
	// Poisson count over 2000 + 1.5·40 days at 0.5/day: mean 1030, σ ≈ 32.
	if n := len(regs); math.Abs(float64(n)-1030) > 5*32 {
		t.Errorf("%d regions, want about 1030", n)
	}
	for _, g := range regs {
		lat := math.Abs(g.lat) * 180 / math.Pi
		if lat < 10 || lat > 30 {
			t.Fatalf("region at latitude %g outside [10, 30]", lat)
		}
	}
}

// TestFaculaeAndChromosphere checks that faculae raise the S-index as the
// scenario says and that with the convective blueshift suppressed inside
// them a plage-dominated star shows a redshift that grows with the facular
// coverage (Meunier et al. 2010; docs/methods.md §3, from memory).
func TestFaculaeAndChromosphere(t *testing.T) {
	sc := &Scenario{
		Name:      "plage",
		Star:      Star{VEq: 2, RotationPeriod: 25, ConvectiveBlueshift: 350},
		Activity:  Activity{Regions: []Region{{Lat: 10, SpotArea: 0, FaculaArea: 0.05}}, SGain: 2, SQuiet: 0.16},
		Observing: Observing{Start: 100, End: 125, Step: 0.5},
		Spectrum:  smallSpectrum,
	}
	res := mustSimulate(t, sc, 1, nil)
	var ff, rv, s []float64
	for _, e := range res.Epochs {
		ff = append(ff, e.FaculaFilling)
		rv = append(rv, e.ActivityRV)
		s = append(s, e.TrueSIndex)
		// S = s_quiet + s_gain · f_fac by construction of the emission law;
		// the broadening of the cores by the changing disk kernel moves it by
		// far less than 1e-3.
		if want := 0.16 + 2*e.FaculaFilling; math.Abs(e.TrueSIndex-want) > 1e-3 {
			t.Errorf("t = %g: S = %.5f, want %.5f", e.Time, e.TrueSIndex, want)
		}
	}
	if r := stat.Correlation(ff, rv, nil); r < 0.8 {
		t.Errorf("r(facular filling, RV) = %.3f, want > 0.8 (suppressed blueshift)", r)
	}
	if r := stat.Correlation(ff, s, nil); r < 0.99 {
		t.Errorf("r(facular filling, S) = %.3f, want > 0.99", r)
	}
}

// TestChromaticSpot checks that a cool spot's RV is larger in the blue than
// in the red, because its Planck contrast is (docs/methods.md §10, §13): the
// ratio of the kernels' RVs at the spectrum's bluest and reddest nodes
// equals the ratio of (1 − contrast) to 10 %, since the RV of a small spot
// scales with the flux it removes.
func TestChromaticSpot(t *testing.T) {
	sc := oneSpot(5, 0.01, 8)
	sc.Spectrum = SpectrumPlan{Pixels: 50000, LambdaMin: 3800, LambdaMax: 6900, Lines: 10}
	sc.Activity.SpotTempDiff = 1000
	res := mustSimulate(t, sc, 1, nil)
	s := res.s
	ws := s.newWorkspace()
	s.d.cover(&ws.cv, s.regs, res.Epochs[1].Time) // spot 45° from the centre
	s.buildKernels(ws, &ws.cv, 0)
	var quiet coverage
	wq := s.newWorkspace()
	s.buildKernels(wq, &quiet, 0)
	rvAt := func(k *kernels, j int) float64 {
		p := &Profile{Velocity: make([]float64, len(k.A[j])), Flux: make([]float64, len(k.A[j]))}
		for i := range p.Velocity {
			p.Velocity[i] = k.g.at(i)
			p.Flux[i] = 1 - 0.6*k.A[j][i]
		}
		g, err := FitGaussian(p)
		if err != nil {
			t.Fatal(err)
		}
		return g.V0
	}
	last := len(s.spec.nodes) - 1
	blue := rvAt(&ws.k, 0) - rvAt(&wq.k, 0)
	red := rvAt(&ws.k, last) - rvAt(&wq.k, last)
	T, dT := sc.Star.Teff, sc.Activity.SpotTempDiff
	if T == 0 {
		T = 5750
	}
	want := (1 - SpotContrast(s.spec.nodes[0], T, dT)) / (1 - SpotContrast(s.spec.nodes[last], T, dT))
	if r := blue / red; math.Abs(r/want-1) > 0.1 {
		t.Errorf("RV(%.0f Å)/RV(%.0f Å) = %.3f (%.2f/%.2f m/s), want %.3f from the contrasts", s.spec.nodes[0], s.spec.nodes[last], r, blue*1000, red*1000, want)
	}
	if math.Abs(blue) <= math.Abs(red) {
		t.Errorf("blue RV %.3f m/s not larger than red %.3f m/s", blue*1000, red*1000)
	}
}

// TestDifferentialRotation checks that a spot at latitude 50° on a star with
// shear α = 0.2 rotates with Ω(θ) = Ω_eq (1 − α sin²θ) (docs/methods.md §13): the
// RV periodogram peaks at P_eq/(1 − 0.2 sin² 50°) or its half, within 2 %.
func TestDifferentialRotation(t *testing.T) {
	sc := oneSpot(5, 0.02, 2)
	sc.Star.DiffRotation = 0.2
	sc.Star.Inclination = 60
	sc.Activity.Regions[0].Lat = 50
	sc.Observing = Observing{Start: 100, End: 180, Step: 0.37}
	res := mustSimulate(t, sc, 1, nil)
	var tt, y []float64
	for _, e := range res.Epochs {
		tt = append(tt, e.Time)
		y = append(y, e.ActivityRV)
	}
	s := math.Sin(50 * math.Pi / 180)
	P := 10 / (1 - 0.2*s*s)
	f := glsPeak(tt, y, 1/30.0, 1.0)
	if math.Abs(f*P-1) > 0.02 && math.Abs(f*P-2) > 0.04 {
		t.Errorf("peak at %.3f d, want %.3f d (or half)", 1/f, P)
	}
}

// TestFFPrime checks the simulated photometry and RV against the FF′ method
// of Aigrain, Pont & Zucker (2012, MNRAS 419, 3147; from memory, docs/methods.md
// §13): for a dark spot without convective blueshift the rotational RV
// follows −F·dF/dt approximately (the relation drops the projection factor
// cos φ of the spot's RV weight), so the two correlate closely: the model
// gives r = 0.87; the test asks r > 0.8.
func TestFFPrime(t *testing.T) {
	sc := oneSpot(5, 0.02, 200)
	sc.Star.Inclination = 75
	sc.Activity.Regions[0].Lat = 15
	res := mustSimulate(t, sc, 1, nil)
	n := res.Len()
	var rv, ffp []float64
	for i := 1; i < n-1; i++ {
		e := res.Epochs
		dF := (e[i+1].Flux - e[i-1].Flux) / (e[i+1].Time - e[i-1].Time)
		rv = append(rv, e[i].ActivityRV)
		ffp = append(ffp, -e[i].Flux*dF)
	}
	if r := stat.Correlation(rv, ffp, nil); r < 0.8 {
		t.Errorf("r(RV, −F F′) = %.3f, want > 0.8", r)
	}
}
