package photometry

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/dsp/fourier"
)

// ACF is the autocorrelation function of a light curve and the rotation
// period read from it by the method of McQuillan, Aigrain & Mazeh (2013,
// MNRAS 432, 1203).
type ACF struct {
	// Lag (days) and Value: the smoothed autocorrelation function.
	Lag, Value []float64
	// Peaks are the lags (days) of the peaks used for the period, at
	// about k·Period for k = 1, 2, ….
	Peaks []float64
	// Period and Err (days); NaN when no peak was found.
	Period, Err float64
	// Height is the local peak height of the adopted peak: the peak's value
	// minus the mean of the two troughs beside it.
	Height float64
	// Harmonic is true when the first peak was half the period: the peak
	// at twice its lag is higher (a light curve with two dips per turn).
	Harmonic bool
	// Fill is the fraction of the uniform grid's cells holding data.
	Fill float64
	// FAP is the fraction of red-noise surrogates (see acfSignificance)
	// whose ACF has a peak at least as high as the adopted one: the
	// probability that noise with the light curve's own correlation time
	// and no periodicity shows such a peak. NaN when not computed.
	FAP float64
	// NoiseTau (days) and NoiseFrac are the correlation time and the red
	// fraction of the variance of that noise, as read from the ACF.
	NoiseTau, NoiseFrac float64

	grid   []float64 // the uniform grid, mean removed, gaps zero
	filled []bool    // cells holding data
	sigma  float64   // the final smoothing (samples)
	dt     float64
	minLag int // the shortest lag searched (samples)
}

// acfMinHeight is the local peak height above which an ACF peak counts
// as a rotation signal (McQuillan et al. 2013 discard peaks below about
// 0.1; from memory).
const acfMinHeight = 0.1

// uniform bins the light curve (relative flux minus one) on a uniform grid
// of step dt from its first time; empty cells are NaN.
func uniform(t, y, w []float64, dt float64) []float64 {
	n := int((t[len(t)-1]-t[0])/dt) + 1
	sum := make([]float64, n)
	sw := make([]float64, n)
	for i, ti := range t {
		k := int((ti - t[0]) / dt)
		if k >= n {
			k = n - 1
		}
		sum[k] += w[i] * y[i]
		sw[k] += w[i]
	}
	out := make([]float64, n)
	for k := range out {
		if sw[k] > 0 {
			out[k] = sum[k] / sw[k]
		} else {
			out[k] = math.NaN()
		}
	}
	return out
}

// autocorrelation returns r_k = Σ x_i x_(i+k) / Σ x_i² for k < maxLag,
// by FFT.
func autocorrelation(x []float64, maxLag int) []float64 {
	return newAutocorrelator(len(x)).of(x, maxLag)
}

// autocorrelator computes autocorrelations of series of one length with
// one FFT plan and its buffers (the surrogates of ACF.significance).
type autocorrelator struct {
	n   int
	fft *fourier.FFT
	buf []float64
	c   []complex128
	r   []float64
}

func newAutocorrelator(n int) *autocorrelator {
	m := 1
	for m < 2*n {
		m <<= 1
	}
	return &autocorrelator{n: n, fft: fourier.NewFFT(m), buf: make([]float64, m)}
}

func (a *autocorrelator) of(x []float64, maxLag int) []float64 {
	clear(a.buf)
	copy(a.buf, x)
	a.c = a.fft.Coefficients(a.c, a.buf)
	for i, v := range a.c {
		a.c[i] = complex(real(v)*real(v)+imag(v)*imag(v), 0)
	}
	a.r = a.fft.Sequence(a.r, a.c)
	out := make([]float64, min(maxLag, a.n))
	if a.r[0] <= 0 {
		return out
	}
	for k := range out {
		out[k] = a.r[k] / a.r[0]
	}
	return out
}

// gaussSmooth convolves v with a Gaussian of standard deviation sigma
// samples (truncated at 4σ, renormalised at the ends).
func gaussSmooth(v []float64, sigma float64) []float64 {
	if sigma < 0.5 {
		return append([]float64(nil), v...)
	}
	h := int(math.Ceil(4 * sigma))
	ker := make([]float64, 2*h+1)
	for j := range ker {
		d := float64(j-h) / sigma
		ker[j] = math.Exp(-0.5 * d * d)
	}
	out := make([]float64, len(v))
	for i := range v {
		var s, sw float64
		for j := max(0, i-h); j <= min(len(v)-1, i+h); j++ {
			s += ker[j-i+h] * v[j]
			sw += ker[j-i+h]
		}
		out[i] = s / sw
	}
	return out
}

// acfPeak is a local maximum of the smoothed ACF.
type acfPeak struct {
	k      int     // index
	value  float64 // ACF value
	height float64 // local peak height
}

// acfPeaks returns the local maxima of r beyond lag 0 with their local
// peak heights (peak minus the mean of the minima on either side).
func acfPeaks(r []float64) []acfPeak {
	var max, mins []int
	for k := 1; k+1 < len(r); k++ {
		if r[k] > r[k-1] && r[k] >= r[k+1] {
			max = append(max, k)
		}
		if r[k] < r[k-1] && r[k] <= r[k+1] {
			mins = append(mins, k)
		}
	}
	var out []acfPeak
	for _, k := range max {
		left, right := math.NaN(), math.NaN()
		for _, m := range mins {
			if m < k {
				left = r[m]
			} else if m > k && math.IsNaN(right) {
				right = r[m]
			}
		}
		if math.IsNaN(left) || math.IsNaN(right) {
			// A peak without a trough on one side (the first of a slowly
			// decaying ACF, or the last lag): use the one trough there is.
			if math.IsNaN(left) {
				left = right
			}
			if math.IsNaN(right) {
				right = left
			}
		}
		h := r[k] - 0.5*(left+right)
		if math.IsNaN(h) {
			continue
		}
		out = append(out, acfPeak{k: k, value: r[k], height: h})
	}
	return out
}

// ACFRotation measures the rotation period by the autocorrelation method
// of McQuillan, Aigrain & Mazeh (2013): the light curve is put on a
// uniform grid of step dt (empty cells set to zero after the mean is
// removed), its autocorrelation is computed up to maxLag days and smoothed
// with a Gaussian, and the first peak whose local height is above 0.1 is
// taken; when the peak at about twice its lag is higher, that one is the
// period (two dips per turn, spots on opposite hemispheres). "Higher" is
// judged against the mean of the first and third peaks when there is a
// third, so that the decay of the ACF with spot evolution does not hide
// the double dip. The period is
// then the slope of the lags of the peaks at about k·P against k, its
// error the slope's standard error (or, with fewer than three peaks, the
// half width at half height of the adopted peak).
//
// y is relative flux minus one, w the weights (1/σ²). The choices are
// written up in docs/methods.md §14.2.
func ACFRotation(t, y, w []float64, dt, maxLag, pMin float64) *ACF {
	a := &ACF{Period: math.NaN(), Err: math.NaN(), Height: math.NaN(), FAP: math.NaN(), NoiseTau: math.NaN(), NoiseFrac: math.NaN(), dt: dt}
	if len(t) < MinPoints || !(dt > 0) {
		return a
	}
	g := uniform(t, y, w, dt)
	var mean float64
	var nf int
	for _, v := range g {
		if !math.IsNaN(v) {
			mean += v
			nf++
		}
	}
	a.Fill = float64(nf) / float64(len(g))
	if nf < MinPoints {
		return a
	}
	mean /= float64(nf)
	a.filled = make([]bool, len(g))
	for k, v := range g {
		if math.IsNaN(v) {
			g[k] = 0
		} else {
			g[k] = v - mean
			a.filled[k] = true
		}
	}
	nLag := int(maxLag/dt) + 1
	raw := autocorrelation(g, nLag)
	// Smoothing: a Gaussian of standard deviation a quarter of the
	// shortest period sought, so that no period in range is smoothed away
	// (McQuillan et al. use a fixed width at Kepler's cadence; this scales
	// it with the search).
	sigma0 := math.Max(1, 0.25*pMin/dt)
	r := gaussSmooth(raw, sigma0)
	firstPeak := func(peaks []acfPeak) int {
		for i, p := range peaks {
			if float64(p.k)*dt >= pMin && p.height >= acfMinHeight {
				return i
			}
		}
		return -1
	}
	peaks := acfPeaks(r)
	first := firstPeak(peaks)
	a.grid, a.sigma, a.minLag = g, sigma0, int(math.Ceil(pMin/dt))
	if first >= 0 {
		// Smooth again in proportion to the first peak's lag (a Gaussian of
		// FWHM about a quarter of it), so that gaps' wiggles do not split
		// the peaks of long periods.
		if s := float64(peaks[first].k) / 10; s > sigma0 {
			r = gaussSmooth(raw, s)
			peaks = acfPeaks(r)
			first = firstPeak(peaks)
			a.sigma = s
		}
	}
	a.Lag = make([]float64, len(r))
	for k := range r {
		a.Lag[k] = float64(k) * dt
	}
	a.Value = r
	if first < 0 {
		return a
	}
	best := peaks[first]
	// The harmonic check: is the peak near twice the first's lag higher
	// than the first? Spot evolution lowers later peaks, so when there is
	// a peak near three times the lag, the one at twice is compared with
	// the mean of its two neighbours instead (the first and the third):
	// for a period at the first lag the peaks decay smoothly and the one at
	// twice the lag lies below that mean; two dips per turn raise it above.
	lag1 := float64(best.k)
	near := func(m float64) *acfPeak {
		var pick *acfPeak
		for i := range peaks[first+1:] {
			p := &peaks[first+1+i]
			if math.Abs(float64(p.k)-m*lag1) <= 0.2*lag1 && (pick == nil || p.value > pick.value) {
				pick = p
			}
		}
		return pick
	}
	if p2 := near(2); p2 != nil && p2.height >= acfMinHeight {
		ref := best.value
		if p3 := near(3); p3 != nil {
			ref = 0.5 * (best.value + p3.value)
		}
		// By more than half the detection height, so that noise on a
		// smoothly decaying ACF does not double the period.
		if p2.value > ref+acfMinHeight/2 {
			best = *p2
			a.Harmonic = true
		}
	}
	a.Height = best.height
	p0 := float64(best.k)
	// Peaks near k·P0, the highest in a window of ±0.2 P0.
	var ks, lags []float64
	for m := 1; float64(m)*p0 < float64(len(r)-1); m++ {
		var pick *acfPeak
		for i := range peaks {
			p := &peaks[i]
			if math.Abs(float64(p.k)-float64(m)*p0) <= 0.2*p0 && (pick == nil || p.value > pick.value) {
				pick = p
			}
		}
		if pick == nil {
			break
		}
		ks = append(ks, float64(m))
		lags = append(lags, refineLag(r, pick.k))
		a.Peaks = append(a.Peaks, lags[len(lags)-1]*dt)
		if m >= 10 {
			break
		}
	}
	if len(ks) >= 3 {
		// Least squares lag = P·m + c.
		var sm, sl, smm, sml float64
		n := float64(len(ks))
		for i := range ks {
			sm += ks[i]
			sl += lags[i]
			smm += ks[i] * ks[i]
			sml += ks[i] * lags[i]
		}
		den := n*smm - sm*sm
		slope := (n*sml - sm*sl) / den
		c := (sl - slope*sm) / n
		var rss float64
		for i := range ks {
			d := lags[i] - slope*ks[i] - c
			rss += d * d
		}
		se := math.Sqrt(rss / (n - 2) * n / den)
		a.Period = slope * dt
		a.Err = math.Max(se*dt, dt/math.Sqrt(12)/n)
		return a
	}
	a.Period = lags[0] * dt
	a.Err = halfWidth(r, best.k, best.height) * dt
	return a
}

// refineLag returns the lag (in samples) of the parabola through the peak
// at k and its neighbours.
func refineLag(r []float64, k int) float64 {
	if k <= 0 || k+1 >= len(r) {
		return float64(k)
	}
	den := r[k-1] - 2*r[k] + r[k+1]
	if den >= 0 {
		return float64(k)
	}
	return float64(k) + 0.5*(r[k-1]-r[k+1])/den
}

// halfWidth returns the half width (samples) of the ACF peak at k at half
// its local height.
func halfWidth(r []float64, k int, height float64) float64 {
	level := r[k] - 0.5*height
	lo, hi := k, k
	for lo > 0 && r[lo] > level {
		lo--
	}
	for hi < len(r)-1 && r[hi] > level {
		hi++
	}
	return math.Max(1, 0.5*float64(hi-lo))
}

// acfSurrogates is the number of red-noise light curves the ACF's peak is
// compared with, and acfFAP the false-alarm probability below which the
// peak counts as rotation (5%: common practice for a detection).
const (
	acfSurrogates = 100
	acfFAP        = 0.05
)

// significance sets a.FAP: how often red noise without any periodicity,
// with the light curve's own correlation time, red fraction of the
// variance and gaps, gives an ACF with a peak (beyond the shortest lag
// searched) at least as high as the adopted one. An ACF peak of red noise
// is a sampling fluctuation of a smooth, decaying ACF: its scatter at
// long lags is about √(τ/T) for correlation time τ over a span T
// (Bartlett 1946), so slow red noise over few correlation times gives
// peaks of McQuillan et al.'s 0.1 and more. The noise is an AR(1) process
// (the discrete Ornstein–Uhlenbeck process) plus white noise on the same
// grid: the red fraction a and the lag-one correlation φ are read from
// the ACF corrected for the gaps, ρ_k ≈ a φ^k (k ≥ 1), φ from the lag at
// which ρ falls to ρ_1/e. Each surrogate is gridded, its ACF computed
// and smoothed like the light curve's, and the highest local peak height
// beyond the shortest lag searched kept: the comparison with the highest
// peak anywhere allows for the many lags looked at (docs/methods.md
// §14.2).
func (a *ACF) significance(seed uint64) {
	if math.IsNaN(a.Height) || len(a.grid) == 0 {
		return
	}
	g := a.grid
	n := len(g)
	mask := make([]float64, n)
	for k, f := range a.filled {
		if f {
			mask[k] = 1
		}
	}
	// Lags up to the adopted peak's (and a little beyond) are all the
	// noise model needs.
	nLag := len(a.Value)
	raw := autocorrelation(g, nLag)
	cov := autocorrelation(mask, nLag)
	rho := func(k int) float64 {
		if cov[k] <= 0 {
			return 0
		}
		return raw[k] / cov[k]
	}
	phi, frac := 0.0, 0.0
	if nLag > 2 {
		r1 := rho(1)
		// Without a significant lag-one correlation the noise is white.
		if r1 > 2/math.Sqrt(float64(n)) {
			ke := nLag - 1
			for k := 2; k < nLag; k++ {
				if rho(k) <= r1/math.E {
					ke = k
					break
				}
			}
			// ρ_k = a φ^k falls by 1/e between lag 1 and lag ke.
			phi = math.Exp(-1 / float64(ke-1))
			frac = math.Min(1, r1/phi)
		}
	}
	a.NoiseFrac = frac
	a.NoiseTau = math.NaN()
	if phi > 0 {
		a.NoiseTau = -a.dt / math.Log(phi)
	}
	rng := rand.New(rand.NewPCG(seed, 0xacf))
	ac := newAutocorrelator(n)
	x := make([]float64, n)
	higher := 0
	sr, sw := math.Sqrt(frac), math.Sqrt(1-frac)
	inn := math.Sqrt(1 - phi*phi)
	for s := 0; s < acfSurrogates; s++ {
		red := rng.NormFloat64()
		var mean float64
		var nf int
		for k := range x {
			red = phi*red + inn*rng.NormFloat64()
			w := rng.NormFloat64()
			if mask[k] == 0 {
				x[k] = 0
				continue
			}
			x[k] = sr*red + sw*w
			mean += x[k]
			nf++
		}
		mean /= float64(nf)
		for k := range x {
			if mask[k] != 0 {
				x[k] -= mean
			}
		}
		r := gaussSmooth(ac.of(x, nLag), a.sigma)
		top := math.Inf(-1)
		for _, p := range acfPeaks(r) {
			if p.k >= a.minLag && p.height > top {
				top = p.height
			}
		}
		if top >= a.Height {
			higher++
		}
	}
	// (m + 1)/(N + 1): the surrogate estimate of a p-value, never zero
	// (Davison & Hinkley 1997).
	a.FAP = float64(higher+1) / float64(acfSurrogates+1)
}
