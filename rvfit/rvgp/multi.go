package rvgp

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/stat"

	"spotsift/gp"
	"spotsift/rvfit"
)

// MultiNoise is the multi-output activity model of Rajpaul et al. (2015)
// as an rvfit noise model, solved in O(N) by gp.MultiRotation: one latent
// rotation process G (unit-amplitude two-oscillator kernel) and its time
// derivative drive the RV residuals (level·G + slope·dG/dt) and, jointly,
// the indicator series given at construction (a chromospheric index,
// level·G, and the bisector span, level·G + slope·dG/dt), each on its own
// epochs. The indicators enter the likelihood as fixed data about their
// weighted means, so the Keplerians, which live in the RV mean only, are
// fitted with the activity constrained by all series at once.
//
// Parameters, in order: gp_prot (d), gp_qual, gp_qgap, gp_mix (the latent
// kernel, as gp.RotationSHO's Period, Quality, QualityGap, Mix), then
// gp_rv_level, gp_rv_slope, gp_<index>_level, gp_bis_level, gp_bis_slope
// (for the series present), then one RV jitter per instrument and one
// jitter per indicator series.
//
// Reference: Rajpaul, Aigrain, Osborne, Reece & Roberts 2015, MNRAS 452,
// 2269; see docs/methods.md.
type MultiNoise struct {
	mr      *gp.MultiRotation
	index   string
	bis     string
	ind     [][]float64 // indicator residuals about their means
	rvIdx   [][]int     // epochs of each RV series (per instrument)
	nEpochs int
	names   []string
	starts  []float64 // starting periods
	hasBIS  bool
	hasInd  bool
	start   []float64 // starting values of every parameter but the period
	first   []float64 // the first start, when given (ActivityOptions.Start)
}

var (
	_ rvfit.NoiseModel     = (*MultiNoise)(nil)
	_ rvfit.NoisePredictor = (*MultiNoise)(nil)
	_ rvfit.NoiseStarter   = (*MultiNoise)(nil)
)

// NewMultiNoise returns the multi-output noise model for a series: index
// names its chromospheric indicator column (e.g. "log_rhk" or "s_index"),
// bis its bisector column ("bis"); either may be "" but not both. The
// indicator columns need an error column.
func NewMultiNoise(s *rvfit.Series, index, bis string) (*MultiNoise, error) {
	if index == "" && bis == "" {
		return nil, fmt.Errorf("%w: the multi-output model needs an index or a bisector column", rvfit.ErrBadOption)
	}
	m := &MultiNoise{index: index, bis: bis, nEpochs: s.Len(), hasInd: index != "", hasBIS: bis != ""}
	instrs := s.Instruments()
	var series []gp.Series
	outputs := []string{"rv"}
	for _, in := range instrs {
		var g gp.Series
		var idx []int
		for i := range s.Time {
			if s.Instrument[i] == in || (in == rvfit.DefaultInstrument && s.Instrument[i] == "") {
				g.T = append(g.T, s.Time[i])
				g.Variance = append(g.Variance, s.RVErr[i]*s.RVErr[i])
				idx = append(idx, i)
			}
		}
		series = append(series, g)
		m.rvIdx = append(m.rvIdx, idx)
	}
	var indStart, indJit []float64
	take := func(name string, out int) error {
		ind := s.Indicator(name)
		if ind == nil {
			return fmt.Errorf("%w: no %q column for the multi-output model", rvfit.ErrMissingColumn, name)
		}
		if ind.Err == nil {
			return fmt.Errorf("%w: column %q has no uncertainties (%s_err)", rvfit.ErrMissingColumn, name, name)
		}
		g := gp.Series{Output: out}
		var y []float64
		sw, swy := 0.0, 0.0
		for i := range ind.Value {
			if !ind.Valid(i) || !(ind.Err[i] > 0) {
				continue
			}
			g.T = append(g.T, s.Time[i])
			g.Variance = append(g.Variance, ind.Err[i]*ind.Err[i])
			y = append(y, ind.Value[i])
			w := 1 / (ind.Err[i] * ind.Err[i])
			sw += w
			swy += w * ind.Value[i]
		}
		if len(y) < 4 {
			return fmt.Errorf("%w: column %q has %d values", rvfit.ErrTooFewEpochs, name, len(y))
		}
		for i := range y {
			y[i] -= swy / sw
		}
		series = append(series, g)
		m.ind = append(m.ind, y)
		outputs = append(outputs, name)
		// Start: level 0.7 of the scatter, signed as the indicator's
		// correlation with the RVs at the same epochs.
		var a, b []float64
		for i := range ind.Value {
			if ind.Valid(i) && ind.Err[i] > 0 {
				a, b = append(a, s.RV[i]), append(b, ind.Value[i])
			}
		}
		sc := stat.StdDev(y, nil)
		lvl := 0.7 * sc
		if stat.Correlation(a, b, nil) < 0 {
			lvl = -lvl
		}
		indStart = append(indStart, lvl)
		indJit = append(indJit, 0.3*sc)
		return nil
	}
	if index != "" {
		if err := take(index, len(outputs)); err != nil {
			return nil, err
		}
	}
	if bis != "" {
		if err := take(bis, len(outputs)); err != nil {
			return nil, err
		}
	}
	var err error
	if m.mr, err = gp.NewMultiRotation(outputs, series); err != nil {
		return nil, fmt.Errorf("%s: %w", s.Name, err)
	}
	m.names = []string{"gp_prot", "gp_qual", "gp_qgap", "gp_mix", "gp_rv_level", "gp_rv_slope"}
	if m.hasInd {
		m.names = append(m.names, "gp_"+index+"_level")
	}
	if m.hasBIS {
		m.names = append(m.names, "gp_"+bis+"_level", "gp_"+bis+"_slope")
	}
	sd := math.Max(stat.StdDev(s.RV, nil), 1e-3)
	m.start = []float64{math.NaN(), 1, 2, 0.5, 0.7 * sd, 0}
	if m.hasInd {
		m.start = append(m.start, indStart[0])
	}
	if m.hasBIS {
		m.start = append(m.start, indStart[len(indStart)-1], 0)
	}
	for _, in := range instrs {
		m.names = append(m.names, "jitter_"+in)
		m.start = append(m.start, 0.3*sd)
	}
	m.start = append(m.start, indJit...)
	if m.hasInd {
		m.names = append(m.names, "jitter_"+index)
	}
	if m.hasBIS {
		m.names = append(m.names, "jitter_"+bis)
	}
	return m, nil
}

// NumParams implements rvfit.NoiseModel.
func (m *MultiNoise) NumParams() int { return len(m.names) }

// ParamNames implements rvfit.NoiseModel.
func (m *MultiNoise) ParamNames() []string { return append([]string(nil), m.names...) }

// full maps the parameters to gp.MultiRotation's vector and splits the RV
// residuals per instrument.
func (m *MultiNoise) full(resid []float64, p []float64) ([]float64, [][]float64, error) {
	if len(p) != len(m.names) {
		return nil, nil, fmt.Errorf("%w: %d parameters, want %d", rvfit.ErrBadParams, len(p), len(m.names))
	}
	if len(resid) != m.nEpochs {
		return nil, nil, fmt.Errorf("%w: %d residuals for a model of %d epochs", rvfit.ErrBadParams, len(resid), m.nEpochs)
	}
	q := append([]float64(nil), p[:6]...)
	k := 6
	if m.hasInd {
		q = append(q, p[k], 0)
		k++
	}
	if m.hasBIS {
		q = append(q, p[k], p[k+1])
		k += 2
	}
	q = append(q, p[k:]...)
	var r [][]float64
	for _, idx := range m.rvIdx {
		v := make([]float64, len(idx))
		for i, j := range idx {
			v[i] = resid[j]
		}
		r = append(r, v)
	}
	return q, append(r, m.ind...), nil
}

// LogLikelihood implements rvfit.NoiseModel: the joint Gaussian-process
// likelihood of the RV residuals and the indicator series (t, variance
// and inst must be the series' own, as rvfit.Model passes them).
func (m *MultiNoise) LogLikelihood(t, resid, variance []float64, inst []int, p []float64) (float64, error) {
	q, r, err := m.full(resid, p)
	if err != nil {
		return math.Inf(-1), err
	}
	return m.mr.LogLikelihood(q, r)
}

// PredictNoise implements rvfit.NoisePredictor: the conditional mean of
// the RV activity signal at the RV epochs given every series.
func (m *MultiNoise) PredictNoise(t, resid, variance []float64, inst []int, p []float64) ([]float64, error) {
	q, r, err := m.full(resid, p)
	if err != nil {
		return nil, err
	}
	out := make([]float64, m.nEpochs)
	o := gp.Output{C: q[4], R: q[5]}
	for _, idx := range m.rvIdx {
		tt := make([]float64, len(idx))
		for i, j := range idx {
			tt[i] = t[j]
		}
		mean, err := m.mr.Predict(q, r, o, tt)
		if err != nil {
			return nil, err
		}
		for i, j := range idx {
			out[j] = mean[i]
		}
	}
	return out, nil
}

// NoiseStart implements rvfit.NoiseStarter: start st takes the st-th
// starting period (cycling); levels at 0.7 of each series' scatter (the
// indicators' signed by their correlation with the RVs), slopes 0,
// jitters 0.3 of the scatter.
func (m *MultiNoise) NoiseStart(st int, rng *rand.Rand) []float64 {
	if st == 0 && m.first != nil {
		return append([]float64(nil), m.first...)
	}
	return periodStart(m.start, 0, m.starts, st)
}

// periodStart returns start with the period at index ip set from the
// starting periods (cycling over st); nil without starting periods.
func periodStart(start []float64, ip int, starts []float64, st int) []float64 {
	if len(starts) == 0 {
		return nil
	}
	out := append([]float64(nil), start...)
	out[ip] = starts[st%len(starts)]
	return out
}
