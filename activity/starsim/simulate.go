package starsim

import (
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"sort"
	"strconv"

	"spotsift/indicators"
	"spotsift/rvfit"

	"spotsift/internal/worker"
)

// RefWavelength is the wavelength (Å) at which the spot contrast of the
// tabulated, profile-based quantities (activity RV, FWHM, BIS, flux) is
// evaluated.
const RefWavelength = 5500.0

// Random streams: each concern draws from its own PCG stream of the seed,
// so that changing one part of a scenario leaves the others' draws alone.
const (
	streamSchedule = 1
	streamRegions  = 2
	streamLines    = 3
	streamTable    = 1 << 32 // + epoch index
	streamSpectrum = 2 << 32 // + epoch index
	streamSNR      = 3 << 32 // + epoch index
	streamCaLines  = 4
)

// Options controls Simulate. A nil *Options uses the defaults.
type Options struct {
	// Workers is the number of goroutines computing epochs in parallel;
	// 0 means runtime.GOMAXPROCS(0). Results do not depend on it.
	Workers int
	// NoNoise reports whether noise is left out: spectra are then
	// noise-free and the measured values equal the true ones (errors are
	// still computed). For templates and tests.
	NoNoise bool
}

func (o *Options) workers() int {
	if o == nil || o.Workers <= 0 {
		return runtime.GOMAXPROCS(0)
	}
	return o.Workers
}

// Epoch holds the truth and the simulated measurements of one epoch.
// Velocities are in m/s.
type Epoch struct {
	// Time is the mid-exposure epoch, BJD_TDB in days.
	Time float64
	// Instrument names the spectrograph.
	Instrument string
	// BERV is the barycentric correction of the epoch's spectrum in m/s
	// (Observing.BERVAmplitude; 0 for barycentric spectra). RV is
	// barycentric whatever it is.
	BERV float64
	// SNR is the epoch's signal-to-noise ratio per pixel at 5500 Å: the
	// instrument's SNR times a log-normal factor of σ SNRScatter.
	SNR float64

	// ActivityRV is the true activity RV: the centre of a Gaussian fitted to
	// the disk-integrated profile (spot contrast at RefWavelength, the
	// instrument's resolution) minus that of the quiet star.
	ActivityRV float64
	// PlanetRV holds each planet's Keplerian RV, in Scenario.Planets order.
	PlanetRV []float64
	// SpotFilling and FaculaFilling are the fractions of the projected disk
	// covered by spots and by faculae.
	SpotFilling, FaculaFilling float64
	// Flux is the star's flux at RefWavelength relative to the quiet star.
	Flux float64
	// Emission is the relative strength of the chromospheric emission cores.
	Emission float64
	// TrueFWHM, TrueBIS (m/s), TrueContrast and TrueSIndex are the noise-free
	// values measured on the profile and on the synthetic Ca II spectrum
	// (a side model of the Ca II window when the spectral range lacks it).
	TrueFWHM, TrueBIS, TrueContrast, TrueSIndex float64

	// RV is the measured velocity: systemic + instrument offset + ActivityRV
	// + Σ PlanetRV + noise of σ RVErr (photon noise and instrument jitter
	// in quadrature).
	RV, RVErr float64
	// FWHM, BIS and SIndex are the noisy measured values with their errors.
	FWHM, FWHMErr   float64
	BIS, BISErr     float64
	SIndex, SIndErr float64
}

// Result is a finished simulation. Its epochs are in time order; spectra
// are made on demand by Spectrum.
type Result struct {
	// Scenario is the scenario simulated, defaults applied.
	Scenario *Scenario
	// Seed is the seed every draw came from.
	Seed uint64
	// Epochs holds the epochs in time order.
	Epochs []Epoch

	s *sim
}

// instModel holds what depends on an instrument.
type instModel struct {
	sigInst  float64 // instrumental Gaussian σ, km/s
	quietV0  float64 // Gaussian-fit centre of the quiet profile, km/s
	rvPhoton float64 // photon-noise RV precision, m/s
	rFWHM    float64 // σ(FWHM)/σ(RV) of the profile measurements
	rBIS     float64 // σ(BIS)/σ(RV)
}

// sim is the fixed part of a simulation.
type sim struct {
	sc      *Scenario
	seed    uint64
	d       *disk
	regs    []activeRegion
	g       velGrid
	quietH  []float64
	inst    []instModel
	visits  []visit
	spec    *specModel
	e0, e1  float64    // chromospheric emission: e = e0 + e1·facular filling
	ca      *specModel // the model holding the Ca II window: spec, or a side model
	caLo    int        // pixel range of the Ca II window in ca
	caHi    int
	workers int
	noNoise bool
}

// workspace holds one goroutine's scratch.
type workspace struct {
	cv     coverage
	H      []float64
	prof   Profile
	spec   []float64
	absorb []float64
	k      kernels
}

// Simulate runs the scenario sc with the seed (sc.Seed replaces it when not
// 0) and returns the epochs with their truth and simulated measurements.
// sc is checked first (see Scenario.Check); its defaults are applied.
//
// Every random draw comes from PCG streams of the seed, so the same scenario
// and seed give the same result, whatever opts.Workers.
func Simulate(sc *Scenario, seed uint64, opts *Options) (*Result, error) {
	if err := sc.Check(sc.Name); err != nil {
		return nil, err
	}
	c := sc.Defaults()
	if c.Seed != 0 {
		seed = c.Seed
	}
	s := &sim{sc: c, seed: seed, workers: opts.workers(), noNoise: opts != nil && opts.NoNoise}
	s.d = newDisk(&c.Star, c.Numerics.Grid)
	s.regs = buildRegions(c, rand.New(rand.NewPCG(seed, streamRegions)))
	s.visits = schedule(&c.Observing, c.Instruments, rand.New(rand.NewPCG(seed, streamSchedule)))
	if len(s.visits) == 0 {
		return nil, ErrNoEpochs
	}
	sigMax := 0.0
	s.inst = make([]instModel, len(c.Instruments))
	for i, in := range c.Instruments {
		if in.Resolution > 0 {
			s.inst[i].sigInst = cKms / in.Resolution / fwhmSig
		}
		sigMax = math.Max(sigMax, s.inst[i].sigInst)
	}
	sigEff := math.Hypot(c.Star.LineSigma, sigMax)
	s.g = newVelGrid(s.d.vmax+8*sigEff+1, c.Numerics.VelocityStep)
	s.quietH = s.d.quietHistogram(s.g)
	s.spec = newSpecModel(c, rand.New(rand.NewPCG(seed, streamLines)))
	s.ca = s.spec
	s.caLo = int((math.Log(sBandV0-5) - s.spec.lnl0) / s.spec.dl)
	s.caHi = int((math.Log(sBandR1+5)-s.spec.lnl0)/s.spec.dl) + 1
	if s.caLo < 0 || s.caHi > s.spec.n {
		// The spectrum lacks the S-index bands: a side model of the Ca II
		// window, at the same pixel step and line density, gives the S-index
		// and calibrates the emission cores all the same.
		cc := *c
		lo, hi := sBandV0-12, sBandR1+12
		cc.Spectrum.LambdaMin, cc.Spectrum.LambdaMax = lo, hi
		cc.Spectrum.Pixels = max(1000, int(math.Log(hi/lo)/s.spec.dl)+1)
		cc.Spectrum.Lines = int(math.Round(float64(c.Spectrum.Lines) * (hi - lo) / (c.Spectrum.LambdaMax - c.Spectrum.LambdaMin)))
		s.ca = newSpecModel(&cc, rand.New(rand.NewPCG(seed, streamCaLines)))
		s.caLo = int((math.Log(sBandV0-5) - s.ca.lnl0) / s.ca.dl)
		s.caHi = int((math.Log(sBandR1+5)-s.ca.lnl0)/s.ca.dl) + 1
	}

	ws := s.newWorkspace()
	var quiet coverage
	if err := s.calibrateEmission(ws, &quiet); err != nil {
		return nil, err
	}
	for i := range s.inst {
		fit, err := s.profileFit(ws, &quiet, i)
		if err != nil {
			return nil, fmt.Errorf("starsim: quiet star: %w", err)
		}
		s.inst[i].quietV0 = fit.V0
		s.inst[i].rFWHM, s.inst[i].rBIS = errorRatios(&ws.prof, fit)
		s.inst[i].rvPhoton = s.photonRV(ws, &quiet, i)
	}

	res := &Result{Scenario: c, Seed: seed, Epochs: make([]Epoch, len(s.visits)), s: s}
	errs := make([]error, len(s.visits))
	var wg worker.Group
	next := make(chan int)
	for w := 0; w < min(s.workers, len(s.visits)); w++ {
		wg.Go(func() {
			ws := s.newWorkspace()
			for i := range next {
				res.Epochs[i], errs[i] = s.epoch(ws, i)
			}
		})
	}
	wg.Feed(next, len(s.visits))
	if err := wg.Wait(); err != nil {
		return nil, fmt.Errorf("starsim: %w", err)
	}
	for i, err := range errs {
		if err != nil {
			return nil, fmt.Errorf("starsim: epoch %d: %w", i, err)
		}
	}
	return res, nil
}

func (s *sim) newWorkspace() *workspace {
	return &workspace{
		spec:   make([]float64, max(s.spec.n, s.ca.n)),
		absorb: make([]float64, max(s.spec.n, s.ca.n)),
	}
}

// profile fills ws.prof with the disk-integrated profile for coverage cv,
// instrument inst, spot contrast at RefWavelength, and returns the flux
// relative to the quiet star.
func (s *sim) profile(ws *workspace, cv *coverage, inst int) float64 {
	st := &s.sc.Star
	var wsum float64
	ws.H, wsum = s.d.histogram(ws.H, s.quietH, s.g, cv, s.contrastsAt(RefWavelength))
	sig := math.Hypot(st.LineSigma, s.inst[inst].sigInst)
	A := gaussSmooth(ws.prof.Flux, ws.H, s.g.h, sig, wsum*sig/st.LineSigma)
	n := len(A)
	if len(ws.prof.Velocity) != n {
		ws.prof.Velocity = make([]float64, n)
		for k := range ws.prof.Velocity {
			ws.prof.Velocity[k] = s.g.at(k)
		}
	}
	for k := range A {
		A[k] = 1 - st.LineDepth*A[k]
	}
	ws.prof.Flux = A
	return wsum / s.d.wsum
}

func (s *sim) contrastsAt(lambda float64) contrasts {
	st, a := &s.sc.Star, &s.sc.Activity
	return contrasts{
		spot:   SpotContrast(lambda, st.Teff, a.SpotTempDiff),
		facula: a.FaculaContrast,
		supp:   a.CBSuppression,
	}
}

func (s *sim) profileFit(ws *workspace, cv *coverage, inst int) (GaussFit, error) {
	s.profile(ws, cv, inst)
	return FitGaussian(&ws.prof)
}

// buildKernels fills ws.k for coverage cv and instrument inst.
func (s *sim) buildKernels(ws *workspace, cv *coverage, inst int) {
	s.buildKernelsFor(ws, cv, inst, s.spec, 0, math.Inf(1))
}

// buildKernelsFor fills the kernels synth needs for wavelengths in
// [lmin, lmax] Å only (the nodes around them and the strong lines whose
// wings reach them); the others are left as they were.
func (s *sim) buildKernelsFor(ws *workspace, cv *coverage, inst int, m *specModel, lmin, lmax float64) {
	st := &s.sc.Star
	k := &ws.k
	k.g = s.g
	sigI := s.inst[inst].sigInst
	sig := math.Hypot(st.LineSigma, sigI)
	if len(k.A) != len(m.nodes) {
		k.A = make([][]float64, len(m.nodes))
	}
	j0, _ := m.nodeOf(math.Max(lmin, m.nodes[0]))
	j1, _ := m.nodeOf(math.Min(lmax, m.nodes[len(m.nodes)-1]))
	for j, l := range m.nodes {
		if j < j0 || j > j1+1 {
			continue
		}
		var wsum float64
		ws.H, wsum = s.d.histogram(ws.H, s.quietH, s.g, cv, s.contrastsAt(l))
		k.A[j] = gaussSmooth(k.A[j], ws.H, s.g.h, sig, wsum*sig/st.LineSigma)
	}
	if len(k.strong) != len(StrongLines) {
		k.strong = make([][]float64, len(StrongLines))
		k.shalf = make([]int, len(StrongLines))
	}
	// Strong lines: the rotation histogram, smoothed by the instrumental
	// profile, at pixel steps, normalised to unit sum.
	half := int(math.Ceil((s.d.vmax+6*sigI)/m.pixVel)) + 1
	pg := velGrid{h: m.pixVel, half: half}
	for sIdx := range StrongLines {
		sl := &StrongLines[sIdx]
		if wing := 41*sl.Gamma + 10*sl.EmissionSigma; sl.Lambda+wing < lmin || sl.Lambda-wing > lmax {
			continue
		}
		ws.H, _ = s.d.histogram(ws.H, s.quietH, s.g, cv, s.contrastsAt(StrongLines[sIdx].Lambda))
		ker := k.strong[sIdx]
		if cap(ker) < pg.len() {
			ker = make([]float64, pg.len())
		}
		ker = ker[:pg.len()]
		for p := range ker {
			ker[p] = 0
		}
		for q, hq := range ws.H {
			if hq == 0 {
				continue
			}
			u := s.g.at(q)
			if sigI == 0 {
				pg.deposit(ker, u, hq)
				continue
			}
			for p := range ker {
				z := (pg.at(p) - u) / sigI
				if z > -7 && z < 7 {
					ker[p] += hq * math.Exp(-0.5*z*z)
				}
			}
		}
		var sum float64
		for _, v := range ker {
			sum += v
		}
		for p := range ker {
			ker[p] /= sum
		}
		k.strong[sIdx] = ker
		k.shalf[sIdx] = half
	}
}

// photonRV returns the photon-noise RV precision (m/s) of instrument inst
// on the quiet star's full spectrum at its S/N (Bouchy, Pepe & Queloz 2001,
// A&A 374, 733; docs/methods.md §2):
//
//	W_i = (∂N/∂ ln λ)_i² / N_i,  σ_RV = c / √(Σ W_i)
//
// N_i the expected photo-electrons of pixel i (no detector noise).
func (s *sim) photonRV(ws *workspace, cv *coverage, inst int) float64 {
	s.buildKernels(ws, cv, inst)
	m := s.spec
	e := s.e0
	m.synth(ws.spec, ws.absorb, 0, m.n, &ws.k, 0, e)
	snr2 := s.sc.Instruments[inst].SNR * s.sc.Instruments[inst].SNR
	var W float64
	for i := 1; i < m.n-1; i++ {
		N := snr2 * m.cont[i] * ws.spec[i]
		dN := snr2 * (m.cont[i+1]*ws.spec[i+1] - m.cont[i-1]*ws.spec[i-1]) / (2 * m.dl)
		if N > 0 {
			W += dN * dN / N
		}
	}
	return cLight / math.Sqrt(W)
}

// sIndex measures the S-index on the noise-free synthetic Ca II window in
// ws.spec (continuum-normalised; the continuum shape is applied here) and
// its photon-noise error at signal-to-noise snr:
//
//	S = 19.2 (H + K)/(R + V)
//
// with H, K = Σ F T Δλ (triangular bands) and R, V = Σ F Δλ (docs/methods.md
// §4.1; SIndexScale).
func (s *sim) sIndex(spec []float64, snr float64) (S, sErr float64) {
	m := s.ca
	var hk, rv, vhk, vrv float64
	snr2 := snr * snr
	for i := s.caLo; i < s.caHi; i++ {
		l := m.lam[i]
		dl := l * m.dl
		N := snr2 * m.cont[i] * spec[i]
		if t := 1 - math.Abs(l-sBandK)/sBandHW; t > 0 {
			hk += N * t * dl
			vhk += N * t * t * dl * dl
		}
		if t := 1 - math.Abs(l-sBandH)/sBandHW; t > 0 {
			hk += N * t * dl
			vhk += N * t * t * dl * dl
		}
		if (l >= sBandV0 && l <= sBandV1) || (l >= sBandR0 && l <= sBandR1) {
			rv += N * dl
			vrv += N * dl * dl
		}
	}
	S = SIndexScale * hk / rv
	return S, S * math.Sqrt(vhk/(hk*hk)+vrv/(rv*rv))
}

// calibrateEmission sets the emission law e = e0 + e1·f_fac so that the
// quiet star has S = SQuiet and dS/df_fac = SGain. S is linear in e because
// the emission cores lie inside the H and K bands only.
func (s *sim) calibrateEmission(ws *workspace, quiet *coverage) error {
	m := s.ca
	s.buildKernelsFor(ws, quiet, 0, m, 0, math.Inf(1))
	m.synth(ws.spec, ws.absorb, s.caLo, s.caHi, &ws.k, 0, 0)
	S0, _ := s.sIndex(ws.spec, 100)
	m.synth(ws.spec, ws.absorb, s.caLo, s.caHi, &ws.k, 0, 1)
	S1, _ := s.sIndex(ws.spec, 100)
	if !(S1 > S0) || math.IsNaN(S0) {
		return fmt.Errorf("starsim: the spectrum range %v–%v Å must hold the Ca II H and K bands", s.sc.Spectrum.LambdaMin, s.sc.Spectrum.LambdaMax)
	}
	a := &s.sc.Activity
	s.e0 = math.Max(0, (a.SQuiet-S0)/(S1-S0))
	s.e1 = a.SGain / (S1 - S0)
	return nil
}

// epoch computes epoch i.
func (s *sim) epoch(ws *workspace, i int) (Epoch, error) {
	v := s.visits[i]
	sc := s.sc
	in := &sc.Instruments[v.inst]
	s.d.cover(&ws.cv, s.regs, v.time)
	ep := Epoch{Time: v.time, Instrument: in.Name, SpotFilling: ws.cv.spotFill, FaculaFilling: ws.cv.facFill, SNR: in.SNR}
	if o := &sc.Observing; o.BERVAmplitude > 0 {
		ep.BERV = 1000 * o.BERVAmplitude * math.Sin(2*math.Pi*(v.time-o.Start)/365.25+o.BERVPhase*math.Pi/180)
	}
	if in.SNRScatter > 0 {
		// Seeing, airmass and clouds: the median S/N is the instrument's.
		ep.SNR *= math.Exp(in.SNRScatter * rand.New(rand.NewPCG(s.seed, streamSNR+uint64(i))).NormFloat64())
	}
	ep.Flux = s.profile(ws, &ws.cv, v.inst)
	fit, err := FitGaussian(&ws.prof)
	if err != nil {
		return ep, err
	}
	ep.ActivityRV = (fit.V0 - s.inst[v.inst].quietV0) * 1000
	ep.TrueFWHM = fit.FWHM() * 1000
	ep.TrueContrast = fit.Contrast()
	ep.TrueBIS = ws.prof.BIS() * 1000
	var planets float64
	for p := range sc.Planets {
		rv := sc.Planets[p].RV(v.time)
		ep.PlanetRV = append(ep.PlanetRV, rv)
		planets += rv
	}
	ep.Emission = s.e0 + s.e1*ep.FaculaFilling
	m0 := s.ca
	s.buildKernelsFor(ws, &ws.cv, v.inst, m0, m0.lam[s.caLo], m0.lam[s.caHi-1])
	m0.synth(ws.spec, ws.absorb, s.caLo, s.caHi, &ws.k, 0, ep.Emission)
	var sErr float64
	ep.TrueSIndex, sErr = s.sIndex(ws.spec, ep.SNR)

	rng := rand.New(rand.NewPCG(s.seed, streamTable+uint64(i)))
	gauss := rng.NormFloat64
	if s.noNoise {
		gauss = func() float64 { return 0 }
	}
	// The photon noise scales as 1/(S/N) (Bouchy et al. 2001).
	ph := s.inst[v.inst].rvPhoton * in.SNR / ep.SNR
	ep.RVErr = math.Hypot(ph, in.Jitter)
	ep.RV = sc.Star.Systemic + in.Offset + ep.ActivityRV + planets + ep.RVErr*gauss()
	// Errors of the line-shape indicators scale with the RV photon noise by
	// the ratios found for this instrument's quiet profile (errorRatios).
	ep.FWHMErr = s.inst[v.inst].rFWHM * ph
	ep.BISErr = s.inst[v.inst].rBIS * ph
	ep.FWHM = ep.TrueFWHM + ep.FWHMErr*gauss()
	ep.BIS = ep.TrueBIS + ep.BISErr*gauss()
	ep.SIndErr = sErr
	ep.SIndex = ep.TrueSIndex + sErr*gauss()
	return ep, nil
}

// LineList returns the rest wavelengths (Å, air) of the invented weak
// absorption lines of the full spectra, in increasing order, with their
// local central depths: a ready-made line mask for cross-correlation.
func (r *Result) LineList() (wavelength, depth []float64) {
	m := r.s.spec
	idx := make([]int, len(m.lpix))
	for i := range idx {
		idx[i] = i
	}
	sort.Slice(idx, func(a, b int) bool { return m.lpix[idx[a]] < m.lpix[idx[b]] })
	for _, i := range idx {
		wavelength = append(wavelength, math.Exp(m.lnl0+m.lpix[i]*m.dl))
		depth = append(depth, m.ldepth[i])
	}
	return wavelength, depth
}

// errorRatios returns σ(FWHM)/σ(RV) and σ(BIS)/σ(RV) for measurements on
// profile p with white noise of equal variance in every velocity bin (the
// photon-noise regime of a shallow CCF): σ(RV) and σ(FWHM) from the
// covariance (JᵀJ)⁻¹ of the four-parameter Gaussian fit g, σ(BIS) by
// propagating the noise through the bisector span with its numerical
// gradient with respect to every bin.
func errorRatios(p *Profile, g GaussFit) (rFWHM, rBIS float64) {
	var JtJ [4][4]float64
	for _, v := range p.Velocity {
		u := (v - g.V0) / g.Sigma
		e := math.Exp(-0.5 * u * u)
		J := [4]float64{1, -e, -g.A * e * u / g.Sigma, -g.A * e * u * u / g.Sigma}
		for a := 0; a < 4; a++ {
			for b := 0; b < 4; b++ {
				JtJ[a][b] += J[a] * J[b]
			}
		}
	}
	var col [4][4]float64
	for k := 0; k < 4; k++ {
		var e [4]float64
		e[k] = 1
		x, ok := solve4(JtJ, e)
		if !ok {
			return math.NaN(), math.NaN()
		}
		col[k] = x
	}
	sRV := math.Sqrt(col[2][2])
	rFWHM = fwhmSig * math.Sqrt(col[3][3]) / sRV
	q := &Profile{Velocity: p.Velocity, Flux: append([]float64(nil), p.Flux...)}
	b0 := q.BIS()
	fmin := 1.0
	for _, f := range q.Flux {
		fmin = math.Min(fmin, f)
	}
	// Bins above the 5 % depth level whose neighbours are too lie outside
	// every bisector zone and its interpolation (the top zone starts at
	// 10 %) and do not move the BIS.
	top := 1 - 0.05*(1-fmin)
	n := len(q.Flux)
	const h = 1e-6
	var vb float64
	for j := range q.Flux {
		f := q.Flux[j]
		if f > top && (j == 0 || q.Flux[j-1] > top) && (j == n-1 || q.Flux[j+1] > top) {
			continue
		}
		q.Flux[j] = f + h
		d := (q.BIS() - b0) / h
		q.Flux[j] = f
		vb += d * d
	}
	return rFWHM, math.Sqrt(vb) / sRV
}

// Len returns the number of epochs.
func (r *Result) Len() int { return len(r.Epochs) }

// Profile returns the noise-free disk-integrated line profile of epoch i
// (spot contrast at RefWavelength, the epoch's instrumental resolution,
// no Doppler shift): the fast alternative to a full spectrum.
func (r *Result) Profile(i int) (*Profile, error) {
	if i < 0 || i >= len(r.Epochs) {
		return nil, fmt.Errorf("%w: %d of %d", ErrEpoch, i, len(r.Epochs))
	}
	s := r.s
	ws := &workspace{}
	s.d.cover(&ws.cv, s.regs, s.visits[i].time)
	s.profile(ws, &ws.cv, s.visits[i].inst)
	return &Profile{Velocity: append([]float64(nil), ws.prof.Velocity...), Flux: append([]float64(nil), ws.prof.Flux...)}, nil
}

// Spectrum returns the full simulated spectrum of epoch i: one order on the
// log-linear grid of Scenario.Spectrum, air wavelengths, flux in
// photo-electrons with photon noise (Poisson draws below 30 expected
// electrons, the Gaussian approximation σ = √N above), shifted by the Doppler factor of systemic velocity,
// instrument offset and planets, and in the observatory frame by −BERV when
// Observing.BERVAmplitude is set (else barycentric, BERV 0). The same epoch always gives
// the same spectrum; epochs may be made in any order and in parallel.
func (r *Result) Spectrum(i int) (*indicators.Spectrum, error) {
	if i < 0 || i >= len(r.Epochs) {
		return nil, fmt.Errorf("%w: %d of %d", ErrEpoch, i, len(r.Epochs))
	}
	return r.s.spectrum(r.s.newWorkspace(), r, i, nil), nil
}

// spectrum makes the spectrum of epoch i into flux (allocated when nil).
func (s *sim) spectrum(ws *workspace, r *Result, i int, flux []float64) *indicators.Spectrum {
	ep := &r.Epochs[i]
	v := s.visits[i]
	in := &s.sc.Instruments[v.inst]
	s.d.cover(&ws.cv, s.regs, v.time)
	s.buildKernels(ws, &ws.cv, v.inst)
	vel := s.sc.Star.Systemic + in.Offset
	for _, p := range ep.PlanetRV {
		vel += p
	}
	// The observed frame: 1 + z_obs = (1 + z_star)/(1 + z_BERV), so that a
	// reader composing 1 + z = (1 + z_obs)(1 + z_BERV) finds the star's
	// barycentric velocity.
	lnD := math.Log(DopplerFactor(vel)) - math.Log(DopplerFactor(ep.BERV))
	m := s.spec
	m.synth(ws.spec, ws.absorb, 0, m.n, &ws.k, lnD, ep.Emission)
	if flux == nil {
		flux = make([]float64, m.n)
	}
	rng := rand.New(rand.NewPCG(s.seed, streamSpectrum+uint64(i)))
	snr2 := ep.SNR * ep.SNR
	for p := range flux {
		// The continuum is smooth: its shift to second order in ln D,
		// C(λ/D) = C(λ) exp(a), a = −s g + s² g′/2, s = ln D, is exact to
		// s³ ≈ 1e-13 even at 10 km/s; exp(a) to third order in a (|a| < 1e-3
		// at 100 km/s) is exact to a⁴/24 < 1e-13.
		a := lnD * (lnD*m.g2cont[p]/2 - m.gcont[p])
		N := snr2 * m.cont[p] * (1 + a*(1+a/2*(1+a/3))) * ws.spec[p]
		if s.noNoise {
			flux[p] = N
			continue
		}
		if N < 30 {
			flux[p] = poisson(rng, N)
			continue
		}
		// Above 30 expected electrons the Gaussian approximation of the
		// Poisson law is good to the skewness 1/√N.
		if x := N + math.Sqrt(N)*rng.NormFloat64(); x > 0 {
			flux[p] = x
		} else {
			flux[p] = 0
		}
	}
	return &indicators.Spectrum{
		Name:   fmt.Sprintf("%s epoch %d", s.sc.Name, i),
		Orders: []indicators.Order{{Wavelength: m.lam, Flux: flux}},
		BJD:    ep.Time,
		BERV:   ep.BERV,
		Header: map[string]string{
			"OBJECT":   s.sc.Name,
			"INSTRUME": in.Name,
			"ORIGIN":   "spotsift starsim",
			"SIMSEED":  strconv.FormatUint(s.seed, 10),
			"SIMEPOCH": strconv.Itoa(i),
			"SNR5500":  strconv.FormatFloat(ep.SNR, 'g', 6, 64),
			"EXPTYPE":  "simulated",
		},
	}
}

// Series returns the simulated measurements as a per-epoch series: time,
// rv, rv_err, instrument and the indicators fwhm, bis (m/s, with errors)
// and s_index (with its error), in time order. Each call returns a new
// Series.
func (r *Result) Series() *rvfit.Series {
	n := len(r.Epochs)
	s := &rvfit.Series{Name: r.Scenario.Name}
	fwhm := rvfit.Indicator{Name: "fwhm", Unit: "m/s", Value: make([]float64, n), Err: make([]float64, n)}
	bis := rvfit.Indicator{Name: "bis", Unit: "m/s", Value: make([]float64, n), Err: make([]float64, n)}
	sind := rvfit.Indicator{Name: "s_index", Unit: "", Value: make([]float64, n), Err: make([]float64, n)}
	for i, e := range r.Epochs {
		s.Time = append(s.Time, e.Time)
		s.RV = append(s.RV, e.RV)
		s.RVErr = append(s.RVErr, e.RVErr)
		s.Instrument = append(s.Instrument, e.Instrument)
		fwhm.Value[i], fwhm.Err[i] = e.FWHM, e.FWHMErr
		bis.Value[i], bis.Err[i] = e.BIS, e.BISErr
		sind.Value[i], sind.Err[i] = e.SIndex, e.SIndErr
	}
	s.Indicators = []rvfit.Indicator{fwhm, bis, sind}
	return s
}

// poisson draws from the Poisson law of mean mu < 30 by multiplying uniform
// draws until the product falls below e^{−μ} (Knuth, The Art of Computer
// Programming, vol. 2, §3.4.1; from memory).
func poisson(rng *rand.Rand, mu float64) float64 {
	if mu <= 0 {
		return 0
	}
	L := math.Exp(-mu)
	k := 0.0
	p := rng.Float64()
	for p > L {
		k++
		p *= rng.Float64()
	}
	return k
}
