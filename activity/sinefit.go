package activity

import (
	"errors"
	"math"

	"gonum.org/v1/gonum/mat"

	"spotsift/rvfit"
)

// sineFit is a weighted least-squares fit of sinusoids at fixed
// frequencies plus one offset per group:
//
//	y_i ≈ Σ_k [A_k cos 2πf_k(t_i − t0) + B_k sin 2πf_k(t_i − t0)] + c_g(i)
//
// with the covariance of each (A_k, B_k) and the fitted model. A signal
// with an eccentric orbit's shape (orbitShape) takes the cosine and sine
// of its true anomaly ν in place of the sinusoid's: for a fixed period,
// eccentricity and time of periastron the Keplerian
// K[cos(ν + ω) + e cos ω] is A cos ν + B sin ν plus a constant the offsets
// take, linear in A = K cos ω and B = −K sin ω, so that √(A² + B²) is K.
type sineFit struct {
	Freq   []float64
	Shape  []orbitShape // per signal; nil when every one is a sinusoid
	A, B   []float64
	CovAB  [][2][2]float64 // covariance of (A_k, B_k), scaled by the reduced χ² when it exceeds 1
	ChiSq  float64         // χ² of the fit
	Dof    int
	Offset []float64 // per group
	t0     float64
	group  []int
}

// orbitShape is the shape of an eccentric orbit: its eccentricity e and
// the phase phi (in cycles from the phase reference t0) of periastron.
// The zero shape is a sinusoid.
type orbitShape struct{ e, phi float64 }

// basis returns the two columns of a signal at frequency f with shape sh
// at time t: the cosine and sine of 2πf(t − t0) for a sinusoid, of the
// true anomaly for an eccentric orbit.
func basis(f float64, sh orbitShape, t, t0 float64) (c, s float64) {
	if sh.e == 0 {
		s, c = math.Sincos(2 * math.Pi * f * (t - t0))
		return c, s
	}
	M := 2 * math.Pi * (f*(t-t0) - sh.phi)
	s, c = math.Sincos(rvfit.TrueAnomaly(rvfit.EccentricAnomaly(M, sh.e), sh.e))
	return c, s
}

// shape returns signal k's shape.
func (f *sineFit) shape(k int) orbitShape {
	if f.Shape == nil {
		return orbitShape{}
	}
	return f.Shape[k]
}

// component returns signal k at time t.
func (f *sineFit) component(k int, t float64) float64 {
	c, s := basis(f.Freq[k], f.shape(k), t, f.t0)
	return f.A[k]*c + f.B[k]*s
}

// model returns the whole fitted model (sinusoids and offsets) at epoch i
// of the fitted data.
func (f *sineFit) model(i int, t float64) float64 {
	m := f.Offset[0]
	if f.group != nil {
		m = f.Offset[f.group[i]]
	}
	for k := range f.Freq {
		m += f.component(k, t)
	}
	return m
}

// amplitude returns sqrt(A_k² + B_k²) and its one-sigma error (first
// order).
func (f *sineFit) amplitude(k int) (float64, float64) {
	a := math.Hypot(f.A[k], f.B[k])
	c := f.CovAB[k]
	if a == 0 {
		return 0, math.Sqrt(c[0][0])
	}
	v := (f.A[k]*f.A[k]*c[0][0] + f.B[k]*f.B[k]*c[1][1] + 2*f.A[k]*f.B[k]*c[0][1]) / (a * a)
	return a, math.Sqrt(math.Max(v, 0))
}

// phase returns φ_k = atan2(B_k, A_k), the sinusoid being
// amplitude·cos(2πf_k(t − t0) − φ_k).
func (f *sineFit) phase(k int) float64 { return math.Atan2(f.B[k], f.A[k]) }

var errSingularFit = errors.New("activity: sinusoid fit is singular")

// fitSines fits y at frequencies freqs (c/d) with phase reference t0;
// group holds a group index (0..ng−1) per epoch, or is nil for one offset.
// Epochs with a NaN value or a bad error are skipped.
func fitSines(t, y, sigma []float64, group []int, ng int, freqs []float64, t0 float64) (*sineFit, error) {
	return fitCurves(t, y, sigma, group, ng, freqs, nil, t0)
}

// fitCurves is fitSines with a shape per frequency (nil: all sinusoids).
func fitCurves(t, y, sigma []float64, group []int, ng int, freqs []float64, shapes []orbitShape, t0 float64) (*sineFit, error) {
	if group == nil {
		ng = 1
	}
	nf := len(freqs)
	np := 2*nf + ng
	var rows []int
	for i := range t {
		if isFinite(y[i]) && sigma[i] > 0 && isFinite(sigma[i]) {
			rows = append(rows, i)
		}
	}
	if len(rows) < np+1 {
		return nil, errSingularFit
	}
	ata := mat.NewSymDense(np, nil)
	atb := mat.NewVecDense(np, nil)
	row := make([]float64, np)
	used := make([]bool, ng)
	for _, i := range rows {
		w := 1 / (sigma[i] * sigma[i])
		clear(row)
		for k, fr := range freqs {
			var sh orbitShape
			if shapes != nil {
				sh = shapes[k]
			}
			row[2*k], row[2*k+1] = basis(fr, sh, t[i], t0)
		}
		g := 0
		if group != nil {
			g = group[i]
		}
		used[g] = true
		row[2*nf+g] = 1
		for a := 0; a < np; a++ {
			if row[a] == 0 {
				continue
			}
			atb.SetVec(a, atb.AtVec(a)+w*row[a]*y[i])
			for b := a; b < np; b++ {
				ata.SetSym(a, b, ata.At(a, b)+w*row[a]*row[b])
			}
		}
	}
	for g, u := range used {
		if !u { // a group without data: pin its offset
			ata.SetSym(2*nf+g, 2*nf+g, 1)
		}
	}
	var ch mat.Cholesky
	if ok := ch.Factorize(ata); !ok {
		return nil, errSingularFit
	}
	var x mat.VecDense
	if err := ch.SolveVecTo(&x, atb); err != nil {
		return nil, errSingularFit
	}
	var cov mat.SymDense
	if err := ch.InverseTo(&cov); err != nil {
		return nil, errSingularFit
	}
	f := &sineFit{Freq: append([]float64(nil), freqs...), A: make([]float64, nf), B: make([]float64, nf),
		Shape: append([]orbitShape(nil), shapes...),
		CovAB: make([][2][2]float64, nf), Offset: make([]float64, ng), t0: t0, group: group}
	for k := range freqs {
		f.A[k], f.B[k] = x.AtVec(2*k), x.AtVec(2*k+1)
	}
	for g := range f.Offset {
		f.Offset[g] = x.AtVec(2*nf + g)
	}
	for _, i := range rows {
		r := (y[i] - f.model(i, t[i])) / sigma[i]
		f.ChiSq += r * r
	}
	f.Dof = len(rows) - np
	scale := 1.0
	if f.Dof > 0 {
		scale = math.Max(1, f.ChiSq/float64(f.Dof))
	}
	for k := range freqs {
		a, b := 2*k, 2*k+1
		f.CovAB[k] = [2][2]float64{{cov.At(a, a) * scale, cov.At(a, b) * scale}, {cov.At(b, a) * scale, cov.At(b, b) * scale}}
	}
	return f, nil
}

// groupIndex maps labels to indices 0..n−1 in order of first appearance.
func groupIndex(labels []string) ([]int, int) {
	idx := make([]int, len(labels))
	seen := map[string]int{}
	for i, l := range labels {
		k, ok := seen[l]
		if !ok {
			k = len(seen)
			seen[l] = k
		}
		idx[i] = k
	}
	return idx, len(seen)
}
