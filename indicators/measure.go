package indicators

import (
	"fmt"
	"math"
)

// Estimate is one measured quantity: its value and one-sigma photon-noise
// uncertainty, or the reason it could not be measured.
type Estimate struct {
	// Value is the measured value, NaN when Err is not nil.
	Value float64
	// Sigma is the one-sigma uncertainty, NaN when unknown.
	Sigma float64
	// Err says why the quantity could not be measured; nil on success.
	Err error
}

func failed(err error) Estimate { return Estimate{Value: math.NaN(), Sigma: math.NaN(), Err: err} }

// OK reports whether the quantity was measured.
func (e Estimate) OK() bool { return e.Err == nil }

// Options set what Measure computes. A nil *Options means the zero value,
// whose fields are documented below.
type Options struct {
	// CCF sets the velocity grid; nil means the CCFOptions defaults.
	CCF *CCFOptions
	// Bisector sets the BIS zones; nil means 10–40 % and 60–90 %.
	Bisector *BisectorOptions
	// SCalibration maps the instrumental S-index to Mount Wilson; nil
	// means S_MW = S_inst.
	SCalibration *SIndexCalibration
	// RHK sets the log R'HK conversion; nil (or a zero BV) leaves log R'HK
	// unmeasured with an error saying that B−V is needed.
	RHK *RHKOptions
	// HAlphaWidth is the H-alpha core width in Å; zero means 1.6 Å.
	HAlphaWidth float64
	// NoIndices reports whether the chromospheric indices are skipped.
	NoIndices bool
}

// Result holds every number Measure derives from one spectrum. Velocities
// are in m/s; RV, per-order RVs and their fits are barycentric (the
// spectrum's BERV composed relativistically with the measured velocity,
// 1 + z = (1 + z_meas)(1 + z_BERV), BERV taken as a velocity).
type Result struct {
	// Name, BJD and BERV are copied from the spectrum.
	Name      string
	BJD, BERV float64

	// CCF is the cross-correlation function (in the spectrum's frame).
	CCF *CCF
	// Fit is the Gaussian fit to the CCF (in the spectrum's frame).
	Fit GaussianFit

	// RV is the centre of the Gaussian fit, corrected by BERV.
	RV Estimate
	// FWHM is the Gaussian full width at half maximum, 2 sqrt(2 ln 2) σ.
	FWHM Estimate
	// Contrast is the relative depth A/C0 of the Gaussian (0–1).
	Contrast Estimate
	// BIS is the bisector span (Queloz et al. 2001, A&A 379, 279).
	BIS Estimate
	// DeltaV is the bi-Gaussian asymmetry RV_biGauss − RV_Gauss (Nardetto
	// et al. 2006, A&A 453, 309; Figueira et al. 2013, A&A 557, A93), with
	// left and right halves of the profile Gaussians of separate width
	// sharing centre and depth. It has the opposite sign to BIS for a
	// line whose red wing is the wider one.
	DeltaV Estimate
	// Vspan is the difference between the centres of Gaussians fitted to
	// the upper and the lower part of the CCF (Boisse et al. 2011, A&A 528,
	// A4; from memory): v_high from the points with |v − V0| ≥ σ, v_low from
	// those with |v − V0| ≤ σ or ≥ 3σ (V0, σ of the full fit). Vspan > 0,
	// like BIS, when the upper part of the line is redder.
	Vspan Estimate
	// PhotonLimit is the CCF-domain photon-noise limit of the RV (Bouchy,
	// Pepe & Queloz 2001, A&A 374, 733, applied to the Gaussian model of the
	// CCF; see GaussianFit.PhotonLimit), a cross-check of RV.Sigma.
	PhotonLimit float64

	// Orders holds the RV of each order (or pseudo-order of a one-order
	// spectrum), bluest first.
	Orders []OrderRV
	// Chromatic is the slope of the per-order RVs against ln λ, in m/s per
	// unit ln λ (Zechmeister et al. 2018, A&A 609, A12).
	Chromatic Estimate

	// SIndex is the Mount Wilson S-index (after SCalibration), LogRHK
	// log10 R'HK, HAlpha and NaD the H-alpha and Na I D indices; all are
	// measured in the stellar rest frame.
	SIndex, LogRHK, HAlpha, NaD Estimate

	// Warnings says what looks wrong without stopping a measurement, such
	// as an index band that does not sit on its line (see Measure).
	Warnings []string
}

// OrderRV is the RV of one order or pseudo-order.
type OrderRV struct {
	// Order is the spectral order the lines lie in.
	Order int
	// Wavelength is the weight-averaged rest wavelength of its lines in Å.
	Wavelength float64
	// RV is the barycentric RV of this order's CCF.
	RV Estimate
}

// Measure computes every indicator of one spectrum against the mask m: the
// CCF (ComputeCCF), its Gaussian fit (RV, FWHM, contrast), the bisector
// span, the bi-Gaussian ΔV, Vspan, per-order RVs and their chromatic slope, and
// the chromospheric indices (S, log R'HK, H-alpha, Na I D), which are
// measured in the stellar rest frame given by the CCF RV.
//
// Uncertainties are photon noise: every CCF-based quantity is a function of
// the CCF, which is linear in the pixel fluxes, so its variance is found by
// propagating σ_x of each pixel exactly through the linearised fit (the
// correlation between CCF bins included); indices propagate σ_x through the
// band sums. σ_x is Order.Err when given, else photon noise plus
// CCFOptions.ReadNoise in quadrature.
//
// The indices are measured in the star's rest frame at every epoch: the
// bands are moved by the star's velocity in the spectrum's frame, the CCF
// velocity against m's rest wavelengths, whatever the systemic velocity and
// the barycentric correction. Each index checks that its bands sit on the
// lines: the centre of each line (see checkBands: by symmetry for the
// broad lines, the deepest point for Na D) — Ca II K and H, Na I D2 and
// D1, H-alpha — must fall within ±0.6, ±0.25
// and ±0.8 Å of its band's centre; a line that does not is named in
// Result.Warnings with its offset (a wrong systemic velocity or wavelength
// scale). With a mask that
// has no rest frame (Mask.Relative) the indices are not measured: their
// errors wrap ErrNoZeroPoint.
//
// A quantity that cannot be measured carries its own error in its Estimate
// and the others are still returned. Measure returns an error only when the
// spectrum is invalid or the CCF cannot be computed (e.g. ErrNoMaskLines);
// in the latter case the indices are still measured at rest velocity
// opts.CCF.Center and returned with the error.
func Measure(s *Spectrum, m *Mask, opts *Options) (*Result, error) {
	if opts == nil {
		opts = &Options{}
	}
	if err := s.validate(true); err != nil {
		return nil, err
	}
	r := &Result{Name: s.Name, BJD: s.BJD, BERV: s.BERV}
	bary := s.BarycentricVelocity
	ccf, err := computeCCF(s, m, opts.CCF, true)
	restV := 0.0
	if opts.CCF != nil {
		restV = opts.CCF.Center
	}
	if err != nil {
		e := failed(err)
		r.RV, r.FWHM, r.Contrast, r.BIS, r.DeltaV, r.Vspan, r.Chromatic = e, e, e, e, e, e, e
		r.PhotonLimit = math.NaN()
	} else {
		r.CCF = ccf
		if v, ok := r.measureCCF(ccf, opts, bary); ok {
			restV = v
		}
	}
	if opts.NoIndices || (m != nil && m.Relative) {
		e := failed(ErrNotRequested)
		if !opts.NoIndices {
			e = failed(fmt.Errorf("%s: %w", s.Name, ErrNoZeroPoint))
		}
		r.SIndex, r.LogRHK, r.HAlpha, r.NaD = e, e, e, e
		if ccf != nil {
			ccf.plan = nil
		}
		return r, err
	}
	rn := 0.0
	if opts.CCF != nil && opts.CCF.ReadNoise > 0 {
		rn = opts.CCF.ReadNoise
	}
	orders := prepareOrders(s, rn)
	est := func(v, sg float64, e error) Estimate {
		if e != nil {
			return failed(fmt.Errorf("%s: %w", s.Name, e))
		}
		return Estimate{Value: v, Sigma: sg}
	}
	r.SIndex = est(sIndex(s, orders, restV, opts.SCalibration))
	switch {
	case r.SIndex.Err != nil:
		r.LogRHK = failed(r.SIndex.Err)
	case opts.RHK == nil || opts.RHK.BV == 0:
		r.LogRHK = failed(fmt.Errorf("log R'HK: %w", ErrNoColour))
	default:
		r.LogRHK = est(LogRPrimeHK(r.SIndex.Value, r.SIndex.Sigma, *opts.RHK))
	}
	r.HAlpha = est(hAlpha(s, orders, restV, opts.HAlphaWidth))
	r.NaD = est(naD(s, orders, restV))
	r.Warnings = append(r.Warnings, checkBands(s, orders, restV)...)
	if ccf != nil {
		// The plan holds the covariance; do not keep it alive with the
		// result.
		ccf.plan = nil
	}
	return r, err
}

// measureCCF fits the CCF and fills the CCF-based quantities; it returns the
// star's velocity in the spectrum's frame.
func (r *Result) measureCCF(c *CCF, opts *Options, bary func(float64) float64) (float64, bool) {
	nv := len(c.V)
	w := make([]float64, nv)
	for k := range w {
		w[k] = 1 / math.Max(c.Var[k], 1e-300)
	}
	g, err := fitGaussian(c.V, c.Value, w)
	if err != nil {
		e := failed(fmt.Errorf("%s: CCF Gaussian fit: %w", r.Name, err))
		r.RV, r.FWHM, r.Contrast, r.BIS, r.DeltaV, r.Vspan, r.Chromatic = e, e, e, e, e, e, e
		r.PhotonLimit = math.NaN()
		return 0, false
	}
	th := g.theta
	r.Fit = GaussianFit{C0: th[0], A: th[1], V0: th[2], Sigma: th[3]}
	const (
		qRV = iota
		qFWHM
		qContrast
		qBIS
		qDV
		qVspan
	)
	grads := make([][]float64, propQ)
	grads[qRV] = g.dtheta[2]
	grads[qFWHM] = make([]float64, nv)
	grads[qContrast] = make([]float64, nv)
	for k := 0; k < nv; k++ {
		grads[qFWHM][k] = 2 * math.Sqrt(2*math.Ln2) * g.dtheta[3][k]
		grads[qContrast][k] = (g.dtheta[1][k]*th[0] - th[1]*g.dtheta[0][k]) / (th[0] * th[0])
	}
	bisVal, bisGrad, bisErr := bisGradient(c.V, c.Value, g, opts.Bisector)
	if bisErr != nil {
		bisGrad = make([]float64, nv)
	}
	grads[qBIS] = bisGrad
	dvVal, dvGrad, dvErr := biGaussDV(c.V, c.Value, w, g)
	if dvErr != nil {
		dvGrad = make([]float64, nv)
	}
	grads[qDV] = dvGrad
	vsVal, vsGrad, vsErr := vspanGradient(c.V, c.Value, w, g)
	if vsErr != nil {
		vsGrad = make([]float64, nv)
	}
	grads[qVspan] = vsGrad
	// Per-segment fits, started from the total fit.
	segGrads := make([][]float64, len(c.Segments))
	segFit := make([]fitResult, len(c.Segments))
	segErr := make([]error, len(c.Segments))
	for s, sg := range c.Segments {
		ws := make([]float64, nv)
		for k := range ws {
			ws[k] = 1 / math.Max(sg.Var[k], 1e-300)
		}
		scale := sg.Value[0] / th[0]
		start := []float64{th[0] * scale, th[1] * scale, th[2], th[3]}
		res, ok := lmFit(c.V, sg.Value, ws, start, gaussModel, 200)
		switch {
		case !ok:
			segErr[s] = ErrFitFailed
		case !(res.theta[1] > 0) || res.theta[2] < c.V[0] || res.theta[2] > c.V[nv-1]:
			segErr[s] = ErrNoLine
		default:
			segFit[s] = res
			segGrads[s] = res.dtheta[2]
			continue
		}
		segGrads[s] = make([]float64, nv)
	}
	vq, vs := c.plan.propagate(grads, segGrads)
	if sig := math.Sqrt(vq[qRV]); !(sig < r.Fit.FWHM()) {
		// A flat CCF (a spectrum without lines, a constant flux): the fit
		// finds a "line" whose position is unknown to more than its width.
		e := failed(fmt.Errorf("%s: %w: the CCF has no significant dip (RV error %.3g m/s exceeds the fitted width %.3g m/s)", r.Name, ErrNoLine, sig, r.Fit.FWHM()))
		r.RV, r.FWHM, r.Contrast, r.BIS, r.DeltaV, r.Vspan, r.Chromatic = e, e, e, e, e, e, e
		r.PhotonLimit = math.NaN()
		return 0, false
	}

	r.RV = Estimate{Value: bary(th[2]), Sigma: math.Sqrt(vq[qRV])}
	r.FWHM = Estimate{Value: r.Fit.FWHM(), Sigma: math.Sqrt(vq[qFWHM])}
	r.Contrast = Estimate{Value: r.Fit.Contrast(), Sigma: math.Sqrt(vq[qContrast])}
	if bisErr == nil {
		r.BIS = Estimate{Value: bisVal, Sigma: math.Sqrt(vq[qBIS])}
	} else {
		r.BIS = failed(fmt.Errorf("%s: BIS: %w", r.Name, bisErr))
	}
	if dvErr == nil {
		r.DeltaV = Estimate{Value: dvVal, Sigma: math.Sqrt(vq[qDV])}
	} else {
		r.DeltaV = failed(fmt.Errorf("%s: bi-Gaussian: %w", r.Name, dvErr))
	}
	if vsErr == nil {
		r.Vspan = Estimate{Value: vsVal, Sigma: math.Sqrt(vq[qVspan])}
	} else {
		r.Vspan = failed(fmt.Errorf("%s: Vspan: %w", r.Name, vsErr))
	}
	over := math.Max(1, c.PixelWidth/(c.V[1]-c.V[0]))
	r.PhotonLimit = r.Fit.PhotonLimit(c.V, c.Var, over)

	var lam, rv, sig []float64
	for s, sg := range c.Segments {
		o := OrderRV{Order: sg.Order, Wavelength: sg.Wavelength}
		if segErr[s] != nil {
			o.RV = failed(fmt.Errorf("%s: order %d: %w", r.Name, sg.Order, segErr[s]))
		} else {
			o.RV = Estimate{Value: bary(segFit[s].theta[2]), Sigma: math.Sqrt(vs[s])}
			lam = append(lam, sg.Wavelength)
			rv = append(rv, o.RV.Value)
			sig = append(sig, o.RV.Sigma)
		}
		r.Orders = append(r.Orders, o)
	}
	if len(lam) < 3 {
		r.Chromatic = failed(fmt.Errorf("%s: chromatic slope: %w: %d orders with an RV, need 3", r.Name, ErrNoData, len(lam)))
	} else if cf, err := FitChromatic(lam, rv, sig, 0); err != nil {
		r.Chromatic = failed(fmt.Errorf("%s: chromatic slope: %w", r.Name, err))
	} else {
		r.Chromatic = Estimate{Value: cf.Beta, Sigma: cf.BetaErr}
	}
	return th[2], true
}

// bisGradient returns the BIS of the CCF y (normalised by the Gaussian
// continuum C0, depth A/C0 from the fit) and its gradient with respect to
// each CCF value, including the dependence through C0 and A:
//
//	∂BIS/∂y_k = g_k/C0 − (Σ_j g_j y_j/C0²)·∂C0/∂y_k + ∂BIS/∂D·∂D/∂y_k
//
// with g the gradient with respect to the normalised profile.
func bisGradient(v, y []float64, g fitResult, opts *BisectorOptions) (float64, []float64, error) {
	c0, a := g.theta[0], g.theta[1]
	f := make([]float64, len(y))
	for k := range f {
		f[k] = y[k] / c0
	}
	b, gf, dD, err := bisGrad(v, f, a/c0, opts)
	if err != nil {
		return 0, nil, err
	}
	var sy float64
	for j := range gf {
		sy += gf[j] * y[j]
	}
	sy /= c0 * c0
	grad := make([]float64, len(y))
	for k := range grad {
		dc0, da := g.dtheta[0][k], g.dtheta[1][k]
		grad[k] = gf[k]/c0 - sy*dc0 + dD*(da/c0-a*dc0/(c0*c0))
	}
	return b, grad, nil
}

// biGaussDV fits the bi-Gaussian profile and returns ΔV = v0_bi − v0_Gauss
// and its gradient with respect to the CCF values.
func biGaussDV(v, y, w []float64, g fitResult) (float64, []float64, error) {
	th := g.theta
	start := []float64{th[0], th[1], th[2], th[3], th[3]}
	res, ok := lmFit(v, y, w, start, biGaussModel, 200)
	if !ok {
		return 0, nil, ErrFitFailed
	}
	if !(res.theta[1] > 0) || !(res.theta[3] > 0) || !(res.theta[4] > 0) {
		return 0, nil, ErrNoLine
	}
	grad := make([]float64, len(v))
	for k := range grad {
		grad[k] = res.dtheta[2][k] - g.dtheta[2][k]
	}
	return res.theta[2] - th[2], grad, nil
}

// vspanGradient returns Vspan = v_high − v_low and its gradient with
// respect to the CCF values (the point selection, fixed by the full fit,
// does not move under small changes of the data).
func vspanGradient(v, y, w []float64, g fitResult) (float64, []float64, error) {
	th := g.theta
	v0, sg := th[2], math.Abs(th[3])
	part := func(keep func(d float64) bool) (fitResult, error) {
		ws := make([]float64, len(w))
		n := 0
		for k := range w {
			if keep(math.Abs(v[k]-v0) / sg) {
				ws[k] = w[k]
				n++
			}
		}
		if n < 8 {
			return fitResult{}, fmt.Errorf("%w: %d points for a part of the profile", ErrNoLine, n)
		}
		res, ok := lmFit(v, y, ws, th, gaussModel, 200)
		if !ok || !(res.theta[1] > 0) {
			return fitResult{}, ErrFitFailed
		}
		return res, nil
	}
	hi, err := part(func(d float64) bool { return d >= 1 })
	if err != nil {
		return 0, nil, err
	}
	lo, err := part(func(d float64) bool { return d <= 1 || d >= 3 })
	if err != nil {
		return 0, nil, err
	}
	grad := make([]float64, len(v))
	for k := range grad {
		grad[k] = hi.dtheta[2][k] - lo.dtheta[2][k]
	}
	return hi.theta[2] - lo.theta[2], grad, nil
}

// PhotonLimit returns the photon-noise limit of the RV from the Gaussian
// model of a CCF sampled at velocities v (m/s) with per-bin variances
// variance (Bouchy, Pepe & Queloz 2001, A&A 374, 733, in the velocity
// domain; common practice):
//
//	σ_RV = sqrt(oversampling) · [Σ_v (∂CCF/∂v)² / σ²_CCF(v)]^(−1/2),
//
// where oversampling (≥ 1) is the pixel width over the bin step, which
// accounts approximately for the correlation of bins finer than a pixel.
func (g GaussianFit) PhotonLimit(v, variance []float64, oversampling float64) float64 {
	var s float64
	for k := range v {
		u := (v[k] - g.V0) / g.Sigma
		d := g.A * u / g.Sigma * math.Exp(-0.5*u*u)
		s += d * d / variance[k]
	}
	return math.Sqrt(oversampling / s)
}

// bandLines are the line cores checkBands looks for: the laboratory air
// wavelength (as the bands use), the tolerance and, for the broad lines
// whose centre is found by symmetry, the half-width of the profile compared
// with its mirror image, in Å (0: the deepest point instead).
var bandLines = []struct {
	name, index   string
	air, tol, win float64
}{
	{"Ca II K", "S-index", BandCaK.Center, 0.6, 1.5},
	{"Ca II H", "S-index", BandCaH.Center, 0.6, 1.5},
	{"Na I D2", "Na D", BandNaD2.Center, 0.25, 0},
	{"Na I D1", "Na D", BandNaD1.Center, 0.25, 0},
	{"H-alpha", "H-alpha", BandHAlpha.Center, 0.8, 1.2},
}

// checkBands returns a warning for each index line whose centre lies
// farther from the band centre than the line's tolerance; lines the
// spectrum does not cover are not checked. The flux is resampled (linearly
// between pixel centres) on a grid of half the mean pixel width within
// ±(2 Å + half-width) of the expected centre c. For the broad lines (Ca II
// H and K, H-alpha) the centre is where the profile best matches its
// mirror image, the c' within ±2 Å of c that minimises
// Σ_u (F(c' + u) − F(c' − u))² over 0 < u ≤ the half-width, which an
// emission core, being symmetric, does not move; for Na D it is the
// deepest point of the flux averaged over 0.25 Å.
func checkBands(s *Spectrum, orders []ccfOrder, rv float64) []string {
	var out []string
	d := DopplerFactor(rv)
	for _, bl := range bandLines {
		c := onScale(bl.air, false, s.Vacuum) * d
		reach := 2 + math.Max(bl.win, 0.125)
		lo, hi := c-reach, c+reach
		best := -1
		for i, o := range orders {
			if lo >= o.edge(0) && hi <= o.edge(o.n()) && (best < 0 || centrality(o, c) > centrality(orders[best], c)) {
				best = i
			}
		}
		if best < 0 {
			continue
		}
		o := &orders[best]
		f := o.flux
		x0 := o.search(lo)
		x1 := o.search(hi)
		if x1-x0 < 8 {
			continue
		}
		g := (hi - lo) / float64(x1-x0+1) / 2 // grid step, Å
		if g > bl.tol/4 {
			continue // too coarse to tell
		}
		n := int((hi-lo)/g) + 1
		grid := make([]float64, n)
		x := max(x0, 1)
		for i := range grid {
			w := lo + float64(i)*g
			for x+1 < len(f)-1 && 0.5*(o.edge(x+1)+o.edge(x+2)) < w {
				x++
			}
			for x > 0 && 0.5*(o.edge(x)+o.edge(x+1)) > w {
				x--
			}
			m0, m1 := 0.5*(o.edge(x)+o.edge(x+1)), 0.5*(o.edge(x+1)+o.edge(x+2))
			t := (w - m0) / (m1 - m0)
			grid[i] = f[x] + t*(f[x+1]-f[x])
		}
		i0 := int((c - 2 - lo) / g)
		i1 := int((c + 2 - lo) / g)
		bestI, bestV := -1, math.Inf(1)
		if bl.win > 0 {
			nu := int(bl.win / g)
			for i := max(i0, nu); i <= min(i1, n-1-nu); i++ {
				var a float64
				for k := 1; k <= nu; k++ {
					diff := grid[i+k] - grid[i-k]
					a += diff * diff
				}
				if a < bestV {
					bestI, bestV = i, a
				}
			}
		} else {
			h := max(1, int(0.125/g))
			for i := max(i0, h); i <= min(i1, n-1-h); i++ {
				var a float64
				for k := -h; k <= h; k++ {
					a += grid[i+k]
				}
				if a < bestV {
					bestI, bestV = i, a
				}
			}
		}
		if bestI < 0 {
			continue
		}
		if off := lo + float64(bestI)*g - c; math.Abs(off) > bl.tol {
			out = append(out, fmt.Sprintf("%s: %s band off the line: the line centre lies %+.2f Å (%+.0f km/s) from the band centre at %.3f Å; the star's velocity, the mask's rest frame or the wavelength scale may be wrong", bl.index, bl.name, off, C*off/c/1e3, c))
		}
	}
	return out
}
