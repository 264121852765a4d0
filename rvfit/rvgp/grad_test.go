package rvgp

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"spotsift/gp"
	"spotsift/rvfit"
	"spotsift/rvfit/rvtest"
)

// gradSeries returns a two-instrument series with an S-index and a
// bisector column: a planet and a rotation signal in the RVs, unequal
// noise.
func gradSeries(rng *rand.Rand, n int) *rvfit.Series {
	tt := rvtest.NightlyTimes(rng, n, 2459000, 200)
	s := &rvfit.Series{Name: "grad"}
	si := rvfit.Indicator{Name: "s_index", Value: make([]float64, n), Err: make([]float64, n)}
	bis := rvfit.Indicator{Name: "bis", Value: make([]float64, n), Err: make([]float64, n)}
	pl := rvfit.Keplerian{P: 6.1, K: 5, E: 0.2, Omega: 1, Tp: 2459002}
	for i, ti := range tt {
		ph := 2 * math.Pi * ti / 17.3
		in, off := "A", 0.0
		if i%4 == 0 {
			in, off = "B", 12
		}
		e := 0.8 + 0.6*rng.Float64()
		s.Time = append(s.Time, ti)
		s.RV = append(s.RV, off+pl.RV(ti)+4*math.Sin(ph)+e*rng.NormFloat64())
		s.RVErr = append(s.RVErr, e)
		s.Instrument = append(s.Instrument, in)
		si.Value[i], si.Err[i] = 0.5+0.02*math.Cos(ph)+0.003*rng.NormFloat64(), 0.003
		bis.Value[i], bis.Err[i] = -3*math.Cos(ph)+rng.NormFloat64(), 1
	}
	s.Indicators = []rvfit.Indicator{si, bis}
	return s
}

// TestActivityGradient checks the analytic gradient of the posterior of
// a Keplerian fit with each activity noise model (rotation through
// gp.MultiRotation's O(N) gradient, qp through gp.Noise's dense one,
// multi through gp.MultiRotation with the indicators) against finite
// differences to 1e-6 relative (issue 15), at random points inside the
// priors; and that the rotation model's ln L through gp.MultiRotation
// equals gp.Noise's semiseparable one to 1e-9 relative (the same
// covariance, two solvers).
func TestActivityGradient(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 9))
	s := gradSeries(rng, 70)
	for _, kind := range []string{Rotation, QuasiPeriodic, Multi} {
		noise, priors, err := NewActivity(kind, s, ActivityOptions{})
		if err != nil {
			t.Fatal(err)
		}
		m, err := rvfit.NewModel(s, 1, noise, &rvfit.ModelOptions{Priors: priors})
		if err != nil {
			t.Fatal(err)
		}
		if !m.HasGradient() {
			t.Fatalf("%s: no analytic gradient", kind)
		}
		for trial := 0; trial < 3; trial++ {
			x := make([]float64, m.NumParams())
			sc := make([]float64, len(x))
			x[0], x[1], x[2], x[3], x[4] = 6.1*(1+0.01*rng.NormFloat64()), 3+3*rng.Float64(), 0.3, -0.2, m.RefTime()+rng.Float64()
			sc[0], sc[1], sc[2], sc[3], sc[4] = 0.01, 0.5, 0.05, 0.05, 0.1
			for i := 5; i < len(x); i++ {
				lo, hi := m.Prior(i).Support()
				if math.IsInf(lo, 0) || math.IsInf(hi, 0) {
					t.Fatalf("%s: parameter %d has no bounded prior", kind, i)
				}
				f := 0.2 + 0.6*rng.Float64()
				if _, ok := m.Prior(i).(rvfit.LogUniform); ok {
					x[i] = lo * math.Pow(hi/lo, f)
					sc[i] = 0.05 * x[i]
				} else {
					x[i] = lo + f*(hi-lo)
					sc[i] = 0.01 * (hi - lo)
				}
			}
			g := make([]float64, len(x))
			v := m.LogPosteriorGrad(g, x)
			if want := m.LogPosterior(x); math.IsInf(v, 0) || math.Abs(v-want) > 1e-9*math.Abs(want) {
				t.Fatalf("%s: LogPosteriorGrad value %v, LogPosterior %v", kind, v, want)
			}
			worst := rvtest.CheckGradient(t, fmt.Sprintf("%s trial %d", kind, trial), m.LogPosterior, g, x, sc, 1e-6)
			t.Logf("%s trial %d: largest relative difference %.2g", kind, trial, worst)
			if kind == Rotation {
				r := m.Residuals(x)
				variance := make([]float64, len(s.RVErr))
				inst := make([]int, len(s.RVErr))
				for i, e := range s.RVErr {
					variance[i] = e * e
					if s.Instrument[i] == "B" {
						inst[i] = 1
					}
				}
				nz := noise.(*Noise)
				gm, err := nz.base.WithParams(x[7:])
				if err != nil {
					t.Fatal(err)
				}
				want, err := gm.LogLikelihood(s.Time, r, variance, inst)
				if err != nil {
					t.Fatal(err)
				}
				got, err := nz.LogLikelihood(s.Time, r, variance, inst, x[7:])
				if err != nil || math.Abs(got-want) > 1e-9*math.Abs(want) {
					t.Errorf("rotation ln L through MultiRotation %v, gp.Noise %v (%v)", got, want, err)
				}
				if _, ok := gm.Kernel.(gp.RotationSHO); !ok {
					t.Errorf("kernel %T", gm.Kernel)
				}
			}
		}
	}
}
