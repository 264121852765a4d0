package activity

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"spotsift/indicators"
	"spotsift/rvfit"
)

// A second activity generator, independent of activity/starsim: instead of
// integrating spotted line profiles over a disk, it follows evolving spots
// on a sphere, makes the light curve Ψ(t) they cause, and turns it into
// radial velocities by the FF' method of Aigrain, Pont & Zucker (2012,
// MNRAS 419, 3147; from memory):
//
//	ΔRV_rot(t) = −Ψ(t) Ψ'(t) R★ / f        (rotation of the spotted disk)
//	ΔRV_c(t)   = κ δV_c (1 − Ψ(t)) / f     (suppressed convective blueshift)
//
// with f the relative flux drop of a spot at disk centre, κ the ratio of
// facular to spot area and δV_c the convective blueshift suppressed in
// faculae. (The paper writes the convective term with F²; the linear form
// used here keeps it proportional to the covered area, a deliberate
// choice.) The indicators are derived from the same spots: the S-index
// from the visible facular area plus the magnetic cycle, about a mean level
// that follows the rotation and colour (ffMeanS), the FWHM from the
// convective term, the bisector span from the rotational term seen with a
// small lag. Spots live from days to many rotations, rotation runs from 2
// to 150 days (M dwarfs included), a magnetic cycle modulates emergence,
// sampling is seasonal and sparse, one to three instruments carry offsets,
// planets are eccentric and up to three. Nothing here is shared with the
// simulator, so verdicts calibrated on one are checked on the other.

// ffKind chooses what a generated star carries.
type ffKind int

const (
	ffActivity   ffKind = iota // activity only
	ffPlanets                  // one to three planets around an active star
	ffAtRotation               // one planet exactly at P_rot or P_rot/2
)

// ffSpot is one evolving spot.
type ffSpot struct {
	lat, lon, peak, tPeak, width, omega float64
}

// ffStar is the drawn star.
type ffStar struct {
	prot, inc, alpha, rStar, contrast, kappa, dvc float64
	cycleP, cycleA, cyclePh                       float64
	lag                                           float64
	spots                                         []ffSpot
}

// flux returns Ψ(t), the normalised flux (1 without spots), and the
// visible facular area proxy.
func (s *ffStar) flux(t float64) (psi, fac float64) {
	si, ci := math.Sincos(s.inc)
	deficit := 0.0
	for _, sp := range s.spots {
		dt := t - sp.tPeak
		if math.Abs(dt) > 4*sp.width {
			continue
		}
		a := sp.peak * math.Exp(-0.5*dt*dt/(sp.width*sp.width))
		sl, cl := math.Sincos(sp.lat)
		mu := si*cl*math.Cos(sp.lon+sp.omega*t) + ci*sl
		if mu <= 0 {
			continue
		}
		ld := 1 - 0.6*(1-mu) // linear limb darkening, u = 0.6 (common practice)
		deficit += s.contrast * a * mu * ld / (1 - 0.6/3)
		fac += s.kappa * a * math.Sqrt(mu)
	}
	return 1 - deficit, fac
}

// cycle returns the magnetic cycle's phase term in [−1, 1].
func (s *ffStar) cycle(t float64) float64 {
	return math.Sin(2*math.Pi*t/s.cycleP + s.cyclePh)
}

// ffGenerate draws one star of the given kind from seed and returns its
// series, the star file an observer would have (colour only, and only
// sometimes) and the truth of any judged period.
func ffGenerate(seed uint64, kind ffKind) (*rvfit.Series, *Star, func(float64) string, error) {
	rng := rand.New(rand.NewPCG(seed, 0xff11))
	logU := func(lo, hi float64) float64 { return math.Exp(math.Log(lo) + rng.Float64()*math.Log(hi/lo)) }
	const t0 = 2458000.0
	st := &ffStar{prot: logU(2, 150), inc: math.Acos(rng.Float64()), alpha: 0.2 * rng.Float64(),
		contrast: 0.3 + 0.5*rng.Float64(), kappa: 10 * rng.Float64(), dvc: 150 + 250*rng.Float64(),
		cycleP: 365.25 * (2 + 8*rng.Float64()), cycleA: 0.8 * rng.Float64(), cyclePh: 2 * math.Pi * rng.Float64()}
	st.inc = math.Max(st.inc, 0.2)
	rsun := 0.7 + 0.5*rng.Float64()
	if st.prot > 40 {
		rsun = 0.2 + 0.4*rng.Float64() // slow rotators here are M dwarfs
	}
	st.rStar = rsun * 6.957e8
	// The star's colour goes with its radius, and its chromospheric level
	// with its rotation and colour: the mean S-index puts log R'HK where
	// the activity–rotation relation of Noyes et al. (1984) puts a star of
	// this colour and rotation, with the relation's own scatter (0.1 dex in
	// period, the figure RelationEstimates assigns; from memory) drawn from
	// a stream of its own, so that every other draw of the seed is kept.
	bv := 0.6 + 0.3*(1.2-rsun)/0.5
	if rsun < 0.6 {
		bv = 1.4
	}
	sBase := ffMeanS(bv, st.prot*math.Pow(10, 0.1*rand.New(rand.NewPCG(seed, 0x5157)).NormFloat64()))
	st.lag = 0.1 * st.prot * rng.Float64()
	// Sampling: one to five seasons of 100–240 nights, 40–200 visits,
	// one to three instruments in successive eras.
	nseason := 1 + rng.IntN(5)
	seasonLen := 100 + 140*rng.Float64()
	nvis := 40 + rng.IntN(161)
	var times []float64
	for len(times) < nvis {
		k := rng.IntN(nseason)
		night := math.Floor(rng.Float64() * seasonLen)
		times = append(times, t0+365.25*float64(k)+night+0.1*float64(k)+0.04*rng.NormFloat64())
	}
	sortFloats(times)
	for i := 1; i < len(times); i++ {
		if times[i]-times[i-1] < 0.01 {
			times[i] = times[i-1] + 0.01
		}
	}
	T := times[len(times)-1] - times[0]
	if T < 30 {
		return nil, nil, nil, fmt.Errorf("baseline %g d too short", T)
	}
	ninst := 1 + rng.IntN(3)
	type instr struct {
		err, jit, off float64
	}
	ins := make([]instr, ninst)
	for k := range ins {
		ins[k] = instr{err: 0.5 + 2.5*rng.Float64(), jit: 1.5 * rng.Float64(), off: 60 * (rng.Float64() - 0.5)}
	}
	eras := make([]float64, ninst+1)
	for k := range eras {
		eras[k] = times[0] + T*float64(k)/float64(ninst)
	}
	// Spots: Poisson emergence over the baseline and two lifetimes before,
	// modulated by the cycle; lifetimes from 3 days to 10 rotations.
	tauMean := logU(3, 10*st.prot)
	rate := logU(0.02, 0.4)
	areaMean := logU(2e-4, 4e-3)
	activeLon := rng.Float64() < 0.3
	lon0 := 2 * math.Pi * rng.Float64()
	for t := times[0] - 3*tauMean; t < times[len(times)-1]+tauMean; {
		t += -math.Log(1-rng.Float64()) / rate
		if rng.Float64() > (1+st.cycleA*st.cycle(t))/(1+st.cycleA) {
			continue
		}
		lat := (5 + 35*rng.Float64()) * math.Pi / 180
		if rng.Float64() < 0.5 {
			lat = -lat
		}
		lon := 2 * math.Pi * rng.Float64()
		if activeLon {
			lon = lon0 + math.Pi*float64(rng.IntN(2)) + 0.3*rng.NormFloat64()
		}
		sl := math.Sin(lat)
		st.spots = append(st.spots, ffSpot{lat: lat, lon: lon, peak: -math.Log(1-rng.Float64()) * areaMean, tPeak: t,
			width: 0.5 * tauMean * (0.5 + rng.Float64()), omega: 2 * math.Pi / st.prot * (1 - st.alpha*sl*sl)})
	}
	// Indicator noise: sometimes an indicator is too noisy to show anything.
	sErr := logU(0.0005, 0.01)
	fwErr := logU(1, 30)
	bisErr := logU(0.5, 15)
	cS := logU(0.5, 5)    // S-index per unit facular area
	cFW := logU(0.5, 3)   // FWHM per m/s of convective RV
	cBIS := -logU(0.2, 1) // BIS per m/s of rotational RV
	s := &rvfit.Series{Name: fmt.Sprintf("ff-%d", seed)}
	sIdx := rvfit.Indicator{Name: "s_index", Unit: "", Value: make([]float64, len(times)), Err: make([]float64, len(times))}
	fwhm := rvfit.Indicator{Name: "fwhm", Unit: "m/s", Value: make([]float64, len(times)), Err: make([]float64, len(times))}
	bis := rvfit.Indicator{Name: "bis", Unit: "m/s", Value: make([]float64, len(times)), Err: make([]float64, len(times))}
	actRV := make([]float64, len(times))
	for i, t := range times {
		const h = 0.02
		p0, fac := st.flux(t)
		pp, _ := st.flux(t + h)
		pm, _ := st.flux(t - h)
		dpsi := (pp - pm) / (2 * h) / 86400 // per second
		rvRot := -p0 * dpsi * st.rStar / st.contrast
		rvC := st.kappa * st.dvc * (1 - p0) / st.contrast
		actRV[i] = rvRot + rvC
		pl, _ := st.flux(t - st.lag - h)
		pl2, _ := st.flux(t - st.lag + h)
		rvRotLag := -p0 * (pl2 - pl) / (2 * h) / 86400 * st.rStar / st.contrast
		cyc := st.cycleA * st.cycle(t)
		sIdx.Value[i] = sBase + cS*fac + 0.05*cyc + sErr*rng.NormFloat64()
		sIdx.Err[i] = sErr
		fwhm.Value[i] = 6000 + cFW*rvC + 5*cyc + fwErr*rng.NormFloat64()
		fwhm.Err[i] = fwErr
		bis.Value[i] = cBIS*rvRotLag + bisErr*rng.NormFloat64()
		bis.Err[i] = bisErr
	}
	// Planets, scaled so that K/σ_K spans 3–30 (σ_K = sqrt(2/N) σ_total).
	sd := stddev(actRV)
	meanErr := 0.0
	for _, in := range ins {
		meanErr += in.err*in.err + in.jit*in.jit
	}
	sigTot := math.Sqrt(meanErr/float64(ninst) + sd*sd)
	sigK := math.Sqrt(2/float64(len(times))) * sigTot
	type planet struct{ p, k, e, w, tp float64 }
	var pls []planet
	switch kind {
	case ffPlanets:
		for n := 1 + rng.IntN(3); len(pls) < n; {
			p := logU(1.2, math.Min(1000, T))
			e := 0.0
			if rng.Float64() < 0.6 {
				e = 0.5 * rng.Float64() * rng.Float64()
			}
			pls = append(pls, planet{p, logU(3, 30) * sigK, e, 2 * math.Pi * rng.Float64(), times[0] + p*rng.Float64()})
		}
	case ffAtRotation:
		p := st.prot
		if rng.Float64() < 0.5 {
			p /= 2
		}
		pls = append(pls, planet{p, logU(5, 20) * sigK, 0, 0, times[0] + p*rng.Float64()})
	}
	for i, t := range times {
		k := 0
		for k+1 < ninst && t >= eras[k+1] {
			k++
		}
		in := ins[k]
		rv := actRV[i] + in.off + math.Hypot(in.err, in.jit)*rng.NormFloat64()
		for _, pl := range pls {
			M := 2 * math.Pi * (t - pl.tp) / pl.p
			nu := rvfit.TrueAnomaly(rvfit.EccentricAnomaly(M, pl.e), pl.e)
			rv += pl.k * (math.Cos(nu+pl.w) + pl.e*math.Cos(pl.w))
		}
		s.Time = append(s.Time, t)
		s.RV = append(s.RV, rv)
		s.RVErr = append(s.RVErr, in.err)
		s.Instrument = append(s.Instrument, fmt.Sprintf("INST-%d", k+1))
	}
	s.Indicators = []rvfit.Indicator{sIdx, fwhm, bis}
	var star *Star
	if rng.Float64() < 0.5 {
		// What an observer knows: the colour.
		star = &Star{Name: s.Name, BV: bv}
	}
	if rng.Float64() < 0.4 {
		// Sometimes the rotation period is known from photometry, to
		// about 10 %.
		if star == nil {
			star = &Star{Name: s.Name}
		}
		star.RotationPeriod = st.prot * (1 + 0.05*rng.NormFloat64())
		star.RotationPeriodErr = 0.1 * st.prot
	}
	res := 1.5 / T
	const sidereal, year = 1.0027379, 1 / 365.25
	truth := func(p float64) string {
		f := 1 / p
		for _, pl := range pls {
			fp := 1 / pl.p
			if math.Abs(f-fp) <= res {
				if kind == ffAtRotation {
					return "planet at rotation"
				}
				// Near a harmonic of the rotation (within the resolution or
				// a tenth of the rotation frequency of a band n/P_rot) a
				// planet cannot be told from activity by its period: it is
				// left out of the rate of detectable planets.
				// Spots reach 40° of latitude, so the star's rotation
				// frequencies span Ω_eq (1 − α sin²40°) to Ω_eq.
				s40 := math.Sin(40 * math.Pi / 180)
				if nearHarmonic(fp, st.prot, st.alpha*s40*s40, res) {
					return "planet near a harmonic"
				}
				if pl.k/sigK < 5 {
					return "planet (K/σ_K < 5)"
				}
				return "planet"
			}
		}
		for _, pl := range pls {
			fp := 1 / pl.p
			// Nightly sampling aliases by the sidereal and the solar day
			// alike (they differ by 1/year, more than the resolution
			// once the baseline passes about a year).
			for _, g := range []float64{math.Abs(fp - sidereal), fp + sidereal, math.Abs(fp - 1), fp + 1, math.Abs(fp - year), fp + year, 2 * fp, 3 * fp} {
				if math.Abs(f-g) <= res {
					return "alias"
				}
			}
		}
		return "activity"
	}
	return s, star, truth, nil
}

// ffMeanS returns the Mount Wilson S-index of a star of colour bv whose
// log R'HK the relation of Noyes et al. (1984) maps onto the rotation
// period prot (RotationNoyes, decreasing in log R'HK), both found by
// bisection. Before, every FF' star had S = 0.2 whatever its rotation,
// and the relations' estimate of an FF' star's rotation was wrong by
// construction.
func ffMeanS(bv, prot float64) float64 {
	lo, hi := -6.5, -3.0
	for range 60 {
		mid := 0.5 * (lo + hi)
		if RotationNoyes(mid, bv) > prot {
			lo = mid
		} else {
			hi = mid
		}
	}
	lrhk := 0.5 * (lo + hi)
	sLo, sHi := 1e-3, 50.0
	for range 60 {
		mid := 0.5 * (sLo + sHi)
		v, _, err := indicators.LogRPrimeHK(mid, 0, indicators.RHKOptions{BV: bv, Extrapolate: true})
		if err != nil || v < lrhk {
			sLo = mid
		} else {
			sHi = mid
		}
	}
	return 0.5 * (sLo + sHi)
}

func sortFloats(v []float64) {
	for i := 1; i < len(v); i++ {
		for j := i; j > 0 && v[j] < v[j-1]; j-- {
			v[j], v[j-1] = v[j-1], v[j]
		}
	}
}

// ffCases are the calibration cases of the second generator.
func ffCases() []CalibrationCase {
	mk := func(name string, kind ffKind) CalibrationCase {
		return CalibrationCase{Name: name, Generate: func(seed uint64) (*rvfit.Series, *Star, func(float64) string, error) {
			// A draw whose baseline is too short is redrawn from the next
			// stream, so every seed gives a star.
			for k := uint64(0); ; k++ {
				s, st, tr, err := ffGenerate(seed*16+k, kind)
				if err == nil || k > 8 {
					return s, st, tr, err
				}
			}
		}}
	}
	return []CalibrationCase{
		mk("FF' activity only", ffActivity),
		mk("FF' planets around active stars", ffPlanets),
		mk("FF' planet at P_rot or P_rot/2", ffAtRotation),
	}
}

// TestFFMeanSFollowsRotation checks the FF' stars' mean S-index: turned
// into log R'HK and through the relation of Noyes et al. (1984), it gives
// back the rotation it was drawn for.
func TestFFMeanSFollowsRotation(t *testing.T) {
	for _, bv := range []float64{0.6, 0.75, 0.9, 1.4} {
		for _, p := range []float64{2, 10, 30, 150} {
			s := ffMeanS(bv, p)
			lr, _, err := indicators.LogRPrimeHK(s, 0, indicators.RHKOptions{BV: bv, Extrapolate: true})
			if err != nil {
				t.Fatalf("B−V %.2f, P_rot %g d: S = %.4g: %v", bv, p, s, err)
			}
			if got := RotationNoyes(lr, bv); math.Abs(got/p-1) > 0.01 {
				t.Errorf("B−V %.2f, P_rot %g d: S = %.4g, log R'HK = %.3f gives back %.4g d", bv, p, s, lr, got)
			}
			t.Logf("B−V %.2f  P_rot %5g d  S = %.4f  log R'HK = %.3f", bv, p, s, lr)
		}
	}
}
