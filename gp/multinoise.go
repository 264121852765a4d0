package gp

import (
	"fmt"
	"math"
)

// MultiNoise is a multi-output model with one white-noise jitter per
// series (unit of that series), added in quadrature to the series'
// variances. Several series may share an Output — e.g. the RVs of two
// instruments — and still have their own jitter. The parameter vector is
// Model.Params followed by Jitter.
type MultiNoise struct {
	Model  Multi
	Jitter []float64 // one per series, ≥ 0; nil means none
}

// NumParams returns the model's count plus len(Jitter).
func (m *MultiNoise) NumParams() int { return m.Model.NumParams() + len(m.Jitter) }

// Params appends the model parameters and then the jitters.
func (m *MultiNoise) Params(dst []float64) []float64 {
	return append(m.Model.Params(dst), m.Jitter...)
}

// WithParams returns a copy with parameter vector p.
func (m *MultiNoise) WithParams(p []float64) (*MultiNoise, error) {
	if len(p) != m.NumParams() {
		return nil, fmt.Errorf("%w: MultiNoise needs %d, got %d", ErrParamCount, m.NumParams(), len(p))
	}
	nm := m.Model.NumParams()
	mm, err := m.Model.WithParams(p[:nm])
	if err != nil {
		return nil, err
	}
	out := &MultiNoise{Model: mm, Jitter: append([]float64(nil), p[nm:]...)}
	return out, out.Validate()
}

// Validate checks the model and that every jitter is non-negative.
func (m *MultiNoise) Validate() error {
	if err := m.Model.Validate(); err != nil {
		return err
	}
	for i, s := range m.Jitter {
		if err := nonNegative("MultiNoise", fmt.Sprintf("Jitter[%d]", i), s); err != nil {
			return err
		}
	}
	return nil
}

// Factor returns the factorised covariance of the series with the jitters
// added. len(Jitter) must be 0 or len(series).
func (m *MultiNoise) Factor(series []Series) (*MultiDense, error) {
	if err := m.Validate(); err != nil {
		return nil, err
	}
	if m.Jitter != nil && len(m.Jitter) != len(series) {
		return nil, fmt.Errorf("%w: %d jitters for %d series", ErrLength, len(m.Jitter), len(series))
	}
	withJ := make([]Series, len(series))
	for i, s := range series {
		v := make([]float64, len(s.T))
		if s.Variance != nil {
			if len(s.Variance) != len(s.T) {
				return nil, fmt.Errorf("series %d: %w: %d epochs, %d variances", i, ErrLength, len(s.T), len(s.Variance))
			}
			copy(v, s.Variance)
		}
		if m.Jitter != nil {
			for k := range v {
				v[k] += m.Jitter[i] * m.Jitter[i]
			}
		}
		withJ[i] = Series{Output: s.Output, T: s.T, Variance: v}
	}
	return NewMultiDense(m.Model, withJ, nil)
}

// LogLikelihood returns ln L of per-series residuals r.
func (m *MultiNoise) LogLikelihood(series []Series, r [][]float64) (float64, error) {
	md, err := m.Factor(series)
	if err != nil {
		return math.Inf(-1), err
	}
	return md.LogLikelihoodSeries(r)
}

// FitMultiNoise fits a MultiNoise model (latent kernel parameters and
// jitters in log space, output coefficients unconstrained) to per-series
// values y by MAP with Laplace uncertainties. Jitters starting at zero
// must be held fixed.
func FitMultiNoise(m *MultiNoise, series []Series, y [][]float64, s *FitSettings) (*MultiNoise, *FitResult, error) {
	md, err := m.Factor(series)
	if err != nil {
		return nil, nil, err
	}
	if _, err := md.LogLikelihoodSeries(y); err != nil {
		return nil, nil, err
	}
	var all []float64
	for _, sr := range series {
		all = append(all, sr.T...)
	}
	if err := checkKernelPeriods(m.Model.Latent, all); err != nil {
		return nil, nil, err
	}
	p0 := m.Params(nil)
	pos := make([]bool, len(p0))
	nl := m.Model.Latent.NumParams()
	nm := m.Model.NumParams()
	for i := range pos {
		pos[i] = i < nl || (i >= nm && (s == nil || s.Fixed == nil || !s.Fixed[i]))
	}
	lnL := func(p []float64) float64 {
		mm, err := m.WithParams(p)
		if err != nil {
			return math.Inf(-1)
		}
		ll, err := mm.LogLikelihood(series, y)
		if err != nil {
			return math.Inf(-1)
		}
		return ll
	}
	res, err := MAP(lnL, p0, pos, s)
	if res == nil {
		return nil, nil, err
	}
	best, werr := m.WithParams(res.Params)
	if werr != nil {
		return nil, res, werr
	}
	return best, res, err
}
