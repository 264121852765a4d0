package activity

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"

	"gonum.org/v1/gonum/mat"

	"spotsift/rvfit"
)

// OrbitSolution is the Keplerian fit the report shows for the signals
// judged planet-like or inconclusive: every orbital element with its
// one-sigma error, the offsets and jitters per instrument.
type OrbitSolution struct {
	// Signals are the 0-based indices (into Diagnosis.Signals) of the
	// signals fitted as Keplerians, in the order of Planets.
	Signals []int
	// Removed are the signals (activity-like) whose sinusoids, from the
	// diagnosis's joint fit, were subtracted from the RVs before the fit.
	Removed []int
	Planets []OrbitPlanet
	// Instruments, Offsets and Jitters (m/s) with their errors.
	Instruments         []string
	Offsets, OffsetErrs []float64
	Jitters, JitterErrs []float64
	LogLikelihood, BIC  float64
	ResidualRMS         float64
	NObs                int
	HessianOK           bool
	Draws               int
	StarMass            float64 // solar masses, 0 when unknown
	Err                 string  // why the fit failed, "" when it worked
}

// OrbitPlanet is one fitted orbit; every error is the half-width of the
// 16–84% interval of Draws draws from the fit's Laplace covariance (NaN
// when the covariance is not available).
type OrbitPlanet struct {
	P, PErr         float64 // days
	K, KErr         float64 // m/s
	E, EErr         float64
	OmegaDeg, OmErr float64 // degrees, star's orbit
	Tc, TcErr       float64 // BJD_TDB d, time of inferior conjunction
	MinMass, MMErr  float64 // M_Jup, NaN without a star mass
}

// Values of Signal.KFrom.
const (
	KFromKeplerian = "keplerian" // the orbital solution's Keplerian fit, or the eccentric orbit search's
	KFromSinusoid  = "sinusoid"  // the joint sinusoid fit of every signal
)

// kFromJoint is the KFrom of the diagnosis's joint fit for sg: a
// Keplerian for a signal of the eccentric orbit search, a sinusoid for
// the others.
func kFromJoint(sg *Signal) string {
	if sg.Source == sourceEccentric {
		return KFromKeplerian
	}
	return KFromSinusoid
}

// AdoptK sets the K to quote of every signal of dg, computed from s (the
// series dg was diagnosed from) and star (nil when none was given): for
// planet-like and inconclusive signals the semi-amplitude of the orbital
// solution (a joint Keplerian fit with one offset and jitter per
// instrument, after removing the activity-like signals' sinusoids), for
// activity-like ones, or when that fit is not available, the sinusoid's
// semi-amplitude of the diagnosis. It returns the orbital solution (nil
// when no signal qualifies) and keeps it for the report, so calling it
// again costs nothing. A diagnosis read back from a file keeps the K it
// was written with.
func AdoptK(dg *Diagnosis, s *rvfit.Series, star *Star) *OrbitSolution {
	if dg == nil {
		return nil
	}
	if dg.details == nil {
		// Read from a file: its K are those it was written with.
		return nil
	}
	if dg.details.orbitDone {
		return dg.details.orbit
	}
	var orb *OrbitSolution
	if s != nil {
		orb = fitOrbits(s, dg, star)
	}
	dg.details.orbit, dg.details.orbitDone = orb, true
	for k := range dg.Signals {
		sg := &dg.Signals[k]
		sg.K, sg.KErr, sg.KFrom = sg.Amplitude, sg.AmplitudeErr, kFromJoint(sg)
	}
	if orb != nil && orb.Err == "" {
		for j, k := range orb.Signals {
			sg := &dg.Signals[k]
			sg.K, sg.KErr, sg.KFrom = Num(orb.Planets[j].K), Num(orb.Planets[j].KErr), KFromKeplerian
		}
	}
	return orb
}

// fitOrbits fits the planet-like and inconclusive signals of dg as
// Keplerians (white noise with one jitter per instrument), after removing
// the activity-like signals' sinusoids. It returns nil when no signal
// qualifies or the diagnosis has no working data (read from a file).
func fitOrbits(s *rvfit.Series, dg *Diagnosis, star *Star) *OrbitSolution {
	if dg.details == nil || len(dg.details.signals) != len(dg.Signals) {
		return nil
	}
	out := &OrbitSolution{}
	var periods []float64
	for k, sg := range dg.Signals {
		if sg.Verdict == ActivityLike {
			out.Removed = append(out.Removed, k)
		} else if p := float64(sg.Period); p > 0 && isFinite(p) {
			out.Signals = append(out.Signals, k)
			periods = append(periods, p)
		}
	}
	if len(out.Signals) == 0 {
		return nil
	}
	y := append([]float64(nil), s.RV...)
	for _, k := range out.Removed {
		comp := dg.details.signals[k].comp
		if len(comp) != len(y) {
			out.Err = "the activity signals' sinusoids are not available"
			return out
		}
		for i := range y {
			y[i] -= comp[i]
		}
	}
	fs := *s
	fs.RV = y
	if star != nil && star.Mass > 0 {
		out.StarMass = star.Mass
	}
	pmin := 1.0
	for _, p := range periods {
		pmin = math.Min(pmin, 0.5*p)
	}
	pmax := 10 * s.Baseline()
	for _, p := range periods {
		pmax = math.Max(pmax, 2*p)
	}
	res, err := rvfit.FitModel(&fs, len(periods), nil, &rvfit.FitOptions{
		Periods: periods, Starts: 1, Seed: dg.Provenance.Seed + 0x5eed, Workers: 1, StarMass: out.StarMass,
		// The eccentricity prior of Kipping (2013): weak signals do not
		// wander to e near 1, where a few epochs fit anything.
		Model: &rvfit.ModelOptions{PMin: pmin, PMax: pmax, Eccentricity: rvfit.KippingEccentricity},
	})
	if err != nil {
		out.Err = err.Error()
		return out
	}
	np := len(periods)
	out.Instruments = res.Instruments
	out.LogLikelihood, out.BIC, out.ResidualRMS, out.NObs, out.HessianOK = res.LogLikelihood, res.BIC, res.ResidualRMS, res.NObs, res.HessianOK
	errAt := func(i int) float64 {
		if i >= len(res.Errors) || !(res.Errors[i] > 0) || !isFinite(res.Errors[i]) {
			return math.NaN()
		}
		return res.Errors[i]
	}
	for j := range res.Instruments {
		out.Offsets = append(out.Offsets, res.Offsets[j])
		out.OffsetErrs = append(out.OffsetErrs, errAt(5*np+j))
		jit, je := math.NaN(), math.NaN()
		if j < len(res.NoiseParams) {
			jit, je = math.Abs(res.NoiseParams[j]), errAt(len(res.Params)-len(res.NoiseParams)+j)
		}
		out.Jitters, out.JitterErrs = append(out.Jitters, jit), append(out.JitterErrs, je)
	}
	// Derived elements and their errors by draws from the covariance.
	m := res.Model()
	derive := func(theta []float64) [][6]float64 {
		ks := m.Keplerians(theta)
		d := make([][6]float64, len(ks))
		for p, k := range ks {
			mm := math.NaN()
			if out.StarMass > 0 {
				if v, err := rvfit.MinimumMass(k.P, k.K, k.E, out.StarMass); err == nil {
					mm = v
				}
			}
			d[p] = [6]float64{k.P, k.K, k.E, math.Mod(k.Omega*180/math.Pi+360, 360), k.Tc(), mm}
		}
		return d
	}
	best := derive(res.Params)
	errs := make([][6]float64, np)
	for p := range errs {
		for q := range errs[p] {
			errs[p][q] = math.NaN()
		}
	}
	if len(res.Covariance) == len(res.Params) {
		errs = drawErrors(res, derive, best, dg.Provenance.Seed)
		out.Draws = 2000
	}
	for p := range best {
		b, e := best[p], errs[p]
		out.Planets = append(out.Planets, OrbitPlanet{P: b[0], PErr: e[0], K: b[1], KErr: e[1], E: b[2], EErr: e[2],
			OmegaDeg: b[3], OmErr: e[3], Tc: b[4], TcErr: e[4], MinMass: b[5], MMErr: e[5]})
	}
	return out
}

// drawErrors returns the half-width of the 16–84% interval of each derived
// quantity over 2000 draws from N(θ̂, Σ); angles are taken relative to the
// best value (wrapped to ±180°) and Tc relative to the best Tc modulo P.
func drawErrors(res *rvfit.FitResult, derive func([]float64) [][6]float64, best [][6]float64, seed uint64) [][6]float64 {
	// Parameters held at a prior bound (error zero) stay at their MAP;
	// the others are drawn from their block of the covariance.
	n := len(res.Params)
	var free []int
	for i := 0; i < n; i++ {
		if i < len(res.Errors) && res.Errors[i] > 0 && isFinite(res.Errors[i]) {
			free = append(free, i)
		}
	}
	out := make([][6]float64, len(best))
	for p := range out {
		for q := range out[p] {
			out[p][q] = math.NaN()
		}
	}
	if len(free) == 0 {
		return out
	}
	cov := mat.NewSymDense(len(free), nil)
	for a, i := range free {
		for b := a; b < len(free); b++ {
			cov.SetSym(a, b, res.Covariance[i][free[b]])
		}
	}
	var chol mat.Cholesky
	if !chol.Factorize(cov) {
		return out
	}
	var L mat.TriDense
	chol.LTo(&L)
	rng := rand.New(rand.NewPCG(seed, 0x0b17))
	const draws = 2000
	samples := make([][][6]float64, 0, draws)
	z := make([]float64, len(free))
	theta := make([]float64, n)
	for d := 0; d < draws; d++ {
		for i := range z {
			z[i] = rng.NormFloat64()
		}
		copy(theta, res.Params)
		for a, i := range free {
			v := res.Params[i]
			for b := 0; b <= a; b++ {
				v += L.At(a, b) * z[b]
			}
			theta[i] = v
		}
		if m := res.Model(); math.IsInf(m.LogPrior(theta), -1) {
			continue // outside the support (e ≥ 1, K < 0...)
		}
		samples = append(samples, derive(theta))
	}
	if len(samples) < draws/4 {
		return out
	}
	// A derived quantity that moves with a parameter the data leave
	// unconstrained (no error, not at a bound: √e cos ω and √e sin ω of
	// a circular orbit) has no error either; the draws hold that
	// parameter fixed and would show too small a spread.
	depends := make([][6]bool, len(best))
	for j := 0; j < n; j++ {
		if slices.Contains(free, j) || (j < len(res.AtBound) && res.AtBound[j] != "") {
			continue
		}
		copy(theta, res.Params)
		theta[j] += 1e-4 * (math.Abs(theta[j]) + 1)
		moved := derive(theta)
		for p := range best {
			for q := 0; q < 6; q++ {
				if d := moved[p][q] - best[p][q]; !(math.Abs(d) <= 1e-12*(math.Abs(best[p][q])+1)) {
					depends[p][q] = true
				}
			}
		}
	}
	col := make([]float64, len(samples))
	for p := range best {
		for q := 0; q < 6; q++ {
			for i, s := range samples {
				v := s[p][q]
				switch q {
				case 3:
					v = math.Remainder(v-best[p][3], 360)
				case 4:
					v = math.Remainder(v-best[p][4], best[p][0])
				}
				col[i] = v
			}
			sort.Float64s(col)
			lo, hi := col[len(col)*16/100], col[len(col)*84/100]
			if isFinite(lo) && isFinite(hi) && !depends[p][q] {
				out[p][q] = (hi - lo) / 2
			}
		}
	}
	return out
}

// activityRow is one line of the activity-model table.
type activityRow struct {
	Name, Value, Note string
}

// activityModel describes what the diagnosis models as activity: the
// activity-like signals' sinusoids (joint fit) and the GP activity model
// of the model comparison, with errors where they were estimated.
func activityModel(dg *Diagnosis, insts []string) []activityRow {
	var rows []activityRow
	for k, sg := range dg.Signals {
		if sg.Verdict != ActivityLike {
			continue
		}
		rows = append(rows, activityRow{fmt.Sprintf("S%d sinusoid: period (d)", k+1), fmtSig(float64(sg.Period), 6), "from the periodogram peak (refined)"},
			activityRow{fmt.Sprintf("S%d sinusoid: semi-amplitude (m/s)", k+1), fmtValErr(float64(sg.Amplitude), float64(sg.AmplitudeErr)), "joint fit of every signal's sinusoid and the offsets"})
	}
	if dg.details == nil {
		return rows
	}
	// The multi-output GP of the whole-model comparison, when it ran: the
	// model the evidence used, with Laplace errors.
	for k := range dg.details.signals {
		w := dg.details.signals[k].multi
		if w == nil {
			continue
		}
		rows = append(rows, activityRow{"GP model", "multi-output", fmt.Sprintf("RVs and indicators share one latent activity process; fitted with S%d's sinusoid; ln L = %s; parameters in natural units", k+1, fmtSig(w.LogLikelihood, 6))})
		for i, name := range w.Names {
			if i >= len(w.Params) {
				break
			}
			e := math.NaN()
			if i < len(w.Errors) {
				e = w.Errors[i]
			}
			val, note := fmtValErr(w.Params[i], e), "Laplace error"
			switch {
			case i < len(w.AtBound) && w.AtBound[i] != "":
				val, note = fmtSig(w.Params[i], 3), "at the "+w.AtBound[i]+" of its prior: no error"
				if math.Abs(w.Params[i]) < 1e-6 {
					val = "0"
				}
			case !(e > 0):
				val, note = fmtSig(w.Params[i], 3), "error not estimated"
			}
			rows = append(rows, activityRow{VisibleText(name), val, note})
		}
		return rows
	}
	for k := range dg.details.signals {
		det := &dg.details.signals[k]
		r := det.gpFit
		if det.gp == nil || r == nil || !r.ok || len(r.theta) < gpKernelParams {
			continue
		}
		th := r.theta
		rows = append(rows,
			activityRow{"GP amplitude (m/s)", fmtSig(math.Exp(th[0]), 3), fmt.Sprintf("fitted with S%d's sinusoid; error not estimated", k+1)},
			activityRow{"GP rotation period (d)", fmtValErr(r.period, r.periodE), "error from the posterior's curvature"},
			activityRow{"GP quality factor of the first oscillator", fmtSig(math.Exp(th[2]), 3), "error not estimated"},
			activityRow{"GP quality-factor difference", fmtSig(math.Exp(th[3]), 3), "error not estimated"},
			activityRow{"GP fraction in the half-period oscillator", fmtSig(1/(1+math.Exp(-th[4])), 3), "error not estimated"})
		for j := gpKernelParams; j < len(th) && j-gpKernelParams < len(insts); j++ {
			rows = append(rows, activityRow{"GP jitter, " + VisibleText(insts[j-gpKernelParams]) + " (m/s)", fmtSig(math.Exp(th[j]), 3), "error not estimated"})
		}
		break // one GP model is shown: the first signal's
	}
	return rows
}
