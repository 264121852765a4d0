package rvfit

import (
	"math"
	"testing"
)

func deg(x float64) float64 { return x * math.Pi / 180 }

func TestEccentricAnomalyTable(t *testing.T) {
	// Expected E and ν: docs/methods.md §7 table [computed; bisection + Newton
	// and Markley agree to 1e-15 rad]. The first row is Meeus 1998,
	// Astronomical Algorithms ch. 30 (5.554589°, from memory) and the
	// e = 0.99, M = 2° row Meeus's high-e example (32.361007°, from memory).
	rows := []struct {
		name        string
		e, Mdeg     float64
		Edeg, nuDeg float64
		tolE, tolNu float64 // degrees
	}{
		{"meeus e=0.1 M=5", 0.1, 5, 5.554589254, 6.139761521, 1e-9, 1e-9},
		{"e=0.5 M=30", 0.5, 30, 52.827087168, 81.411338376, 1e-9, 1e-9},
		{"e=0.9 M=10", 0.9, 10, 48.797983263, 126.342362010, 1e-9, 1e-9},
		{"meeus e=0.99 M=2", 0.99, 2, 32.361007472, 152.542133894, 1e-9, 1e-9},
		{"e=0.99 M=0.2", 0.99, 0.2, 11.786830572, 111.041953989, 1e-9, 1e-9},
		{"e=0.999 M=1", 0.999, 1, 26.869504196, 169.301773121, 1e-9, 1e-9},
		{"e=0.7 M=359", 0.7, 359, 356.671036191, 352.085858117 - 360, 1e-9, 1e-9},
		{"e=0.9 M=180", 0.9, 180, 180, 180, 1e-12, 1e-12},
	}
	for _, r := range rows {
		t.Run(r.name, func(t *testing.T) {
			E := EccentricAnomaly(deg(r.Mdeg), r.e)
			Ed := E * 180 / math.Pi
			if math.Abs(Ed-r.Edeg) > r.tolE {
				t.Errorf("E = %.10f°, want %.10f°", Ed, r.Edeg)
			}
			nu := TrueAnomaly(E, r.e) * 180 / math.Pi
			if math.Abs(math.Remainder(nu-r.nuDeg, 360)) > r.tolNu {
				t.Errorf("ν = %.10f°, want %.10f°", nu, r.nuDeg)
			}
		})
	}
}

func TestEccentricAnomalyGrid(t *testing.T) {
	// Issue 5 requirement: |E − e sin E − M| < 1e-12 over e up to 0.999 and
	// all M.
	worst := 0.0
	for ie := 0; ie <= 999; ie++ {
		e := float64(ie) / 1000
		for im := -2000; im <= 2000; im++ {
			M := float64(im) / 2000 * math.Pi
			E := EccentricAnomaly(M, e)
			res := math.Abs(E - e*math.Sin(E) - M)
			if res > worst {
				worst = res
			}
			if res >= 1e-12 || math.IsNaN(res) {
				t.Fatalf("e=%g M=%g: residual %g", e, M, res)
			}
		}
	}
	// Beyond one period the reduction keeps the same residual scale.
	for _, M := range []float64{-50, 7, 1000.3} {
		E := EccentricAnomaly(M, 0.6)
		if res := math.Abs(E - 0.6*math.Sin(E) - M); res > 1e-11 {
			t.Errorf("M=%g: residual %g", M, res)
		}
	}
	t.Logf("worst residual %.3g", worst)
}

func TestEccentricAnomalySpecial(t *testing.T) {
	if got := EccentricAnomaly(1.234, 0); got != 1.234 {
		t.Errorf("e=0: got %v", got)
	}
	for _, e := range []float64{-0.1, 1, 1.5, math.NaN()} {
		if got := EccentricAnomaly(1, e); !math.IsNaN(got) {
			t.Errorf("e=%v: got %v, want NaN", e, got)
		}
	}
	if got := EccentricAnomaly(math.Inf(1), 0.3); !math.IsNaN(got) {
		t.Errorf("M=Inf: got %v", got)
	}
}

func TestKeplerNewtonAgrees(t *testing.T) {
	for ie := 0; ie < 96; ie++ {
		e := float64(ie) / 100
		for im := 0; im < 100; im++ {
			M := -math.Pi + 2*math.Pi*float64(im)/99
			a, b := EccentricAnomaly(M, e), keplerNewton(M, e)
			if math.Abs(a-b) > 1e-12 {
				t.Fatalf("e=%g M=%g: Markley %v Newton %v", e, M, a, b)
			}
		}
	}
}

// keplerBenchInputs spreads e uniformly over [0, 0.95] and M over [0, 2π),
// the same distribution as testdata/rvfit/bench_kepler.py.
func keplerBenchInputs(n int) (M, e []float64) {
	M = make([]float64, n)
	e = make([]float64, n)
	for i := range M {
		// A low-discrepancy (golden-ratio) sequence: deterministic, no RNG.
		u := math.Mod(float64(i)*0.6180339887498949, 1)
		v := math.Mod(float64(i)*0.7548776662466927, 1)
		M[i] = 2 * math.Pi * u
		e[i] = 0.95 * v
	}
	return M, e
}

var sinkE float64

func BenchmarkKepler(b *testing.B) {
	M, e := keplerBenchInputs(1 << 16)
	b.Run("solver=markley", func(b *testing.B) {
		s := 0.0
		for i := 0; i < b.N; i++ {
			j := i & (1<<16 - 1)
			s += EccentricAnomaly(M[j], e[j])
		}
		sinkE = s
	})
	b.Run("solver=newton", func(b *testing.B) {
		s := 0.0
		for i := 0; i < b.N; i++ {
			j := i & (1<<16 - 1)
			s += keplerNewton(M[j], e[j])
		}
		sinkE = s
	})
}

func TestEccentricAnomaliesMatchesScalar(t *testing.T) {
	M := make([]float64, 2001)
	for i := range M {
		// Cover several periods and both signs.
		M[i] = -20 + 40*float64(i)/2000
	}
	for _, e := range []float64{0, 0.01, 0.3, 0.7, 0.95, 0.999, 1, -0.2} {
		got := EccentricAnomalies(nil, M, e)
		for i, m := range M {
			want := EccentricAnomaly(m, e)
			if !(got[i] == want || math.Abs(got[i]-want) < 1e-14 || (math.IsNaN(want) && math.IsNaN(got[i]))) {
				t.Fatalf("e=%g M=%g: batch %v scalar %v", e, m, got[i], want)
			}
		}
	}
}

// The Kepler benchmarks' inputs: benchEccentricities values of e and
// benchAnomalies mean anomalies spread over [0, 2π) by the golden ratio.
const benchEccentricities, benchAnomalies = 96, 1024

func benchMeanAnomalies() []float64 {
	M := make([]float64, benchAnomalies)
	for i := range M {
		M[i] = 2 * math.Pi * math.Mod(float64(i)*0.6180339887498949, 1)
	}
	return M
}

func BenchmarkKeplerBatch(b *testing.B) {
	// 96 eccentricities uniform in [0, 0.95], 1024 mean anomalies each:
	// the per-solve time averaged over e, as in bench_kepler.py.
	const ne, nm = benchEccentricities, benchAnomalies
	M := benchMeanAnomalies()
	dst := make([]float64, nm)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		e := 0.95 * float64(i%ne) / (ne - 1)
		EccentricAnomalies(dst, M, e)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/nm, "ns/solve")
}

// BenchmarkKeplerBatchSinCos times the batch as the RV model uses it, with
// sin E and cos E written beside E; same inputs as BenchmarkKeplerBatch.
func BenchmarkKeplerBatchSinCos(b *testing.B) {
	const ne, nm = benchEccentricities, benchAnomalies
	M := benchMeanAnomalies()
	E := make([]float64, nm)
	s := make([]float64, nm)
	c := make([]float64, nm)
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		e := 0.95 * float64(i%ne) / (ne - 1)
		keplerBatch(E, s, c, M, e)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/nm, "ns/solve")
}

// TestSinCosHalfTurn checks the solver's minimax sine and cosine against
// math.Sincos on 10^6 + 1 points of [0, π] (its whole domain). The bound,
// 5e-16, is a few float64 rounding units: measured 3.8e-16 (sine) and
// 4.4e-16 (cosine).
func TestSinCosHalfTurn(t *testing.T) {
	const n = 1000000
	ws, wc := 0.0, 0.0
	for i := 0; i <= n; i++ {
		x := math.Pi * float64(i) / n
		s, c := sinCosHalfTurn(x)
		rs, rc := math.Sincos(x)
		ws = math.Max(ws, math.Abs(s-rs))
		wc = math.Max(wc, math.Abs(c-rc))
	}
	if !(ws <= 5e-16 && wc <= 5e-16) {
		t.Errorf("largest error: sine %.3g, cosine %.3g; want ≤ 5e-16", ws, wc)
	}
	t.Logf("largest error: sine %.3g, cosine %.3g", ws, wc)
}

func TestKeplerBatchSinCos(t *testing.T) {
	M := make([]float64, 1003)
	for i := range M {
		M[i] = -30 + 60*float64(i)/1002
	}
	E := make([]float64, len(M))
	s := make([]float64, len(M))
	c := make([]float64, len(M))
	for _, e := range []float64{0, 0.2, 0.8, 0.999} {
		keplerBatch(E, s, c, M, e)
		for i := range M {
			ws, wc := math.Sincos(E[i])
			if math.Abs(s[i]-ws) > 1e-14 || math.Abs(c[i]-wc) > 1e-14 {
				t.Fatalf("e=%g M=%g: sin %v cos %v, want %v %v", e, M[i], s[i], c[i], ws, wc)
			}
		}
	}
}

// TestKeplerAgainstNewton checks the solver (Markley's starter and one
// fourth-order step, scalar and batch with its sine and cosine) against
// Newton's method iterated to convergence (keplerNewton) to 1e-12 on a
// dense grid: 1,000 eccentricities in [0, 0.999] × 2,001 mean anomalies
// in [−π, π] (issue 15; measured worst 7.4e-15).
func TestKeplerAgainstNewton(t *testing.T) {
	nm := 2001
	if testing.Short() {
		nm = 201
	}
	M := make([]float64, nm)
	for i := range M {
		M[i] = -math.Pi + 2*math.Pi*float64(i)/float64(nm-1)
	}
	E := make([]float64, nm)
	sE := make([]float64, nm)
	cE := make([]float64, nm)
	worst := 0.0
	for ie := 0; ie < 1000; ie++ {
		e := 0.999 * float64(ie) / 999
		keplerBatch(E, sE, cE, M, e)
		for i, m := range M {
			ref := keplerNewton(m, e)
			s, c := math.Sincos(ref)
			d := math.Max(math.Abs(E[i]-ref), math.Abs(EccentricAnomaly(m, e)-ref))
			d = math.Max(d, math.Max(math.Abs(sE[i]-s), math.Abs(cE[i]-c)))
			if d > 1e-12 {
				t.Fatalf("e %g M %g: E %v (scalar %v), Newton %v", e, m, E[i], EccentricAnomaly(m, e), ref)
			}
			worst = math.Max(worst, d)
		}
	}
	t.Logf("largest difference from Newton's method: %.2g", worst)
}
