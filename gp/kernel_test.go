package gp

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
)

func TestKernelValues(t *testing.T) {
	rot := RotationTerm{B: 0.8, C: 0.5, L: 20, P: 6}
	sho := SHO{S0: 1, W0: 2 * math.Pi / 4, Q: 3}
	qpR := NewQuasiPeriodicRajpaul(1, 25, 0.5, 50)
	for _, row := range []struct {
		name string
		k    Kernel
		tau  float64
		want float64
		tol  float64 // relative
	}{
		// docs/methods.md §8 [computed].
		{"QP Haywood eta=(1,50,25,0.5)", QuasiPeriodic{1, 50, 25, 0.5}, 3, 0.336982091728, 1e-11},
		{"QP Rajpaul gamma", qpR, 3, 0.761221139565, 1e-11},
		{"QP Rajpaul gamma negative lag", qpR, -3, 0.761221139565, 1e-11},
		{"SHO Q=3 k(0)", sho, 0, 4.712388980385, 1e-11},
		{"SHO Q=3 k(1.3)", sho, 1.3, -0.924163683528, 1e-11},
		{"SHO Q=3 k(4)", sho, 4, 1.622756005281, 1e-11},
		{"SHO Q=3 k(-4)", sho, -4, 1.622756005281, 1e-11},
		{"RotationTerm k(0)=B", rot, 0, 0.8, 1e-15},
		{"RotationTerm k(1.3)", rot, 1.3, 0.512137112252, 1e-11},
		{"RotationTerm k(4)", rot, 4, 0.261993840985, 1e-11},
		// Q = 1/√2 closed form, docs/methods.md §8: k = S0ω0 e^(−ω0τ/√2) cos(ω0τ/√2 − π/4).
		{"SHO Q=1/sqrt2", SHO{2, 0.7, 1 / math.Sqrt2}, 2.5,
			2 * 0.7 * math.Exp(-0.7*2.5/math.Sqrt2) * math.Cos(0.7*2.5/math.Sqrt2-math.Pi/4), 1e-13},
		// Critical damping, analytic limit ½S0ω0 e^(−ω0τ)(1 + ω0τ).
		{"SHO Q=1/2", SHO{1.5, 0.9, 0.5}, 1.7, 0.5 * 1.5 * 0.9 * math.Exp(-0.9*1.7) * (1 + 0.9*1.7), 1e-14},
		// Matérn-3/2 closed form (Rasmussen & Williams 2006, eq. 4.17).
		{"Matern32", Matern32{2, 3}, 1.5, 4 * (1 + math.Sqrt(3)*0.5) * math.Exp(-math.Sqrt(3)*0.5), 1e-14},
		// Exponential (Matérn-1/2) closed form, σ² e^(−|τ|/τ₀).
		{"Exponential", Exponential{2, 3}, -1.5, 4 * math.Exp(-0.5), 1e-15},
		{"White off zero lag", White{2}, 0, 0, 0},
		{"RotationSHO k(0)=amp^2", RotationSHO{Amp: 1.7, Period: 11, Quality: 1.3, QualityGap: 4, Mix: 0.6}, 0, 1.7 * 1.7, 1e-13},
	} {
		t.Run(row.name, func(t *testing.T) {
			got := row.k.Cov(row.tau)
			if !scalar.EqualWithinRel(got, row.want, row.tol) && !(row.want == 0 && got == 0) {
				t.Errorf("k(%g) = %.15g, want %.15g", row.tau, got, row.want)
			}
		})
	}
}

// TestQPDerivativeValues checks the lag derivatives against docs/methods.md §8
// [computed]: ∂γ/∂t_j = −k'(τ), ∂²γ/∂t_i∂t_j = −k”(τ).
func TestQPDerivativeValues(t *testing.T) {
	k := NewQuasiPeriodicRajpaul(1, 25, 0.5, 50)
	_, d1, d2 := k.CovDeriv(3)
	if !scalar.EqualWithinRel(-d1, 0.131878100945, 1e-10) {
		t.Errorf("dγ/dt_j = %.12g, want 0.131878100945", -d1)
	}
	if !scalar.EqualWithinRel(-d2, 0.012508125231, 1e-9) {
		t.Errorf("d²γ/dt_i dt_j = %.12g, want 0.012508125231", -d2)
	}
	_, d1, d2 = k.CovDeriv(0)
	if d1 != 0 || !scalar.EqualWithinRel(-d2, 0.063565468167, 1e-10) {
		t.Errorf("at τ=0: d1 = %g, -d2 = %.12g, want 0 and 0.063565468167", d1, -d2)
	}
}

// TestCovDerivFiniteDifference checks dk/dτ and d²k/dτ² of every
// Differentiable kernel against central differences (to 1e-6 relative to
// the derivative's scale).
func TestCovDerivFiniteDifference(t *testing.T) {
	for _, row := range []struct {
		name string
		k    Differentiable
	}{
		{"QuasiPeriodic", QuasiPeriodic{2, 30, 12, 0.7}},
		{"QuasiPeriodic short", QuasiPeriodic{1, 3, 2.5, 1.4}},
		{"Matern32", Matern32{1.5, 4}},
		{"RotationTerm", RotationTerm{1, 0.3, 15, 7}},
	} {
		t.Run(row.name, func(t *testing.T) {
			for _, tau := range []float64{-9.3, -2.1, 0.37, 1.0, 4.4, 17.2} {
				_, d1, d2 := row.k.CovDeriv(tau)
				h := 1e-4
				fd1 := (row.k.Cov(tau+h) - row.k.Cov(tau-h)) / (2 * h)
				_, a, _ := row.k.CovDeriv(tau + h)
				_, b, _ := row.k.CovDeriv(tau - h)
				fd2 := (a - b) / (2 * h)
				_, _, s2 := row.k.CovDeriv(0)
				scale := math.Max(math.Abs(s2), 1e-300)
				if math.Abs(d1-fd1) > 1e-6*scale*(1+math.Abs(tau)) {
					t.Errorf("τ=%g: dk/dτ = %.10g, finite difference %.10g", tau, d1, fd1)
				}
				if math.Abs(d2-fd2) > 1e-6*scale {
					t.Errorf("τ=%g: d²k/dτ² = %.10g, finite difference %.10g", tau, d2, fd2)
				}
			}
		})
	}
}

// TestTermsMatchCov checks that every celerite kernel's Terms reproduce its
// Cov (exactly, except the documented critical-damping approximation).
func TestTermsMatchCov(t *testing.T) {
	for _, row := range []struct {
		name string
		k    Celerite
		tol  float64
	}{
		{"SHO Q=3", SHO{1, 2 * math.Pi / 4, 3}, 1e-13},
		{"SHO Q=0.3", SHO{0.7, 1.1, 0.3}, 1e-13},
		{"SHO Q=1/sqrt2", SHO{1, 1, 1 / math.Sqrt2}, 1e-13},
		{"SHO Q=1/2 (approximate)", SHO{1, 1, 0.5}, 1e-8},
		{"RotationTerm", RotationTerm{0.8, 0.5, 20, 6}, 1e-13},
		{"RotationSHO", RotationSHO{1.2, 9, 1.1, 3, 0.4}, 1e-12},
		{"Sum", Sum{SHO{1, 2, 3}, RotationTerm{0.8, 0.5, 20, 6}, White{0.3}}, 1e-13},
	} {
		t.Run(row.name, func(t *testing.T) {
			terms := row.k.Terms(nil)
			k0 := row.k.Cov(0)
			for _, tau := range []float64{0, 0.3, 1.7, 5, 12.5, 40} {
				var s float64
				for _, tm := range terms {
					s += tm.Cov(tau)
				}
				if math.Abs(s-row.k.Cov(tau)) > row.tol*math.Abs(k0) {
					t.Errorf("τ=%g: Σ terms = %.15g, Cov = %.15g", tau, s, row.k.Cov(tau))
				}
			}
		})
	}
}

func TestRotationSHOFrequencies(t *testing.T) {
	// Each oscillator rings at 2π/P and 4π/P by construction (celerite2
	// rotation term, from memory).
	k := RotationSHO{Amp: 1, Period: 8, Quality: 2, QualityGap: 5, Mix: 0.5}
	terms := k.Terms(nil)
	if len(terms) != 2 {
		t.Fatalf("got %d terms, want 2", len(terms))
	}
	for i, want := range []float64{2 * math.Pi / 8, 4 * math.Pi / 8} {
		if !scalar.EqualWithinRel(terms[i].D, want, 1e-13) {
			t.Errorf("term %d: d = %g, want %g", i, terms[i].D, want)
		}
	}
}

func TestParamsRoundTrip(t *testing.T) {
	for _, k := range []Kernel{
		QuasiPeriodic{1, 2, 3, 4}, Matern32{1, 2}, SHO{1, 2, 3}, RotationTerm{1, 2, 3, 4}, Exponential{1, 2},
		RotationSHO{1, 2, 3, 4, 5}, White{1}, Sum{QuasiPeriodic{1, 2, 3, 4}, White{5}},
	} {
		p := k.Params(nil)
		if len(p) != k.NumParams() {
			t.Errorf("%T: %d params, NumParams %d", k, len(p), k.NumParams())
		}
		k2, err := k.WithParams(p)
		if err != nil {
			t.Errorf("%T: WithParams: %v", k, err)
			continue
		}
		if k2.Cov(0.7) != k.Cov(0.7) {
			t.Errorf("%T: round trip changed Cov", k)
		}
		if _, err := k.WithParams(p[1:]); !errors.Is(err, ErrParamCount) {
			t.Errorf("%T: short vector: err = %v, want ErrParamCount", k, err)
		}
	}
}

func TestBadParams(t *testing.T) {
	for _, row := range []struct {
		name string
		k    Kernel
	}{
		{"QP zero evolution", QuasiPeriodic{1, 0, 3, 4}},
		{"QP negative period", QuasiPeriodic{1, 2, -3, 4}},
		{"QP NaN", QuasiPeriodic{math.NaN(), 2, 3, 4}},
		{"Matern Inf", Matern32{1, math.Inf(1)}},
		{"Exponential Tau=0", Exponential{1, 0}},
		{"SHO Q=0", SHO{1, 1, 0}},
		{"RotationTerm L<0", RotationTerm{1, 0, -1, 2}},
		{"RotationTerm C<0", RotationTerm{1, -0.5, 1, 2}},
		{"RotationSHO Mix<0", RotationSHO{1, 2, 3, 4, -5}},
		{"White<0", White{-1}},
		{"Sum member", Sum{White{1}, QuasiPeriodic{1, 2, 0, 4}}},
	} {
		t.Run(row.name, func(t *testing.T) {
			err := validate(row.k)
			if !errors.Is(err, ErrBadParam) {
				t.Fatalf("validate = %v, want ErrBadParam", err)
			}
			if _, err := NewDense(row.k, []float64{0, 1}, nil, nil); !errors.Is(err, ErrBadParam) {
				t.Errorf("NewDense err = %v, want ErrBadParam", err)
			}
		})
	}
}

// TestKernelMatricesPD checks symmetric positive definiteness on random
// epochs for random hyperparameters (the first check).
func TestKernelMatricesPD(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for trial := 0; trial < 40; trial++ {
		n := 20 + rnd.IntN(60)
		ts := make([]float64, n)
		for i := range ts {
			ts[i] = 300 * rnd.Float64()
		}
		u := func(lo, hi float64) float64 { return lo * math.Pow(hi/lo, rnd.Float64()) }
		for _, k := range []Kernel{
			QuasiPeriodic{u(0.1, 10), u(1, 200), u(1, 60), u(0.2, 3)},
			Matern32{u(0.1, 10), u(0.1, 100)},
			Exponential{u(0.1, 10), u(0.1, 1000)},
			SHO{u(0.1, 10), u(0.05, 5), u(0.1, 20)},
			RotationTerm{u(0.1, 10), u(0.01, 5), u(1, 100), u(1, 60)},
			RotationSHO{u(0.1, 10), u(1, 60), u(0.1, 5), u(0.01, 10), u(0.01, 2)},
		} {
			d, err := NewDense(Sum{k, White{0.01 * math.Sqrt(k.Cov(0))}}, ts, nil, &DenseSettings{MaxJitter: -1})
			if err != nil {
				t.Fatalf("trial %d %#v: %v", trial, k, err)
			}
			// Symmetry: k(τ) = k(−τ).
			for i := 0; i < 5; i++ {
				tau := ts[i] - ts[n-1-i]
				if a, b := k.Cov(tau), k.Cov(-tau); a != b && !scalar.EqualWithinRel(a, b, 1e-14) {
					t.Errorf("%T: k(%g) = %g, k(%g) = %g", k, tau, a, -tau, b)
				}
			}
			_ = d
		}
	}
}
