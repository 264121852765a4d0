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
	ne, err := normalEquations(t, y, sigma, group, ng, freqs, shapes, t0, false)
	if err != nil {
		return nil, err
	}
	rows := ne.rows
	ata := mat.NewSymDense(np, ne.aw) // reads the upper triangle
	atb := mat.NewVecDense(np, ne.bw)
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

// normalEq holds the weighted normal equations of a linear fit: the upper
// triangle of AᵀWA (row-major, np × np), AᵀWy, the epochs used and, when
// kept, each one's row of A.
type normalEq struct {
	aw, bw []float64
	rows   []int
	x      []float64 // len(rows) × np, when kept
}

// normalEquations builds the normal equations of fitCurves, in plain
// slices handed to gonum once; keep stores the rows of A for chiCurves.
func normalEquations(t, y, sigma []float64, group []int, ng int, freqs []float64, shapes []orbitShape, t0 float64, keep bool) (*normalEq, error) {
	nf := len(freqs)
	np := 2*nf + ng
	ne := &normalEq{aw: make([]float64, np*np), bw: make([]float64, np)}
	for i := range t {
		if isFinite(y[i]) && sigma[i] > 0 && isFinite(sigma[i]) {
			ne.rows = append(ne.rows, i)
		}
	}
	if len(ne.rows) < np+1 {
		return nil, errSingularFit
	}
	if keep {
		ne.x = make([]float64, len(ne.rows)*np)
	}
	row := make([]float64, np)
	used := make([]bool, ng)
	for r, i := range ne.rows {
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
		if keep {
			copy(ne.x[r*np:(r+1)*np], row)
		}
		for a := 0; a < np; a++ {
			ra := row[a]
			if ra == 0 {
				continue
			}
			wa := w * ra
			ne.bw[a] += wa * y[i]
			line := ne.aw[a*np : (a+1)*np]
			for b := a; b < np; b++ {
				line[b] += wa * row[b]
			}
		}
	}
	for g, u := range used {
		if !u { // a group without data: pin its offset
			ne.aw[(2*nf+g)*np+2*nf+g] = 1
		}
	}
	return ne, nil
}

// chiCurves returns the χ² of fitCurves alone, without its covariance
// and from the rows of A it built (each basis computed once): the
// eccentric orbit search's many trial fits.
func chiCurves(t, y, sigma []float64, group []int, ng int, freqs []float64, shapes []orbitShape, t0 float64) (float64, error) {
	if group == nil {
		ng = 1
	}
	np := 2*len(freqs) + ng
	ne, err := normalEquations(t, y, sigma, group, ng, freqs, shapes, t0, true)
	if err != nil {
		return 0, err
	}
	var ch mat.Cholesky
	if ok := ch.Factorize(mat.NewSymDense(np, ne.aw)); !ok {
		return 0, errSingularFit
	}
	var x mat.VecDense
	if err := ch.SolveVecTo(&x, mat.NewVecDense(np, ne.bw)); err != nil {
		return 0, errSingularFit
	}
	chi := 0.0
	for r, i := range ne.rows {
		m := 0.0
		for a, v := range ne.x[r*np : (r+1)*np] {
			m += v * x.AtVec(a)
		}
		d := (y[i] - m) / sigma[i]
		chi += d * d
	}
	return chi, nil
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
