package rvfit

import (
	"fmt"
	"math"
	"sort"
	"strconv"
)

// Model is a radial-velocity model: any number of Keplerians, one offset
// per instrument and a pluggable noise model, with a prior on every
// parameter. The parameter vector θ is, in order,
//
//	for each planet n = 1..N: P<n> (d), K<n> (m/s), sqe_cos<n>, sqe_sin<n>
//	  (√e cos ω, √e sin ω), tconj<n> (BJD_TDB d, time of inferior
//	  conjunction);
//	offset_<instrument> (m/s) for each instrument;
//	with ModelOptions.Trend ≥ 1, trend1 (m/s/d) and with 2 also trend2
//	(m/s/d²), a polynomial in t − t_ref (t_ref the middle of the data,
//	Model.RefTime);
//	the noise model's parameters (for WhiteNoise: jitter_<instrument>).
//
// The eccentricity prior applies to e = sqe_cos² + sqe_sin²; with uniform ω
// the map (e, ω) → (√e cos ω, √e sin ω) has a constant Jacobian, so no
// correction term is needed. Orbits with e ≥ MaxEccentricity get zero
// probability. A Model is safe for concurrent use.
type Model struct {
	nPlanets int
	instr    []string
	noise    NoiseModel
	names    []string
	priors   []Prior
	ecc      Prior
	emax     float64
	// data
	t, y, v []float64
	inst    []int
	tmid    float64
	tcFree  []bool // tc prior is the default one-period window
	trend   int
}

// ModelOptions sets priors and limits. The zero value (or nil) gives the
// defaults listed with each field.
type ModelOptions struct {
	// Priors overrides default priors by parameter name (see Model).
	// Defaults: P log-uniform on [PMin, PMax]; K uniform on
	// [0, 3·(max−min of RV)]; sqe_cos, sqe_sin uniform on [−1, 1]; tconj
	// uniform over one period centred on the middle of the data; offsets
	// uniform over the RV range widened by its width on each side; noise
	// parameters from the noise model's DefaultPriors (required
	// otherwise).
	Priors map[string]Prior
	// Eccentricity is the prior on e; nil means uniform on [0, 1)
	// (KippingEccentricity is a common alternative).
	Eccentricity Prior
	// MaxEccentricity bounds e; zero means 0.95.
	MaxEccentricity float64
	// PMin and PMax bound the default period prior in days; zero means
	// 1 d and 10 baselines.
	PMin, PMax float64
	// Trend is the degree of a polynomial trend added to the model: 0
	// (none, the zero value), 1 (linear) or 2 (quadratic). Default priors:
	// uniform within ±3·(RV range)/T^k.
	Trend int
}

// NewModel returns the model of nPlanets Keplerians for series s with the
// noise model noise (nil means WhiteNoise with one jitter per
// instrument).
//
// Errors: the series' validation errors (as GLS), ErrTooManyParams when s
// has fewer epochs than free parameters, ErrBadPrior for an invalid or
// misnamed prior, ErrBadOption for a bad option.
func NewModel(s *Series, nPlanets int, noise NoiseModel, opts *ModelOptions) (*Model, error) {
	var o ModelOptions
	if opts != nil {
		o = *opts
	}
	if s == nil || s.Len() == 0 {
		return nil, ErrNoObservations
	}
	if nPlanets < 0 {
		return nil, fmt.Errorf("%w: %d planets", ErrBadOption, nPlanets)
	}
	d, err := newGLSDataMin(s.Time, s.RV, s.RVErr, s.Instrument, 1)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", s.Name, err)
	}
	for i, nm := range d.names {
		if nm == "" {
			d.names[i] = DefaultInstrument
		}
	}
	m := &Model{nPlanets: nPlanets, instr: d.names, emax: o.MaxEccentricity, ecc: o.Eccentricity}
	if m.emax == 0 {
		m.emax = 0.95
	}
	if !(m.emax > 0 && m.emax < 1) {
		return nil, fmt.Errorf("%w: maximum eccentricity %g", ErrBadOption, m.emax)
	}
	if m.ecc == nil {
		m.ecc = Uniform{Min: 0, Max: 1}
	}
	if err := m.ecc.Validate(); err != nil {
		return nil, fmt.Errorf("eccentricity prior: %w", err)
	}
	if noise == nil {
		noise = &WhiteNoise{Instruments: append([]string(nil), d.names...)}
	}
	m.noise = noise
	n := len(s.Time)
	m.t = append([]float64(nil), s.Time...)
	m.y = append([]float64(nil), s.RV...)
	m.v = make([]float64, n)
	for i, e := range s.RVErr {
		m.v[i] = e * e
	}
	m.inst = append([]int(nil), d.inst...)
	m.tmid = d.tref
	T := s.Baseline()
	lo, hi := m.y[0], m.y[0]
	for _, y := range m.y {
		lo, hi = math.Min(lo, y), math.Max(hi, y)
	}
	span := math.Max(hi-lo, 1e-3)
	pmin, pmax := o.PMin, o.PMax
	if pmin == 0 {
		pmin = 1
	}
	if pmax == 0 {
		pmax = 10 * T
	}
	if !(pmin > 0 && pmin < pmax) {
		return nil, fmt.Errorf("%w: period prior bounds %g, %g d", ErrBadPrior, pmin, pmax)
	}
	for p := 1; p <= nPlanets; p++ {
		k := strconv.Itoa(p)
		m.names = append(m.names, "P"+k, "K"+k, "sqe_cos"+k, "sqe_sin"+k, "tconj"+k)
		m.priors = append(m.priors, LogUniform{pmin, pmax}, Uniform{0, 3 * span}, Uniform{-1, 1}, Uniform{-1, 1}, nil)
		m.tcFree = append(m.tcFree, true)
	}
	for _, in := range d.names {
		m.names = append(m.names, "offset_"+in)
		m.priors = append(m.priors, Uniform{lo - span, hi + span})
	}
	if o.Trend < 0 || o.Trend > 2 {
		return nil, fmt.Errorf("%w: trend degree %d (want 0, 1 or 2)", ErrBadOption, o.Trend)
	}
	m.trend = o.Trend
	for k := 1; k <= o.Trend; k++ {
		lim := 3 * span / math.Pow(math.Max(T, 1e-3), float64(k))
		m.names = append(m.names, "trend"+strconv.Itoa(k))
		m.priors = append(m.priors, Uniform{-lim, lim})
	}
	nn := noise.NumParams()
	names := noise.ParamNames()
	if len(names) != nn {
		return nil, fmt.Errorf("%w: noise model names %d parameters, has %d", ErrBadOption, len(names), nn)
	}
	var np []Prior
	if dp, ok := noise.(NoisePriorer); ok {
		np = dp.DefaultPriors(stddev(m.y), T)
	}
	for i, nm := range names {
		m.names = append(m.names, nm)
		var p Prior
		if i < len(np) {
			p = np[i]
		}
		m.priors = append(m.priors, p)
	}
	index := map[string]int{}
	for i, nm := range m.names {
		index[nm] = i
	}
	keys := make([]string, 0, len(o.Priors))
	for k := range o.Priors {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		i, ok := index[k]
		if !ok {
			return nil, fmt.Errorf("%w: no parameter %q (have %v)", ErrBadPrior, k, m.names)
		}
		m.priors[i] = o.Priors[k]
		if (i < 5*nPlanets) && i%5 == 4 {
			m.tcFree[i/5] = false
		}
	}
	for i, p := range m.priors {
		if p == nil {
			if i < 5*nPlanets && i%5 == 4 {
				continue
			}
			return nil, fmt.Errorf("%w: parameter %q has no prior", ErrBadPrior, m.names[i])
		}
		if err := p.Validate(); err != nil {
			return nil, fmt.Errorf("parameter %q: %w", m.names[i], err)
		}
	}
	if n < len(m.names) {
		return nil, fmt.Errorf("%s: %w: %d epochs, %d free parameters (%d planets, %d instruments, %d noise parameters)", s.Name, ErrTooManyParams, n, len(m.names), nPlanets, len(d.names), nn)
	}
	return m, nil
}

func stddev(x []float64) float64 {
	mu := 0.0
	for _, v := range x {
		mu += v
	}
	mu /= float64(len(x))
	s := 0.0
	for _, v := range x {
		s += (v - mu) * (v - mu)
	}
	return math.Sqrt(s / float64(len(x)))
}

// noiseStart returns the index of the first noise parameter in θ.
func (m *Model) noiseStart() int { return 5*m.nPlanets + len(m.instr) + m.trend }

// RefTime returns t_ref, the middle of the data's time span (BJD_TDB d),
// the origin of the trend polynomial.
func (m *Model) RefTime() float64 { return m.tmid }

// NumParams returns the length of θ.
func (m *Model) NumParams() int { return len(m.names) }

// ParamNames returns the names of θ's elements.
func (m *Model) ParamNames() []string { return append([]string(nil), m.names...) }

// NumPlanets returns the number of Keplerians.
func (m *Model) NumPlanets() int { return m.nPlanets }

// Instruments returns the instrument labels in offset order.
func (m *Model) Instruments() []string { return append([]string(nil), m.instr...) }

// Prior returns the prior of parameter i (nil for a tc with the default
// one-period window).
func (m *Model) Prior(i int) Prior { return m.priors[i] }

// Keplerians returns the orbits encoded in θ.
func (m *Model) Keplerians(theta []float64) []Keplerian {
	out := make([]Keplerian, m.nPlanets)
	for p := range out {
		q := theta[5*p : 5*p+5]
		out[p] = KeplerianFromSqrtE(q[0], q[1], q[2], q[3], q[4])
	}
	return out
}

// LogPrior returns ln π(θ), −Inf outside the support.
func (m *Model) LogPrior(theta []float64) float64 {
	if len(theta) != len(m.names) {
		return math.Inf(-1)
	}
	lp := 0.0
	for p := 0; p < m.nPlanets; p++ {
		q := theta[5*p : 5*p+5]
		e := q[2]*q[2] + q[3]*q[3]
		if !(e < m.emax) {
			return math.Inf(-1)
		}
		lp += m.ecc.LogProb(e)
		if m.tcFree[p] {
			if !(q[0] > 0) || math.Abs(q[4]-m.tmid) > q[0]/2 {
				return math.Inf(-1)
			}
			lp -= math.Log(q[0])
		}
	}
	for i, pr := range m.priors {
		if pr == nil {
			continue
		}
		lp += pr.LogProb(theta[i])
		if math.IsInf(lp, -1) {
			return lp
		}
	}
	return lp
}

// Predict returns the model velocities (Keplerians plus the offset of each
// epoch's instrument plus any trend) at the data epochs, in m/s.
func (m *Model) Predict(theta []float64) []float64 {
	out := make([]float64, len(m.t))
	m.predict(out, theta)
	return out
}

func (m *Model) predict(dst, theta []float64) {
	off := theta[5*m.nPlanets : 5*m.nPlanets+len(m.instr)]
	tr := theta[5*m.nPlanets+len(m.instr) : m.noiseStart()]
	for i := range dst {
		dst[i] = off[m.inst[i]]
		if len(tr) > 0 {
			x := m.t[i] - m.tmid
			v := tr[0] * x
			if len(tr) > 1 {
				v += tr[1] * x * x
			}
			dst[i] += v
		}
	}
	m.addKeplerians(dst, theta, m.t)
}

// addKeplerians adds the Keplerians of θ at times t to dst. The mean
// anomaly is taken as M = 2π(t − t_c)/P + M_c(e, ω) (M_c at conjunction),
// not through an absolute time of periastron: t − t_c is exact for nearby
// times, so the velocities vary smoothly with t_c and P instead of in
// steps of the rounding of a BJD near 2.46e6 (4.7e-10 d).
func (m *Model) addKeplerians(dst, theta, t []float64) {
	var mb, sb, cb [256]float64
	for p := 0; p < m.nPlanets; p++ {
		q := theta[5*p : 5*p+5]
		P, K, tc := q[0], q[1], q[4]
		e := q[2]*q[2] + q[3]*q[3]
		omega := math.Atan2(q[3], q[2])
		sw, cw := math.Sincos(omega)
		beta := math.Sqrt(1 - e*e)
		ecw := e * cw
		mc := conjunctionMeanAnomaly(e, omega)
		n := 2 * math.Pi / P
		for lo := 0; lo < len(t); lo += len(mb) {
			hi := min(lo+len(mb), len(t))
			M, sE, cE := mb[:hi-lo], sb[:hi-lo], cb[:hi-lo]
			for i := range M {
				M[i] = n*(t[lo+i]-tc) + mc
			}
			keplerBatch(M, sE, cE, M, e)
			for i := range M {
				dst[lo+i] += K * (((cE[i]-e)*cw-beta*sE[i]*sw)/(1-e*cE[i]) + ecw)
			}
		}
	}
}

// PredictAt returns the Keplerians' velocity (no offsets) at times t.
func (m *Model) PredictAt(theta, t []float64) []float64 {
	out := make([]float64, len(t))
	m.addKeplerians(out, theta, t)
	return out
}

// Residuals returns observed minus predicted velocities in m/s.
func (m *Model) Residuals(theta []float64) []float64 {
	r := m.Predict(theta)
	for i := range r {
		r[i] = m.y[i] - r[i]
	}
	return r
}

// LogLikelihood returns ln L(θ) from the noise model applied to the
// residuals.
func (m *Model) LogLikelihood(theta []float64) (float64, error) {
	if len(theta) != len(m.names) {
		return 0, fmt.Errorf("%w: %d values for %d parameters", ErrBadParams, len(theta), len(m.names))
	}
	for p := 0; p < m.nPlanets; p++ {
		q := theta[5*p : 5*p+5]
		if !(q[0] > 0) || !(q[2]*q[2]+q[3]*q[3] < 1) {
			return math.Inf(-1), fmt.Errorf("%w: planet %d: P = %g, e = %g", ErrBadParams, p+1, q[0], q[2]*q[2]+q[3]*q[3])
		}
	}
	r := m.Residuals(theta)
	return m.noise.LogLikelihood(m.t, r, m.v, m.inst, theta[m.noiseStart():])
}

// LogPosterior returns ln π(θ) + ln L(θ) (unnormalised), −Inf where the
// prior vanishes or the likelihood cannot be evaluated.
func (m *Model) LogPosterior(theta []float64) float64 {
	lp := m.LogPrior(theta)
	if math.IsInf(lp, -1) || math.IsNaN(lp) {
		return math.Inf(-1)
	}
	ll, err := m.LogLikelihood(theta)
	if err != nil || math.IsNaN(ll) {
		return math.Inf(-1)
	}
	return lp + ll
}
