package gp

import (
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/floats/scalar"
)

func noiseData(n int, seed uint64) (t, r, v []float64, inst []int) {
	rnd := rand.New(rand.NewPCG(seed, 1))
	t = make([]float64, n)
	r = make([]float64, n)
	v = make([]float64, n)
	inst = make([]int, n)
	for i := range t {
		t[i] = 100 * (float64(i) + 0.8*rnd.Float64()) / float64(n)
		r[i] = 2 * rnd.NormFloat64()
		v[i] = 0.3 + 0.5*rnd.Float64()
		inst[i] = i % 2
	}
	return
}

// TestLogLikelihoodGrad checks the analytic gradient against central finite
// differences (gonum diff/fd), to 1e-6 relative to the gradient's norm.
func TestLogLikelihoodGrad(t *testing.T) {
	ts, r, v, inst := noiseData(60, 3)
	for _, row := range []struct {
		name    string
		m       Noise
		forward bool // one-sided reference differences (parameter at a boundary)
	}{
		{"QP", Noise{Kernel: QuasiPeriodic{2, 30, 11, 0.9}, Jitter: []float64{0.5, 1.2}}, false},
		{"Matern+White", Noise{Kernel: Sum{Matern32{1.5, 7}, White{0.4}}, Jitter: []float64{0.5, 0.8}}, false},
		{"Exponential+QP", Noise{Kernel: Sum{Exponential{1.3, 40}, QuasiPeriodic{1, 60, 23, 1.1}}, Jitter: []float64{0.5, 0.8}}, false},
		{"RotationTerm+QP", Noise{Kernel: Sum{RotationTerm{2, 0.4, 25, 9}, QuasiPeriodic{1, 60, 23, 1.1}}, Jitter: []float64{0.2, 0.3}}, false},
		// No analytic gradients: finite differences of Cov inside.
		{"SHO+White (numeric)", Noise{Kernel: Sum{SHO{2, 0.9, 2.5}, White{0.3}}, Jitter: []float64{0.5, 0.8}}, false},
		{"RotationSHO Mix=0 boundary (numeric)", Noise{Kernel: RotationSHO{2, 11, 1.5, 3, 0}, Jitter: []float64{0.5, 0.8}}, true},
	} {
		t.Run(row.name, func(t *testing.T) {
			p0 := row.m.Params(nil)
			f := func(p []float64) float64 {
				m, err := row.m.WithParams(p)
				if err != nil {
					return math.NaN()
				}
				ll, err := m.LogLikelihood(ts, r, v, inst)
				if err != nil {
					return math.NaN()
				}
				return ll
			}
			grad := make([]float64, len(p0))
			ll, err := row.m.LogLikelihoodGrad(grad, ts, r, v, inst)
			if err != nil {
				t.Fatal(err)
			}
			if !scalar.EqualWithinRel(ll, f(p0), 1e-12) {
				t.Errorf("ln L %g vs %g", ll, f(p0))
			}
			formula, tol := fd.Central, 1e-6
			if row.forward {
				// Forward differences are O(h) accurate: looser bound.
				formula, tol = fd.Forward, 1e-4
			}
			want := fd.Gradient(nil, f, p0, &fd.Settings{Formula: formula, Step: 1e-6})
			norm := 0.0
			for i, g := range want {
				if math.IsNaN(g) {
					t.Fatalf("reference gradient[%d] is NaN", i)
				}
				norm = math.Max(norm, math.Abs(g))
			}
			for i := range grad {
				if !(math.Abs(grad[i]-want[i]) <= tol*norm) {
					t.Errorf("∂lnL/∂p[%d] = %.10g, finite difference %.10g", i, grad[i], want[i])
				}
			}
		})
	}
}

func TestNoiseSolversAgree(t *testing.T) {
	ts, r, v, inst := noiseData(300, 5)
	base := Noise{Kernel: Sum{RotationTerm{3, 0.5, 30, 12}, SHO{0.5, 3, 1 / math.Sqrt2}}, Jitter: []float64{0.7, 1.1}}
	var lls []float64
	for _, kind := range []SolverKind{AutoSolver, DenseSolver, SemisepSolver} {
		m := base
		m.Solver = kind
		ll, err := m.LogLikelihood(ts, r, v, inst)
		if err != nil {
			t.Fatal(err)
		}
		lls = append(lls, ll)
	}
	if !scalar.EqualWithinRel(lls[0], lls[1], 1e-9) || !scalar.EqualWithinRel(lls[1], lls[2], 1e-9) {
		t.Errorf("auto %g, dense %g, semisep %g", lls[0], lls[1], lls[2])
	}
	s, _ := base.Factor(ts, v, inst)
	if _, ok := s.(*Semisep); !ok {
		t.Errorf("auto chose %T, want *Semisep", s)
	}
}

// TestNoiseAutoFallback: repeated epochs without noise make K singular; the
// automatic choice falls back from the semiseparable to the dense solver,
// which rescues it with jitter and says so.
func TestNoiseAutoFallback(t *testing.T) {
	n := 2 * AutoSemisepMin
	ts := make([]float64, n)
	for i := range ts {
		ts[i] = float64(i / 2) // every epoch twice
	}
	m := Noise{Kernel: RotationTerm{1, 0.5, 20, 6}}
	s, err := m.Factor(ts, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	d, ok := s.(*Dense)
	if !ok || d.Status() != JitterAdded {
		t.Errorf("got %T with status %v, want *Dense with JitterAdded", s, s.Status())
	}
	m.Solver = SemisepSolver
	if _, err := m.Factor(ts, nil, nil); !errors.Is(err, ErrNotPositiveDefinite) {
		t.Errorf("explicit semisep: %v", err)
	}
}

func TestNoiseBadInput(t *testing.T) {
	m := Noise{Kernel: QuasiPeriodic{2, 30, 11, 0.9}, Jitter: []float64{0.5}}
	ts := []float64{0, 1, 2}
	r := []float64{1, 2, 3}
	for _, row := range []struct {
		name    string
		m       Noise
		v       []float64
		inst    []int
		wantErr error
	}{
		{"instrument out of range", m, nil, []int{0, 1, 0}, ErrInstrument},
		{"negative instrument", m, nil, []int{0, -1, 0}, ErrInstrument},
		{"inst length", m, nil, []int{0}, ErrLength},
		{"variance length", m, []float64{1}, nil, ErrLength},
		{"negative variance", m, []float64{1, -1, 1}, nil, ErrNegativeVariance},
		{"negative jitter", Noise{Kernel: m.Kernel, Jitter: []float64{-1}}, nil, nil, ErrBadParam},
		{"semisep for QP", Noise{Kernel: m.Kernel, Solver: SemisepSolver}, nil, nil, ErrNotSemiseparable},
		// Epochs 1 d apart: periods below 2 d are beyond the cadence.
		{"period below cadence", Noise{Kernel: QuasiPeriodic{2, 30, 1.5, 0.9}}, nil, nil, ErrPeriodTooShort},
		{"rotation period below cadence", Noise{Kernel: Sum{White{1}, RotationTerm{1, 1, 10, 0.5}}}, nil, nil, ErrPeriodTooShort},
	} {
		t.Run(row.name, func(t *testing.T) {
			if _, err := row.m.LogLikelihood(ts, r, row.v, row.inst); !errors.Is(err, row.wantErr) {
				t.Errorf("err = %v, want %v", err, row.wantErr)
			}
		})
	}
	if _, err := (&Noise{}).LogLikelihoodGrad(nil, ts, r, nil, nil); !errors.Is(err, ErrBadParam) {
		t.Errorf("nil kernel: %v", err)
	}
	if _, err := (&Noise{}).LogLikelihood(ts, r, nil, nil); !errors.Is(err, ErrBadParam) {
		t.Errorf("nil kernel: %v", err)
	}
	g := make([]float64, 2)
	sho := Noise{Kernel: SHO{1, 1, 2}}
	if _, err := sho.LogLikelihoodGrad(g, ts, r, nil, nil); !errors.Is(err, ErrParamCount) {
		t.Errorf("short gradient slice: %v", err)
	}
}
