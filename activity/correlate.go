package activity

import (
	"math"
	"math/rand/v2"
	"sort"

	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Correlation is a correlation coefficient with its two-sided p-value.
type Correlation struct {
	R float64 `json:"r"`
	P float64 `json:"p"`
	N int     `json:"n"`
}

// Pearson returns Pearson's correlation coefficient of x and y and its
// two-sided p-value under the null hypothesis of no correlation between
// normally distributed variables, from Student's t with n − 2 degrees of
// freedom:
//
//	t = r sqrt((n − 2)/(1 − r²))
//
// (common practice). Pairs where either value is NaN are left out. Fewer
// than 4 pairs, or a constant series, give R = 0 and P = 1.
func Pearson(x, y []float64) Correlation {
	xs, ys := finitePairs(x, y)
	n := len(xs)
	if n < 4 {
		return Correlation{R: 0, P: 1, N: n}
	}
	if stat.Variance(xs, nil) == 0 || stat.Variance(ys, nil) == 0 {
		return Correlation{R: 0, P: 1, N: n}
	}
	r := stat.Correlation(xs, ys, nil)
	return Correlation{R: r, P: correlationP(r, n), N: n}
}

// Spearman returns Spearman's rank correlation of x and y (Pearson's on
// mid-ranks, so ties are handled) with the same t approximation for its
// p-value (common practice).
func Spearman(x, y []float64) Correlation {
	xs, ys := finitePairs(x, y)
	c := Pearson(ranks(xs), ranks(ys))
	c.N = len(xs)
	return c
}

// correlationP is the two-sided p-value of r for n pairs.
func correlationP(r float64, n int) float64 {
	if math.Abs(r) >= 1 {
		return 0
	}
	df := float64(n - 2)
	t := r * math.Sqrt(df/(1-r*r))
	st := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}
	return 2 * st.Survival(math.Abs(t))
}

// finitePairs returns the pairs where both x and y are finite.
func finitePairs(x, y []float64) ([]float64, []float64) {
	var xs, ys []float64
	for i := range x {
		if isFinite(x[i]) && isFinite(y[i]) {
			xs = append(xs, x[i])
			ys = append(ys, y[i])
		}
	}
	return xs, ys
}

// ranks returns the mid-ranks (1-based, ties averaged) of v.
func ranks(v []float64) []float64 {
	idx := make([]int, len(v))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return v[idx[a]] < v[idx[b]] })
	r := make([]float64, len(v))
	for i := 0; i < len(idx); {
		j := i
		for j+1 < len(idx) && v[idx[j+1]] == v[idx[i]] {
			j++
		}
		mid := float64(i+j)/2 + 1
		for k := i; k <= j; k++ {
			r[idx[k]] = mid
		}
		i = j + 1
	}
	return r
}

// Holm returns the p-values adjusted for m = len(p) tests by the
// step-down method of Holm (1979, Scand. J. Statist. 6, 65; from memory):
// sort ascending, p'_(k) = max_{j≤k} min(1, (m − j + 1) p_(j)). An
// adjusted p-value below α rejects with family-wise error rate α.
func Holm(p []float64) []float64 {
	m := len(p)
	idx := make([]int, m)
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return p[idx[a]] < p[idx[b]] })
	out := make([]float64, m)
	run := 0.0
	for k, i := range idx {
		adj := math.Min(1, float64(m-k)*p[i])
		run = math.Max(run, adj)
		out[i] = run
	}
	return out
}

// LaggedCorrelation is the strongest discrete correlation of two unevenly
// sampled series over a range of time lags.
type LaggedCorrelation struct {
	// Lag is the lag in days at which |DCF| is largest: y follows x by Lag.
	Lag float64 `json:"lag"`
	// DCF is the discrete correlation at that lag.
	DCF float64 `json:"dcf"`
	// P is the permutation p-value of max |DCF| over all lags searched (so
	// the search over lags is accounted for).
	P float64 `json:"p"`
	// Pairs is the number of epoch pairs in the best lag bin.
	Pairs int `json:"pairs"`
	// Floor is true when no permutation reached the observed |DCF|: P is
	// then an upper limit, 1/(nPerm+1).
	Floor bool `json:"floor,omitempty"`
}

// DiscreteCorrelation returns the lagged correlation of x and y (same
// epochs t, NaN for missing) over lags in [−maxLag, maxLag] in bins of
// width binWidth days. The pairs (i, j) with |t_j − t_i − τ| < binWidth/2
// are binned as in the discrete correlation function of Edelson & Krolik
// (1988, ApJ 333, 646; from memory), and each bin's correlation is
// normalised with the means and scatters of its own pairs, the local
// normalisation of Welsh (1999, PASP 111, 1347; from memory):
//
//	r(τ) = Σ (x_i − x̄_τ)(y_j − ȳ_τ) / √(Σ (x_i − x̄_τ)² Σ (y_j − ȳ_τ)²)
//
// It lies in [−1, 1], as a correlation coefficient must; the global
// normalisation of the original (x̄, s_x over all epochs) does not, and
// gave values such as 1.5 where a bin's few pairs fell on large
// excursions. The p-value comes from nPerm
// permutations of y over its epochs, drawn from rng (so it cannot be below
// 1/(nPerm+1)); bins with fewer than minPairs pairs are ignored. It returns
// P = 1 when no bin has enough pairs.
func DiscreteCorrelation(t, x, y []float64, maxLag, binWidth float64, minPairs, nPerm int, rng *rand.Rand) LaggedCorrelation {
	var ts, xs, ys []float64
	for i := range t {
		if isFinite(x[i]) && isFinite(y[i]) {
			ts = append(ts, t[i])
			xs = append(xs, x[i])
			ys = append(ys, y[i])
		}
	}
	n := len(ts)
	if n < 4 || !(binWidth > 0) || !(maxLag >= 0) {
		return LaggedCorrelation{P: 1}
	}
	standardise := func(v []float64) []float64 {
		m, s := stat.MeanStdDev(v, nil)
		out := make([]float64, len(v))
		for i := range v {
			if s > 0 {
				out[i] = (v[i] - m) / s
			}
		}
		return out
	}
	zx, zy := standardise(xs), standardise(ys)
	nb := int(math.Floor(maxLag/binWidth+0.5))*2 + 1
	half := nb / 2
	// Pair lists per bin, built once: permutations reuse them.
	type pair struct{ i, j int32 }
	bins := make([][]pair, nb)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			d := ts[j] - ts[i]
			if math.Abs(d) > maxLag+binWidth/2 {
				continue
			}
			b := int(math.Floor(d/binWidth+0.5)) + half
			if b >= 0 && b < nb {
				bins[b] = append(bins[b], pair{int32(i), int32(j)})
			}
		}
	}
	best := func(zy []float64) (float64, int) {
		bv, bb := 0.0, -1
		for b, ps := range bins {
			if len(ps) < minPairs {
				continue
			}
			var sx, sy, sxx, syy, sxy float64
			for _, p := range ps {
				a, b := zx[p.i], zy[p.j]
				sx, sy, sxx, syy, sxy = sx+a, sy+b, sxx+a*a, syy+b*b, sxy+a*b
			}
			m := float64(len(ps))
			den := (m*sxx - sx*sx) * (m*syy - sy*sy)
			if !(den > 0) {
				continue
			}
			v := math.Max(-1, math.Min(1, (m*sxy-sx*sy)/math.Sqrt(den)))
			if bb < 0 || math.Abs(v) > math.Abs(bv) {
				bv, bb = v, b
			}
		}
		return bv, bb
	}
	dcf, bb := best(zy)
	if bb < 0 {
		return LaggedCorrelation{P: 1}
	}
	out := LaggedCorrelation{Lag: float64(bb-half) * binWidth, DCF: dcf, Pairs: len(bins[bb])}
	if nPerm <= 0 || rng == nil {
		out.P = math.NaN()
		return out
	}
	perm := append([]float64(nil), zy...)
	exceed := 0
	for k := 0; k < nPerm; k++ {
		rng.Shuffle(n, func(a, b int) { perm[a], perm[b] = perm[b], perm[a] })
		if v, _ := best(perm); math.Abs(v) >= math.Abs(dcf) {
			exceed++
		}
	}
	out.P = float64(exceed+1) / float64(nPerm+1)
	out.Floor = exceed == 0
	return out
}

func isFinite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }
