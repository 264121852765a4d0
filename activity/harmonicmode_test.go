package activity

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"spotsift/gp"
	"spotsift/rvfit"
)

// TestModeSHO: the oscillator added at a signal's frequency oscillates
// there exactly, decays at the rate of the rotation kernel's fundamental
// mode, and has the variance asked for.
func TestModeSHO(t *testing.T) {
	for _, k := range []gp.RotationSHO{
		{Amp: 2, Period: 20, Quality: 3, QualityGap: 4, Mix: 0.5},
		{Amp: 1, Period: 3.1, Quality: 0.05, QualityGap: 0.01, Mix: 0.2},
		{Amp: 7, Period: 61, Quality: 30, QualityGap: 30, Mix: 0.9},
	} {
		fund, _ := k.SHOs()
		ft := fund.Terms(nil)[0]
		for _, f := range []float64{3 / k.Period, 4.3 / k.Period} {
			m := modeSHO(k, f, 1.7)
			terms := m.Terms(nil)
			if len(terms) != 1 {
				t.Fatalf("%+v at %g c/d: %d terms, want one under-damped term", k, f, len(terms))
			}
			mt := terms[0]
			if math.Abs(mt.D-2*math.Pi*f) > 1e-12*mt.D {
				t.Errorf("%+v: oscillates at %g rad/d, want 2πf = %g", k, mt.D, 2*math.Pi*f)
			}
			if math.Abs(mt.C-ft.C) > 1e-12*ft.C {
				t.Errorf("%+v at %g c/d: decay rate %g, want the fundamental's %g", k, f, mt.C, ft.C)
			}
			if v := m.Cov(0); math.Abs(v-1.7*1.7) > 1e-12 {
				t.Errorf("%+v at %g c/d: variance %g, want %g", k, f, v, 1.7*1.7)
			}
		}
	}
}

// gpDraw returns one draw at times t of a zero-mean GP with kernel k.
func gpDraw(t []float64, k gp.Kernel, rng *rand.Rand) []float64 {
	n := len(t)
	c := mat.NewSymDense(n, nil)
	for i := range t {
		for j := i; j < n; j++ {
			v := k.Cov(t[i] - t[j])
			if i == j {
				v += 1e-9
			}
			c.SetSym(i, j, v)
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(c) {
		panic("gpDraw: covariance not positive definite")
	}
	var l mat.TriDense
	ch.LTo(&l)
	z := make([]float64, n)
	for i := range z {
		z[i] = rng.NormFloat64()
	}
	out := make([]float64, n)
	for i := range out {
		for j := 0; j <= i; j++ {
			out[i] += l.At(i, j) * z[j]
		}
	}
	return out
}

// TestModelComparisonThirdHarmonic: a star rotating in 24 d whose spots
// live about 40 d. At P_rot/3 (8.0 d, 3 % off, as spots at another
// latitude would put it) activity as coherent as the rotation signal
// needs no Keplerian beside the rotation kernel with a mode there, while
// a strictly periodic signal of the same period and amplitude still does.
// The kernel's own modes (P_rot, P_rot/2) have no power at P_rot/3: there
// the comparison used to take no side.
func TestModelComparisonThirdHarmonic(t *testing.T) {
	if testing.Short() {
		t.Skip("GP fits of simulated series; skipped with -short")
	}
	rot := gp.RotationSHO{Amp: 4, Period: 24, Quality: 2, QualityGap: 3, Mix: 0.5}
	fh := 3 / 24.0 * 1.03
	star := &Star{Name: "Tessel-4", RotationPeriod: 24, RotationPeriodErr: 1}
	for _, tc := range []struct {
		name   string
		planet bool
	}{{"activity at P_rot/3", false}, {"orbit at P_rot/3", true}} {
		rng := rand.New(rand.NewPCG(17, 5))
		ts := nightly(rng)
		spots := gpDraw(ts, rot, rng)
		third := gpDraw(ts, modeSHO(rot, fh, 3), rng)
		s := &rvfit.Series{Name: "third-harmonic"}
		for i, ti := range ts {
			v := spots[i] + rng.NormFloat64()
			if tc.planet {
				v += 3 * math.Sqrt2 * math.Sin(2*math.Pi*fh*ti+0.7)
			} else {
				v += third[i]
			}
			s.Time = append(s.Time, ti)
			s.RV = append(s.RV, v)
			s.RVErr = append(s.RVErr, 1)
			s.Instrument = append(s.Instrument, "NORTH-1")
		}
		dg, err := Diagnose(context.Background(), s, &Options{Periods: []float64{1 / fh}, Star: star, Seed: 3})
		if err != nil {
			t.Fatal(err)
		}
		sg := dg.Signals[0]
		rm, mc := evidence(&sg, "rotation_match"), evidence(&sg, "model_comparison")
		if rm == nil || mc == nil {
			t.Fatalf("%s: rotation match %v, model comparison %v; skipped: %+v", tc.name, rm, mc, sg.Skipped)
		}
		t.Logf("%s: %s | %s", tc.name, rm.Reason, mc.Reason)
		full := mc.Points == TowardPlanet && mc.Weight <= -DefaultWeights().ModelComparison.Planet+1e-9
		if tc.planet && !full {
			t.Errorf("%s: the comparison does not pull fully toward a planet: %s", tc.name, mc.Reason)
		}
		if !tc.planet && mc.Points == TowardPlanet {
			t.Errorf("%s: the comparison pulls toward a planet: %s", tc.name, mc.Reason)
		}
	}
}

// TestWithoutMode: the model comparison's fit, as the later tests reuse
// it, loses the added oscillator and its amplitude (θ's last parameter),
// and keeps everything else.
func TestWithoutMode(t *testing.T) {
	m := &gpModel{ninst: 2, mode: 1 / 7.9, redNoise: true}
	theta := []float64{3, 24, 1, 2, 0.5, 0.4, 0.6, 1.1, 300, 2.2}
	if len(theta) != m.nParams() {
		t.Fatalf("test θ has %d parameters, the model %d", len(theta), m.nParams())
	}
	mm, rr := withoutMode(m, gpResult{theta: theta, ok: true})
	if mm.mode != 0 || !mm.redNoise || mm.ninst != 2 || m.mode == 0 {
		t.Errorf("model without the mode: %+v (the original's mode %g)", mm, m.mode)
	}
	if len(rr.theta) != mm.nParams() || rr.theta[len(rr.theta)-1] != 300 || !rr.ok {
		t.Errorf("θ without the mode: %v, want the first %d of %v", rr.theta, mm.nParams(), theta)
	}
	plain := &gpModel{ninst: 1}
	if p, _ := withoutMode(plain, gpResult{theta: []float64{1, 2, 3, 4, 0.5, 1}}); p != plain {
		t.Error("a model without a mode must come back as it is")
	}
}
