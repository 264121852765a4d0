package gp

import (
	"cmp"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
)

// Semisep is a factorised covariance for kernels that are sums of J
// exponential-cosine Terms (celerite kernels), with per-point variances on
// the diagonal:
//
//	K_nm = Σ_j [a_j e^(−c_j|τ|) cos(d_j τ) + b_j e^(−c_j|τ|) sin(d_j|τ|)] + δ_nm (σ_n² + nugget)
//
// It factorises K = L diag(D) Lᵀ with L unit lower triangular and
// semiseparable of rank R ≤ 2J, in O(N R²) time and memory O(N R); a real
// term (b = d = 0) uses one column, a complex term two. Log-determinant,
// solve and likelihood cost O(N R). Times must be sorted ascending
// (repeated epochs allowed). Internally times are measured from the
// first epoch to keep the cos/sin arguments small.
//
// Reference: Foreman-Mackey, Agol, Ambikasaran & Angus 2017, AJ 154, 220
// (the recurrences as restated in docs/methods.md §8).
type Semisep struct {
	kernel   Kernel
	terms    []Term
	t        []float64
	variance []float64
	r        int       // rank
	u        []float64 // Ũ, N×R
	w        []float64 // W, N×R
	phi      []float64 // φ, N×R (row 0 unused)
	d        []float64 // D, N
	logDet   float64
	status   Status
}

// NewSemisep builds and factorises the covariance of the celerite kernel k
// at sorted times t with per-point variances variance (nil means zero). A
// kernel that is not Celerite (see IsCelerite) gives ErrNotSemiseparable.
// A pivot D_n ≤ 0 means K is not positive definite: the solver is returned
// with Status NotPositiveDefinite and an error naming the row.
func NewSemisep(k Kernel, t, variance []float64) (*Semisep, error) {
	if err := validate(k); err != nil {
		return nil, err
	}
	if !IsCelerite(k) {
		return nil, fmt.Errorf("%w: %T", ErrNotSemiseparable, k)
	}
	if err := checkTimes(t, variance, true); err != nil {
		return nil, err
	}
	terms := k.(Celerite).Terms(nil)
	for i, tm := range terms {
		if !(tm.C > 0) || isBad(tm.A) || isBad(tm.B) || isBad(tm.C) || isBad(tm.D) {
			return nil, fmt.Errorf("%w: term %d has a=%g b=%g c=%g d=%g (need finite, c > 0)", ErrBadParam, i, tm.A, tm.B, tm.C, tm.D)
		}
	}
	n := len(t)
	s := &Semisep{kernel: k, terms: terms, t: append([]float64(nil), t...)}
	if variance != nil {
		s.variance = append([]float64(nil), variance...)
	} else {
		s.variance = make([]float64, n)
	}
	r := 0
	for _, tm := range terms {
		if tm.B == 0 && tm.D == 0 {
			r++
		} else {
			r += 2
		}
	}
	s.r = r
	s.u = make([]float64, n*r)
	s.w = make([]float64, n*r)
	s.phi = make([]float64, n*r)
	s.d = make([]float64, n)
	nug := nuggetOf(k)
	var asum float64
	for _, tm := range terms {
		asum += tm.A
	}
	v := make([]float64, r)
	t0 := s.t[0]
	// Ũ, Ṽ (kept temporarily in w) and φ.
	for i := 0; i < n; i++ {
		ti := s.t[i] - t0
		col := 0
		ui := s.u[i*r : i*r+r]
		vi := s.w[i*r : i*r+r]
		pi := s.phi[i*r : i*r+r]
		for _, tm := range terms {
			var ph float64
			if i > 0 {
				ph = math.Exp(-tm.C * (s.t[i] - s.t[i-1]))
			}
			if tm.B == 0 && tm.D == 0 {
				ui[col], vi[col], pi[col] = tm.A, 1, ph
				col++
				continue
			}
			sn, cs := math.Sincos(tm.D * ti)
			ui[col] = tm.A*cs + tm.B*sn
			ui[col+1] = tm.A*sn - tm.B*cs
			vi[col], vi[col+1] = cs, sn
			pi[col], pi[col+1] = ph, ph
			col += 2
		}
	}
	// Factorisation.
	S := make([]float64, r*r)
	for i := 0; i < n; i++ {
		a := s.variance[i] + nug + asum
		ui := s.u[i*r : i*r+r]
		wi := s.w[i*r : i*r+r]
		copy(v, wi) // Ṽ[i]
		if i > 0 {
			pi := s.phi[i*r : i*r+r]
			wp := s.w[(i-1)*r : i*r]
			dp := s.d[i-1]
			for p := 0; p < r; p++ {
				sp := S[p*r : p*r+r]
				f := dp * wp[p]
				for q := 0; q < r; q++ {
					sp[q] = pi[p] * (sp[q] + f*wp[q]) * pi[q]
				}
			}
			// D = A − Ũ S Ũᵀ; W = (Ṽ − Ũ S)/D.
			var uSu float64
			for q := 0; q < r; q++ {
				var us float64
				for p := 0; p < r; p++ {
					us += ui[p] * S[p*r+q]
				}
				uSu += us * ui[q]
				v[q] -= us
			}
			a -= uSu
		}
		if !(a > 0) || math.IsInf(a, 0) {
			s.status = NotPositiveDefinite
			return s, fmt.Errorf("%w: semiseparable pivot %d (t = %g) is %g", ErrNotPositiveDefinite, i, s.t[i], a)
		}
		s.d[i] = a
		for q := 0; q < r; q++ {
			wi[q] = v[q] / a
		}
		s.logDet += math.Log(a)
	}
	return s, nil
}

// Len returns the number of points.
func (s *Semisep) Len() int { return len(s.t) }

// Rank returns R, the number of semiseparable columns.
func (s *Semisep) Rank() int { return s.r }

// Status returns the outcome of the factorisation (Factorized or
// NotPositiveDefinite; the semiseparable solver never adds jitter).
func (s *Semisep) Status() Status { return s.status }

// LogDet returns ln det K = Σ ln D_n.
func (s *Semisep) LogDet() float64 { return s.logDet }

func (s *Semisep) check(name string, y []float64) error {
	if s.status == NotPositiveDefinite {
		return ErrNotPositiveDefinite
	}
	if len(y) != s.Len() {
		return fmt.Errorf("%w: %s has %d values, solver %d", ErrLength, name, len(y), s.Len())
	}
	return checkFinite(name, y)
}

// forward solves L z = y into z (may alias y).
func (s *Semisep) forward(z, y []float64) {
	r := s.r
	f := make([]float64, r)
	z[0] = y[0]
	for i := 1; i < len(y); i++ {
		pi := s.phi[i*r : i*r+r]
		wp := s.w[(i-1)*r : i*r]
		ui := s.u[i*r : i*r+r]
		zp := z[i-1]
		var uf float64
		for q := 0; q < r; q++ {
			f[q] = pi[q] * (f[q] + wp[q]*zp)
			uf += ui[q] * f[q]
		}
		z[i] = y[i] - uf
	}
}

// backward solves D Lᵀ x = z into x (may alias z).
func (s *Semisep) backward(x, z []float64) {
	r := s.r
	n := len(z)
	g := make([]float64, r)
	x[n-1] = z[n-1] / s.d[n-1]
	for i := n - 2; i >= 0; i-- {
		pn := s.phi[(i+1)*r : (i+2)*r]
		un := s.u[(i+1)*r : (i+2)*r]
		wi := s.w[i*r : i*r+r]
		xn := x[i+1]
		var wg float64
		for q := 0; q < r; q++ {
			g[q] = pn[q] * (g[q] + un[q]*xn)
			wg += wi[q] * g[q]
		}
		x[i] = z[i]/s.d[i] - wg
	}
}

// Solve stores x = K⁻¹y in dst (allocated if nil or short) and returns it.
func (s *Semisep) Solve(dst, y []float64) ([]float64, error) {
	if err := s.check("y", y); err != nil {
		return nil, err
	}
	dst = resize(dst, len(y))
	s.forward(dst, y)
	s.backward(dst, dst)
	return dst, nil
}

// LogLikelihood returns ln L = −½ rᵀK⁻¹r − ½ ln det K − (N/2) ln 2π, with
// rᵀK⁻¹r = Σ z_n²/D_n from the forward recurrence alone.
func (s *Semisep) LogLikelihood(r []float64) (float64, error) {
	if err := s.check("r", r); err != nil {
		return math.Inf(-1), err
	}
	z := make([]float64, len(r))
	s.forward(z, r)
	var chi2 float64
	for i, v := range z {
		chi2 += v * v / s.d[i]
	}
	return -0.5*chi2 - 0.5*s.logDet - 0.5*float64(len(r))*math.Log(2*math.Pi), nil
}

// Predict returns the predictive mean and (if wantVar) variance of the
// noise-free process at times tnew (any order), as Dense.Predict. The mean
// costs O((N + M) R) for M new times (see predictMean); each variance
// needs one more forward pass, O(N R), so M variances cost O(N M R).
func (s *Semisep) Predict(r, tnew []float64, wantVar bool) (mean, variance []float64, err error) {
	return s.predict(r, tnew, wantVar, false)
}

// PredictDeriv is Predict for the time derivative of the process; the
// kernel must be Differentiable.
func (s *Semisep) PredictDeriv(r, tnew []float64, wantVar bool) (mean, variance []float64, err error) {
	return s.predict(r, tnew, wantVar, true)
}

func (s *Semisep) predict(r, tnew []float64, wantVar, deriv bool) (mean, variance []float64, err error) {
	alpha, err := s.Solve(nil, r)
	if err != nil {
		return nil, nil, err
	}
	if err := checkFinite("tnew", tnew); err != nil {
		return nil, nil, err
	}
	cross, prior, err := crossFunc(s.kernel, deriv)
	if err != nil {
		return nil, nil, err
	}
	n := s.Len()
	mean = make([]float64, len(tnew))
	if wantVar {
		variance = make([]float64, len(tnew))
	}
	if !deriv {
		s.predictMean(mean, alpha, tnew)
	}
	if !deriv && !wantVar {
		return mean, nil, nil
	}
	ks := make([]float64, n)
	x := make([]float64, n)
	for m, ts := range tnew {
		for i, ti := range s.t {
			ks[i] = cross(ts - ti)
		}
		if deriv {
			mean[m] = dot(ks, alpha)
		}
		if wantVar {
			s.forward(x, ks)
			var q float64
			for i, v := range x {
				q += v * v / s.d[i]
			}
			variance[m] = prior - q
		}
	}
	return mean, variance, nil
}

// uv stores the semiseparable generators Ũ(t) and Ṽ(t) (see NewSemisep)
// for an arbitrary time t, and the damping rate of each column in c.
func (s *Semisep) uv(t float64, u, v, c []float64) {
	tt := t - s.t[0]
	col := 0
	for _, tm := range s.terms {
		if tm.B == 0 && tm.D == 0 {
			u[col], v[col], c[col] = tm.A, 1, tm.C
			col++
			continue
		}
		sn, cs := math.Sincos(tm.D * tt)
		u[col], u[col+1] = tm.A*cs+tm.B*sn, tm.A*sn-tm.B*cs
		v[col], v[col+1] = cs, sn
		c[col], c[col+1] = tm.C, tm.C
		col += 2
	}
}

// predictMean stores K*ᵀα in mean in O((N + M) R) (plus sorting the M new
// times): a forward pass accumulates Σ_{t_i ≤ t*} e^(−c(t*−t_i)) Ṽ(t_i) α_i
// and a backward pass Σ_{t_i > t*} e^(−c(t_i−t*)) Ũ(t_i) α_i, using
// k(t* − t_i) = Ũ(t*)·Ṽ(t_i) e^(−c(t*−t_i)) for t* ≥ t_i and the transpose
// otherwise (Foreman-Mackey et al. 2017, §5, from memory).
func (s *Semisep) predictMean(mean, alpha, tnew []float64) {
	n, r := s.Len(), s.r
	order := make([]int, len(tnew))
	for i := range order {
		order[i] = i
	}
	slices.SortFunc(order, func(a, b int) int { return cmp.Compare(tnew[a], tnew[b]) })
	u := make([]float64, r)
	v := make([]float64, r)
	c := make([]float64, r)
	f := make([]float64, r)
	for i := range mean {
		mean[i] = 0
	}
	// Forward: training points at or before t*.
	i := 0
	var last float64
	for _, m := range order {
		ts := tnew[m]
		for ; i < n && s.t[i] <= ts; i++ {
			s.uv(s.t[i], u, v, c)
			for q := 0; q < r; q++ {
				if i > 0 {
					f[q] *= s.phi[i*r+q]
				}
				f[q] += v[q] * alpha[i]
			}
			last = s.t[i]
		}
		if i == 0 {
			continue
		}
		s.uv(ts, u, v, c)
		var sum float64
		for q := 0; q < r; q++ {
			sum += u[q] * f[q] * math.Exp(-c[q]*(ts-last))
		}
		mean[m] += sum
	}
	// Backward: training points after t*.
	clear(f)
	i = n - 1
	for k := len(order) - 1; k >= 0; k-- {
		m := order[k]
		ts := tnew[m]
		for ; i >= 0 && s.t[i] > ts; i-- {
			for q := 0; q < r; q++ {
				if i < n-1 {
					f[q] *= s.phi[(i+1)*r+q]
				}
				f[q] += s.u[i*r+q] * alpha[i]
			}
			last = s.t[i]
		}
		if i == n-1 {
			continue
		}
		s.uv(ts, u, v, c)
		var sum float64
		for q := 0; q < r; q++ {
			sum += v[q] * f[q] * math.Exp(-c[q]*(last-ts))
		}
		mean[m] += sum
	}
}

// Draw returns a draw y ~ N(0, K) from the prior, including per-point
// variances: y = L (√D ∘ z), z standard normal from rnd, in O(N R).
func (s *Semisep) Draw(dst []float64, rnd *rand.Rand) ([]float64, error) {
	if s.status == NotPositiveDefinite {
		return nil, ErrNotPositiveDefinite
	}
	n, r := s.Len(), s.r
	dst = resize(dst, n)
	f := make([]float64, r)
	var vp float64
	for i := 0; i < n; i++ {
		v := math.Sqrt(s.d[i]) * rnd.NormFloat64()
		if i > 0 {
			pi := s.phi[i*r : i*r+r]
			wp := s.w[(i-1)*r : i*r]
			ui := s.u[i*r : i*r+r]
			var uf float64
			for q := 0; q < r; q++ {
				f[q] = pi[q] * (f[q] + wp[q]*vp)
				uf += ui[q] * f[q]
			}
			dst[i] = v + uf
		} else {
			dst[i] = v
		}
		vp = v
	}
	return dst, nil
}
