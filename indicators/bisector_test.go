package indicators

import (
	"math"
	"testing"
)

// halfGaussian is 1 − D exp(−(v−v0)²/(2σ²)) with σ = sl left of v0 and sr
// right of it.
func halfGaussian(v []float64, v0, d, sl, sr float64) []float64 {
	f := make([]float64, len(v))
	for i, x := range v {
		s := sr
		if x < v0 {
			s = sl
		}
		u := (x - v0) / s
		f[i] = 1 - d*math.Exp(-0.5*u*u)
	}
	return f
}

func grid(lo, hi, step float64) []float64 {
	n := int(math.Round((hi-lo)/step)) + 1
	v := make([]float64, n)
	for i := range v {
		v[i] = lo + float64(i)*step
	}
	return v
}

func TestBIS(t *testing.T) {
	for _, tc := range []struct {
		name   string
		v      []float64
		v0     float64
		sl, sr float64
		opts   *BisectorOptions
		want   float64 // m/s
		tol    float64
	}{
		// Symmetric profiles give BIS = 0 exactly (docs/methods.md §3
		// [computed]), here with the samples placed asymmetrically about
		// the centre (cubic interpolation: O(h⁴) residual).
		{"symmetric, centred grid", grid(-30e3, 30e3, 250), 0, 3000, 3000, nil, 0, 1e-9},
		{"symmetric, off-grid centre", grid(-30e3, 30e3, 250), 77.7, 3000, 3000, nil, 0, 2e-3},
		// Half-Gaussian σ_L = 3.0, σ_R = 3.3 km/s: BIS = +0.140963 km/s
		// (10–40/60–90, continuous levels), +0.134517 km/s (10–40/55–90),
		// +0.144867 km/s (four discrete levels per zone); docs/methods.md §3
		// [computed]. The continuous zone means are approximated by 3001
		// levels per zone (midpoint-free discrete mean: error ≈ 1e-4 of the
		// zone spread) on a 5 m/s grid.
		{"half-Gaussian 10-40/60-90", grid(-40e3, 40e3, 5), 0, 3000, 3300,
			&BisectorOptions{Step: 1e-4}, 140.963, 0.05},
		{"half-Gaussian 10-40/55-90", grid(-40e3, 40e3, 5), 0, 3000, 3300,
			&BisectorOptions{BottomLo: 0.55, Step: 1e-4}, 134.517, 0.05},
		{"half-Gaussian four levels", grid(-40e3, 40e3, 5), 0, 3000, 3300,
			&BisectorOptions{Step: 0.1}, 144.867, 0.02},
		// Mirror image: the sign flips (Queloz et al. 2001 convention: BIS > 0
		// when the upper bisector is redder).
		{"half-Gaussian mirrored", grid(-40e3, 40e3, 5), 0, 3300, 3000,
			&BisectorOptions{Step: 0.1}, -144.867, 0.02},
	} {
		t.Run(tc.name, func(t *testing.T) {
			f := halfGaussian(tc.v, tc.v0, 0.6, tc.sl, tc.sr)
			got, err := BIS(tc.v, f, 0.6, tc.opts)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(got-tc.want) > tc.tol {
				t.Errorf("BIS = %.6f m/s, want %.6f ± %g", got, tc.want, tc.tol)
			}
		})
	}
	// Bad zones and a profile that does not reach a level are errors.
	v := grid(-10e3, 10e3, 250)
	if _, err := BIS(v, halfGaussian(v, 0, 0.5, 3000, 3000), 0.5, &BisectorOptions{TopLo: 0.5, TopHi: 0.4}); err == nil {
		t.Error("inverted zone: want an error")
	}
	if _, err := BIS(v, halfGaussian(v, 0, 0.5, 3000, 3000), 0.9, nil); err == nil {
		t.Error("depth deeper than the profile: want an error")
	}
}

func TestFitGaussianFWHM(t *testing.T) {
	// FWHM = 2 sqrt(2 ln 2) σ = 2.354820045 σ (docs/methods.md §0 [computed]);
	// a noiseless Gaussian is fitted to 1e-6 relative (issue requirement).
	for _, sigma := range []float64{2000, 3456.7, 8000} {
		v := grid(-40e3, 40e3, 250)
		y := make([]float64, len(v))
		for i, x := range v {
			u := (x - 321) / sigma
			y[i] = 1e6 * (1 - 0.4*math.Exp(-0.5*u*u))
		}
		g, err := FitGaussian(v, y, nil)
		if err != nil {
			t.Fatal(err)
		}
		want := 2.354820045 * sigma
		if math.Abs(g.FWHM()/want-1) > 1e-6 || math.Abs(g.V0-321) > 1e-6 || math.Abs(g.Contrast()-0.4) > 1e-9 {
			t.Errorf("σ = %v: FWHM %.9g (want %.9g), V0 %.9g, contrast %.9g", sigma, g.FWHM(), want, g.V0, g.Contrast())
		}
	}
	if _, err := FitGaussian([]float64{1, 2, 3, 4, 5, 6}, []float64{1, 1, 1, 1, 1, 1}, nil); err == nil {
		t.Error("flat data: want an error")
	}
}

func TestPhotonLimitCCF(t *testing.T) {
	// docs/methods.md §2 [computed]: Gaussian CCF with continuum A per bin,
	// contrast C, width σ, bin Δv, summed over ±60 km/s, σ²_CCF = CCF.
	for _, tc := range []struct {
		a, c, sigma, dv, want float64
	}{
		{1e6, 0.4, 3000, 820, 3.656},
		{1e4, 0.5, 4000, 1000, 35.75},
		{1e5, 0.3, 3000, 500, 12.50},
	} {
		g := GaussianFit{C0: tc.a, A: tc.a * tc.c, V0: 0, Sigma: tc.sigma}
		n := int(60e3 / tc.dv)
		var v, variance []float64
		for k := -n; k <= n; k++ {
			x := float64(k) * tc.dv
			u := x / tc.sigma
			v = append(v, x)
			variance = append(variance, tc.a*(1-tc.c*math.Exp(-0.5*u*u)))
		}
		// The table gives 4 significant digits.
		if got := g.PhotonLimit(v, variance, 1); math.Abs(got-tc.want) > 6e-4*tc.want {
			t.Errorf("%+v: limit %.5g, want %.4g", tc, got, tc.want)
		}
	}
}

func TestFitChromatic(t *testing.T) {
	// docs/methods.md §10 [computed]: RV_o = 5 + 20 ln(λ_o/5500) at 5000, 5500,
	// 6000, 6500 Å gives α = 5, β = 20 exactly.
	lam := []float64{5000, 5500, 6000, 6500}
	rv := []float64{3.093796, 5.000000, 6.740228, 8.341082}
	sig := []float64{1, 1, 1, 1}
	cf, err := FitChromatic(lam, rv, sig, 5500)
	if err != nil {
		t.Fatal(err)
	}
	// The RVs are given to 6 decimals.
	if math.Abs(cf.Alpha-5) > 2e-6 || math.Abs(cf.Beta-20) > 2e-5 {
		t.Errorf("α, β = %.7f, %.7f, want 5, 20", cf.Alpha, cf.Beta)
	}
	// Slope error of an unweighted line: σ_β = 1/sqrt(Σ(x − x̄)²) for unit
	// errors (common practice).
	var xm, sxx float64
	for _, l := range lam {
		xm += math.Log(l/5500) / 4
	}
	for _, l := range lam {
		sxx += (math.Log(l/5500) - xm) * (math.Log(l/5500) - xm)
	}
	if math.Abs(cf.BetaErr-1/math.Sqrt(sxx)) > 1e-12 {
		t.Errorf("σ_β = %v, want %v", cf.BetaErr, 1/math.Sqrt(sxx))
	}
	if _, err := FitChromatic([]float64{5000, 5000}, []float64{1, 2}, []float64{1, 1}, 0); err == nil {
		t.Error("one wavelength: want an error")
	}
	if _, err := FitChromatic([]float64{5000, 6000}, []float64{1, 2}, []float64{1, 0}, 0); err == nil {
		t.Error("zero error: want an error")
	}
}

func TestBisGradFiniteDifference(t *testing.T) {
	// The analytic gradient of BIS agrees with central differences.
	v := grid(-20e3, 20e3, 250)
	f := halfGaussian(v, 123, 0.5, 3000, 3400)
	b0, gf, dD, err := bisGrad(v, f, 0.5, nil)
	if err != nil {
		t.Fatal(err)
	}
	if b1, _ := BIS(v, f, 0.5, nil); math.Abs(b1-b0) > 1e-9 {
		t.Fatalf("bisGrad value %v, BIS %v", b0, b1)
	}
	const h = 1e-7
	for k := range f {
		orig := f[k]
		f[k] = orig + h
		bp, _ := BIS(v, f, 0.5, nil)
		f[k] = orig - h
		bm, _ := BIS(v, f, 0.5, nil)
		f[k] = orig
		if d := (bp - bm) / (2 * h); math.Abs(d-gf[k]) > 1e-4*math.Max(1, math.Abs(d)) {
			t.Errorf("∂BIS/∂f[%d] = %v, finite difference %v", k, gf[k], d)
		}
	}
	bp, _ := BIS(v, f, 0.5+h, nil)
	bm, _ := BIS(v, f, 0.5-h, nil)
	if d := (bp - bm) / (2 * h); math.Abs(d-dD) > 1e-4*math.Max(1, math.Abs(d)) {
		t.Errorf("∂BIS/∂D = %v, finite difference %v", dD, d)
	}
}

func TestLineShapeSigns(t *testing.T) {
	// A CCF whose red half is wider (σ_R = 3.3 > σ_L = 3.0 km/s): BIS and
	// Vspan are positive (upper part redder; Queloz et al. 2001 and Boisse
	// et al. 2011 conventions), while ΔV = RV_biGauss − RV_Gauss
	// (docs/methods.md §3) is negative: the bi-Gaussian centre stays at the core
	// and the plain Gaussian moves towards the wider, red side. The mirror
	// image flips all three.
	v := grid(-30e3, 30e3, 250)
	for _, sgn := range []float64{1, -1} {
		sl, sr := 3000.0, 3300.0
		if sgn < 0 {
			sl, sr = sr, sl
		}
		f := halfGaussian(v, 0, 0.5, sl, sr)
		y := make([]float64, len(f))
		for i := range f {
			y[i] = 1e6 * f[i]
		}
		w := ones(len(y))
		g, err := fitGaussian(v, y, w)
		if err != nil {
			t.Fatal(err)
		}
		b, _, err := bisGradient(v, y, g, nil)
		if err != nil {
			t.Fatal(err)
		}
		vs, _, err := vspanGradient(v, y, w, g)
		if err != nil {
			t.Fatal(err)
		}
		dv, _, err := biGaussDV(v, y, w, g)
		if err != nil {
			t.Fatal(err)
		}
		if !(sgn*b > 0 && sgn*vs > 0 && sgn*dv < 0) {
			t.Errorf("sign %v: BIS %.2f, Vspan %.2f, ΔV %.2f m/s", sgn, b, vs, dv)
		}
	}
}
