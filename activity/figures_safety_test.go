package activity

import (
	"context"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"time"

	"gonum.org/v1/plot"

	"spotsift/rvfit"
)

// within runs f and fails the test when it does not return within d: the
// figure code once looped forever on values whose range overflowed.
func within(t *testing.T, d time.Duration, what string, f func()) {
	t.Helper()
	done := make(chan struct{})
	go func() { defer close(done); f() }()
	select {
	case <-done:
	case <-time.After(d):
		t.Fatalf("%s did not finish within %v", what, d)
	}
}

// extremeSeries holds finite values at the edge of float64 beside
// ordinary ones, plus NaN and infinities in the error columns.
func extremeSeries(rv, rvErr, ind float64) *rvfit.Series {
	s := &rvfit.Series{Name: "extreme"}
	for i := 0; i < 30; i++ {
		s.Time = append(s.Time, 2460000+float64(i)*1.3)
		s.RV = append(s.RV, float64(i%5))
		s.RVErr = append(s.RVErr, 1)
		s.Instrument = append(s.Instrument, []string{"A", "B"}[i%2])
	}
	s.RV[3], s.RV[7] = rv, -rv
	s.RVErr[4] = rvErr
	v := make([]float64, 30)
	e := make([]float64, 30)
	for i := range v {
		v[i], e[i] = float64(i), 0.5
	}
	v[5], v[6] = ind, -ind
	e[8] = math.Inf(1)
	s.Indicators = []rvfit.Indicator{{Name: "fwhm", Unit: "km/s", Value: v, Err: e}}
	return s
}

// TestFiguresSafeForAnyValue draws every figure that needs no diagnosis,
// and the whole report when the diagnosis runs, for values whose plot
// range overflows float64 (issue: rv_err = 1e308, RVs of ±1e308, an
// indicator of ±1.7e308 made the figure code loop forever).
func TestFiguresSafeForAnyValue(t *testing.T) {
	cases := []struct {
		name           string
		rv, rvErr, ind float64
	}{
		{"rv_err 1e308", 1, 1e308, 1},
		{"rv ±1e308", 1e308, 1, 1},
		{"indicator ±1.7e308", 1, 1, 1.7e308},
		{"max float64", math.MaxFloat64, math.MaxFloat64, -math.MaxFloat64},
		{"tiny", 5e-324, 5e-324, 5e-324},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := extremeSeries(c.rv, c.rvErr, c.ind)
			within(t, 30*time.Second, "drawing", func() {
				z := fitZeroPoints(s, nil)
				figs := []*figure{figTimeSeries(s, z)}
				if f, _ := figCorrelations(s, nil, z); f != nil {
					figs = append(figs, f)
				}
				for _, f := range figs {
					svg, err := f.svg()
					if err != nil {
						t.Errorf("%s svg: %v", f.name, err)
					}
					if strings.Contains(string(svg), "NaN") || strings.Contains(string(svg), "Inf") {
						t.Errorf("%s: the SVG holds a NaN or Inf coordinate", f.name)
					}
					if _, err := f.png(); err != nil {
						t.Errorf("%s png: %v", f.name, err)
					}
				}
			})
			// The whole report, when the diagnosis accepts the data.
			within(t, 120*time.Second, "the report", func() {
				dg, err := Diagnose(context.Background(), s, &Options{Seed: 1, SkipModels: true})
				if err != nil {
					dg = &Diagnosis{Star: "extreme", NEpochs: s.Len(), Caution: Caution}
				}
				if err := WriteReport(t.TempDir(), &Report{Diagnosis: dg, Series: s}); err != nil {
					t.Logf("report: %v", err)
				}
			})
		})
	}
}

// TestTicksAndRangesTerminate checks the axis routines on random and
// extreme ranges: they end, return few ticks, and labels never repeat.
func TestTicksAndRangesTerminate(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	special := []float64{0, 1, -1, math.MaxFloat64, -math.MaxFloat64, math.SmallestNonzeroFloat64, math.Inf(1), math.Inf(-1), math.NaN(), 1e308, -1e308, 1e-308, 2460000.5}
	var pairs [][2]float64
	for _, a := range special {
		for _, b := range special {
			pairs = append(pairs, [2]float64{a, b})
		}
	}
	for i := 0; i < 2000; i++ {
		a := math.Ldexp(rng.Float64()-0.5, rng.IntN(2100)-1050)
		pairs = append(pairs, [2]float64{a, a + math.Ldexp(rng.Float64(), rng.IntN(2100)-1050)})
	}
	within(t, 30*time.Second, "ticks", func() {
		for _, p := range pairs {
			for _, isLog := range []bool{false, true} {
				lo, hi := safeRange(p[0], p[1], isLog)
				if !(hi > lo) || !plottable(lo) || !plottable(hi) || !isFinite(hi-lo) {
					t.Fatalf("safeRange(%g, %g, %v) = [%g, %g]", p[0], p[1], isLog, lo, hi)
				}
				if isLog {
					continue
				}
				ticks := niceTicks{}.Ticks(lo, hi)
				seen := map[string]bool{}
				major := 0
				for _, tk := range ticks {
					if tk.Label == "" {
						continue
					}
					major++
					if seen[tk.Label] {
						t.Fatalf("range [%g, %g]: label %q repeats in %v", lo, hi, tk.Label, ticks)
					}
					seen[tk.Label] = true
				}
				if major == 0 || len(ticks) > 300 {
					t.Fatalf("range [%g, %g]: %d ticks, %d labelled", lo, hi, len(ticks), major)
				}
			}
		}
	})
	// A plot whose data reach ±MaxFloat64 draws.
	p := newPlot("t", "x", "y")
	scatterErr(p, []float64{0, 1, 2}, []float64{-math.MaxFloat64, 0, math.MaxFloat64}, []float64{1e308, 1e308, math.Inf(1)}, instStyle(0))
	safeAxes(p)
	if !isFinite(p.Y.Max - p.Y.Min) {
		t.Errorf("y range [%g, %g] overflows", p.Y.Min, p.Y.Max)
	}
	var _ plot.Ticker = niceTicks{}
}

// TestTickLabels checks the labels: no needless decimals, no repeats.
func TestTickLabels(t *testing.T) {
	for _, c := range []struct {
		lo, hi float64
		want   []string
	}{
		{0, 650, []string{"0", "200", "400", "600"}},        // not 200.00
		{-1.25, -1.15, []string{"-1.25", "-1.20", "-1.15"}}, // distinct, one precision
		{0, 1, []string{"0", "0.5", "1.0"}},
		{1e9, 1e9 + 3, []string{"1000000000", "1000000001", "1000000002", "1000000003"}},
		{300, 350, []string{"300", "320", "340"}},
		{-0.00025, 0.00025, []string{"-0.0002", "0", "0.0002"}}, // not five 7-character labels in a narrow panel
	} {
		var got []string
		for _, tk := range (niceTicks{}).Ticks(c.lo, c.hi) {
			if tk.Label != "" {
				got = append(got, tk.Label)
			}
		}
		if strings.Join(got, " ") != strings.Join(c.want, " ") {
			t.Errorf("ticks on [%g, %g] = %v, want %v", c.lo, c.hi, got, c.want)
		}
	}
}
