package rvgp

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat"

	"spotsift/gp"
	"spotsift/rvfit"
)

// Activity models for NewActivity.
const (
	// Rotation is the two-oscillator rotation kernel (gp.RotationSHO,
	// modes at P and P/2), O(N).
	Rotation = "rotation"
	// QuasiPeriodic is the quasi-periodic kernel (dense, O(N³)).
	QuasiPeriodic = "qp"
	// Multi is the multi-output model (MultiNoise), O(N).
	Multi = "multi"
)

// ActivityOptions carries what is known of the star.
type ActivityOptions struct {
	// Rotation and RotationErr (days) are the star's rotation period and
	// its error; zero means unknown (RotationErr zero with a period means
	// 10%).
	Rotation, RotationErr float64
	// Start, when not nil, gives starting values by parameter name for
	// the first start (for example the optimum of a cheaper fit of the
	// activity model alone, activity.FitGPActivity); the other starts
	// cycle through the starting periods.
	Start map[string]float64
}

// NewActivity returns the activity noise model kind (Rotation,
// QuasiPeriodic or Multi; "" or "none" gives nil, rvfit's white noise) for
// series s with its priors — the one place where spotsift's GP priors
// live:
//
//   - jitters uniform on [0, 5σ] (σ the scatter of the series);
//   - the GP period a truncated Gaussian about the star's rotation period
//     (±4 errors), else log-uniform between 1.5 d and half the baseline;
//   - amplitudes log-uniform between 10⁻³σ and 10σ; quality factors
//     log-uniform on [0.05, 30] (the P/2 mode) and [0.01, 30] (the gap to
//     the rotation mode), the P/2 mode's weight uniform on [0, 1];
//   - the QP kernel's evolution time log-uniform from half the shortest
//     period to ten baselines, its harmonic complexity log-uniform on
//     [0.1, 5];
//   - the multi-output levels uniform within ±10σ of each series (the RV
//     level positive, which fixes the sign of the latent process) and the
//     slopes within ±10σ·P_max/2π (dG/dt of a unit process is ~2π/P).
//
// The model's starting periods come from the rotation period when known
// and from the highest GLS peaks of the RVs and of each indicator with
// errors (and their doubles), so every start sits on a period the data
// show.
//
// Errors: rvfit.ErrBadOption for an unknown kind, MultiNoise's errors for
// missing indicator columns.
func NewActivity(kind string, s *rvfit.Series, o ActivityOptions) (rvfit.NoiseModel, map[string]rvfit.Prior, error) {
	if kind == "none" || kind == "" {
		return nil, nil, nil
	}
	T := s.Baseline()
	_, sd := stat.PopMeanStdDev(s.RV, nil)
	sd = math.Max(sd, 1e-3)
	pLo, pHi := 1.5, math.Max(T/2, 3)
	var pPrior rvfit.Prior = rvfit.LogUniform{Min: pLo, Max: pHi}
	if o.Rotation > 0 {
		pe := o.RotationErr
		if !(pe > 0) {
			pe = 0.1 * o.Rotation
		}
		pLo, pHi = math.Max(0.5, o.Rotation-4*pe), o.Rotation+4*pe
		pPrior = rvfit.TruncatedGaussian{Mu: o.Rotation, Sigma: pe, Min: pLo, Max: pHi}
	}
	starts := startPeriods(s, o.Rotation, pLo, pHi)
	instruments := s.Instruments()
	priors := map[string]rvfit.Prior{}
	for _, in := range instruments {
		priors["jitter_"+in] = rvfit.Uniform{Min: 0, Max: 5 * sd}
	}
	var k gp.Kernel
	var names []string
	p0 := starts[0]
	switch kind {
	case Rotation:
		k = gp.RotationSHO{Amp: sd, Period: p0, Quality: 1, QualityGap: 1, Mix: 0.5}
		names = []string{"gp_amp", "gp_prot", "gp_qual", "gp_qgap", "gp_mix"}
		priors["gp_amp"] = rvfit.LogUniform{Min: 1e-3 * sd, Max: 10 * sd}
		priors["gp_prot"] = pPrior
		priors["gp_qual"] = rvfit.LogUniform{Min: 0.05, Max: 30}
		priors["gp_qgap"] = rvfit.LogUniform{Min: 0.01, Max: 30}
		priors["gp_mix"] = rvfit.Uniform{Min: 0, Max: 1}
	case QuasiPeriodic:
		k = gp.QuasiPeriodic{Eta1: sd, Eta2: 3 * p0, Eta3: p0, Eta4: 0.5}
		names = []string{"gp_eta1", "gp_eta2", "gp_eta3", "gp_eta4"}
		priors["gp_eta1"] = rvfit.LogUniform{Min: 1e-3 * sd, Max: 10 * sd}
		priors["gp_eta2"] = rvfit.LogUniform{Min: pLo / 2, Max: 10 * T}
		priors["gp_eta3"] = pPrior
		priors["gp_eta4"] = rvfit.LogUniform{Min: 0.1, Max: 5}
	case Multi:
		n, pri, err := multiActivity(s, priors, pPrior, pHi, sd, starts)
		if err == nil {
			mn := n.(*MultiNoise)
			mn.first = firstStart(mn.names, mn.start, o.Start)
		}
		return n, pri, err
	default:
		return nil, nil, fmt.Errorf("%w: activity model %q: want none, %s, %s or %s", rvfit.ErrBadOption, kind, Rotation, QuasiPeriodic, Multi)
	}
	n, err := New(k, names, instruments, gp.AutoSolver)
	if err != nil {
		return nil, nil, err
	}
	n.periodIdx = 1
	if kind == QuasiPeriodic {
		n.periodIdx = 2
		n.evolIdx, n.longEvol = 1, math.Max(3*p0, T)
	}
	n.starts = starts
	n.start = k.Params(nil)
	for range instruments {
		n.start = append(n.start, 0.3*sd)
	}
	n.first = firstStart(n.names, n.start, o.Start)
	return n, priors, nil
}

// multiActivity builds the Multi model on the series' chromospheric index
// (log_rhk, else s_index, else halpha) and bisector span.
func multiActivity(s *rvfit.Series, priors map[string]rvfit.Prior, pPrior rvfit.Prior, pHi, sd float64, starts []float64) (rvfit.NoiseModel, map[string]rvfit.Prior, error) {
	index := ""
	for _, name := range []string{"log_rhk", "s_index", "halpha"} {
		if ind := s.Indicator(name); ind != nil && ind.Err != nil {
			index = name
			break
		}
	}
	bis := ""
	if ind := s.Indicator("bis"); ind != nil && ind.Err != nil {
		bis = "bis"
	}
	n, err := NewMultiNoise(s, index, bis)
	if err != nil {
		return nil, nil, fmt.Errorf("activity model multi: %w", err)
	}
	n.starts = starts
	rW := pHi / (2 * math.Pi)
	priors["gp_prot"] = pPrior
	priors["gp_qual"] = rvfit.LogUniform{Min: 0.05, Max: 30}
	priors["gp_qgap"] = rvfit.LogUniform{Min: 0.01, Max: 30}
	priors["gp_mix"] = rvfit.Uniform{Min: 0, Max: 1}
	priors["gp_rv_level"] = rvfit.Uniform{Min: 0, Max: 10 * sd}
	priors["gp_rv_slope"] = rvfit.Uniform{Min: -10 * sd * rW, Max: 10 * sd * rW}
	if index != "" {
		w := 10 * scatter(s, index)
		priors["gp_"+index+"_level"] = rvfit.Uniform{Min: -w, Max: w}
		priors["jitter_"+index] = rvfit.Uniform{Min: 0, Max: w / 2}
	}
	if bis != "" {
		w := 10 * scatter(s, bis)
		priors["gp_"+bis+"_level"] = rvfit.Uniform{Min: -w, Max: w}
		priors["gp_"+bis+"_slope"] = rvfit.Uniform{Min: -w * rW, Max: w * rW}
		priors["jitter_"+bis] = rvfit.Uniform{Min: 0, Max: w / 2}
	}
	return n, priors, nil
}

// scatter is the standard deviation of an indicator's valid values.
func scatter(s *rvfit.Series, name string) float64 {
	ind := s.Indicator(name)
	var v []float64
	for i := range ind.Value {
		if ind.Valid(i) {
			v = append(v, ind.Value[i])
		}
	}
	_, sd := stat.PopMeanStdDev(v, nil)
	return math.Max(sd, 1e-9)
}

// startPeriods returns the starting GP periods in (lo, hi): the rotation
// period when known, the highest GLS peak of the RVs and of every
// indicator with errors, then their doubles; at least one (the geometric
// middle of the range when nothing else qualifies).
func startPeriods(s *rvfit.Series, rot, lo, hi float64) []float64 {
	var out []float64
	add := func(p float64) {
		if !(p > lo && p < hi) {
			return
		}
		for _, q := range out {
			if math.Abs(math.Log(p/q)) < 0.05 {
				return
			}
		}
		out = append(out, p)
	}
	add(rot)
	peak := func(t, y, e []float64) float64 {
		if len(t) < 6 {
			return math.NaN()
		}
		g, err := rvfit.NewGrid(t, &rvfit.GridOptions{PMin: lo, PMax: hi, Oversampling: 5})
		if err != nil {
			return math.NaN()
		}
		pg, err := rvfit.GLS(t, y, e, g, nil)
		if err != nil {
			return math.NaN()
		}
		k := 0
		for i, v := range pg.Power {
			if v > pg.Power[k] {
				k = i
			}
		}
		return 1 / g.Freq(k)
	}
	peaks := []float64{peak(s.Time, s.RV, s.RVErr)}
	for _, ind := range s.Indicators {
		if ind.Err == nil {
			continue
		}
		var t, y, e []float64
		for i := range ind.Value {
			if ind.Valid(i) && ind.Err[i] > 0 {
				t, y, e = append(t, s.Time[i]), append(y, ind.Value[i]), append(e, ind.Err[i])
			}
		}
		peaks = append(peaks, peak(t, y, e))
	}
	for _, p := range peaks {
		add(p)
	}
	for _, p := range peaks {
		add(2 * p)
	}
	if len(out) == 0 {
		out = append(out, math.Sqrt(lo*hi))
	}
	return out
}

// firstStart returns the default start with the values given by name
// replaced (nil when none is given).
func firstStart(names []string, def []float64, given map[string]float64) []float64 {
	if len(given) == 0 {
		return nil
	}
	out := append([]float64(nil), def...)
	hit := false
	for i, n := range names {
		if v, ok := given[n]; ok && !math.IsNaN(v) && !math.IsInf(v, 0) {
			out[i], hit = v, true
		}
	}
	if !hit {
		return nil
	}
	return out
}
