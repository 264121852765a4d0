package starsim

import (
	"math"
	"math/rand/v2"
)

// activeRegion is one region with its history, angles in radians, times in
// days (BJD_TDB).
type activeRegion struct {
	lat      float64
	phiRef   float64 // angle from the central meridian at tRef
	tRef     float64
	omega    float64 // rotation rate at its latitude, rad/day
	start    float64
	grow     float64
	decay    float64
	spot     float64 // peak spot area in units of πR²
	fac      float64 // peak facular area, same unit
	constant bool
}

// areas returns the spot and facular areas at time t.
func (r *activeRegion) areas(t float64) (spot, fac float64) {
	if r.constant {
		if t < r.start {
			return 0, 0
		}
		return r.spot, r.fac
	}
	var f float64
	switch {
	case t < r.start:
		return 0, 0
	case t < r.start+r.grow:
		f = (t - r.start) / r.grow
	case r.decay > 0 && t < r.start+r.grow+r.decay:
		f = 1 - (t-r.start-r.grow)/r.decay
	default:
		return 0, 0
	}
	return f * r.spot, f * r.fac
}

// centre returns the unit vector of the region's centre at time t in the
// observer's frame (x right, y up along the projected axis, z towards the
// observer):
//
//	x = cos θ sin φ
//	y = −cos θ cos φ cos i + sin θ sin i
//	z =  cos θ cos φ sin i + sin θ cos i
func (r *activeRegion) centre(t, sinI, cosI float64) (x, y, z float64) {
	phi := r.phiRef + r.omega*(t-r.tRef)
	sp, cp := math.Sincos(phi)
	st, ct := math.Sincos(r.lat)
	return ct * sp, -ct*cp*cosI + st*sinI, ct*cp*sinI + st*cosI
}

// omegaAt returns the angular rotation rate (rad/day) at latitude lat:
// Ω(θ) = Ω_eq (1 − α sin²θ).
func omegaAt(st *Star, lat float64) float64 {
	s := math.Sin(lat)
	return 2 * math.Pi / st.RotationPeriod * (1 - st.DiffRotation*s*s)
}

// buildRegions returns the hand-placed regions of sc followed by random
// ones emerging over [start − longest lifetime, end], every draw from rng.
func buildRegions(sc *Scenario, rng *rand.Rand) []activeRegion {
	st, a, obs := &sc.Star, &sc.Activity, &sc.Observing
	deg := math.Pi / 180
	var out []activeRegion
	for _, r := range a.Regions {
		lat := r.Lat * deg
		ar := activeRegion{
			lat: lat, phiRef: r.Lon * deg, tRef: r.Start, omega: omegaAt(st, lat),
			start: r.Start, grow: r.Grow, decay: r.Decay, spot: r.SpotArea, fac: r.FaculaArea,
		}
		if r.Grow == 0 && r.Decay == 0 {
			// Constant size from Start on (from the beginning when Start is 0).
			ar.constant = true
			if r.Start == 0 {
				ar.start = math.Inf(-1)
				ar.tRef = obs.Start
			}
		}
		out = append(out, ar)
	}
	if a.EmergenceRate <= 0 {
		return out
	}
	life := a.Lifetime * st.RotationPeriod
	t := obs.Start - 1.5*life
	sinLo, sinHi := math.Sin(a.LatMin*deg), math.Sin(a.LatMax*deg)
	omegaEq := 2 * math.Pi / st.RotationPeriod
	for {
		t += rng.ExpFloat64() / a.EmergenceRate
		if t > obs.End {
			break
		}
		L := life * (0.5 + rng.Float64())
		lat := math.Asin(sinLo + (sinHi-sinLo)*rng.Float64())
		if rng.Float64() < 0.5 {
			lat = -lat
		}
		var lon float64
		if n := a.ActiveLongitudes; n > 0 {
			lon = 2*math.Pi*float64(rng.IntN(n))/float64(n) + rng.NormFloat64()*a.LongitudeSpread*deg
		} else {
			lon = 2 * math.Pi * rng.Float64()
		}
		spot := math.Min(a.SpotArea*rng.ExpFloat64(), 0.2)
		out = append(out, activeRegion{
			lat: lat,
			// Longitudes are drawn in the frame turning with the equator, so
			// active longitudes persist; the region then turns at its own rate.
			phiRef: lon + omegaEq*(t-obs.Start),
			tRef:   t,
			omega:  omegaAt(st, lat),
			start:  t,
			grow:   a.GrowthFraction * L,
			decay:  (1 - a.GrowthFraction) * L,
			spot:   spot,
			fac:    math.Min(a.FaculaRatio*spot, 1),
		})
	}
	return out
}

// coverage holds, for the cells active regions touch at one epoch, the
// fractions of the cell covered by spot and by facula.
type coverage struct {
	cells []int32
	spot  []float64
	fac   []float64
	// dense accumulators, zero outside cells
	sAcc, fAcc []float64
	// SpotFill and FacFill are the covered fractions of the projected disk.
	spotFill, facFill float64
}

// cover computes the coverage of the disk by regs at time t into cv.
func (d *disk) cover(cv *coverage, regs []activeRegion, t float64) {
	nc := len(d.x)
	if len(cv.sAcc) != nc {
		cv.sAcc = make([]float64, nc)
		cv.fAcc = make([]float64, nc)
	}
	for _, c := range cv.cells {
		cv.sAcc[c], cv.fAcc[c] = 0, 0
	}
	cv.cells = cv.cells[:0]
	cv.spot, cv.fac = cv.spot[:0], cv.fac[:0]
	cv.spotFill, cv.facFill = 0, 0
	touch := func(c int32) {
		if cv.sAcc[c] == 0 && cv.fAcc[c] == 0 {
			cv.cells = append(cv.cells, c)
		}
	}
	for i := range regs {
		r := &regs[i]
		sa, fa := r.areas(t)
		if sa <= 0 && fa <= 0 {
			continue
		}
		cx, cy, cz := r.centre(t, d.sinI, d.cosI)
		// A cap of area f·πR² (2πR²(1 − cos ρ)) has angular radius
		// acos(1 − f/2).
		rhoS := math.Acos(1 - sa/2)
		rhoF := math.Acos(math.Max(-1, 1-(sa+fa)/2))
		// Edges are ramps one cell wide (narrower for tiny caps); the radius
		// is reduced so that the ramp keeps the cap's area: ∫ramp = πρ'² +
		// πw²/12 in the plane.
		w := math.Min(d.delta, rhoF)
		eff := func(rho float64) float64 { return math.Sqrt(math.Max(0, rho*rho-w*w/12)) }
		if sa > 0 {
			rhoS = eff(rhoS)
		}
		rhoF = eff(rhoF)
		reach := rhoF + w
		if cz < -math.Sin(math.Min(reach, math.Pi/2)) {
			continue // behind the star
		}
		ix0 := max(0, int((cx-reach+1)/d.delta))
		ix1 := min(d.n-1, int((cx+reach+1)/d.delta))
		iy0 := max(0, int((cy-reach+1)/d.delta))
		iy1 := min(d.n-1, int((cy+reach+1)/d.delta))
		cosReach := math.Cos(math.Min(reach, math.Pi))
		for iy := iy0; iy <= iy1; iy++ {
			for ix := ix0; ix <= ix1; ix++ {
				c := d.index[iy*d.n+ix]
				if c < 0 {
					continue
				}
				cosd := d.x[c]*cx + d.y[c]*cy + d.mu[c]*cz
				if cosd < cosReach {
					continue
				}
				dist := math.Acos(math.Min(1, cosd))
				var s float64
				if sa > 0 {
					s = ramp((rhoS - dist) / w)
				}
				f := ramp((rhoF-dist)/w) - s
				if s <= 0 && f <= 0 {
					continue
				}
				touch(c)
				cv.sAcc[c] += s
				cv.fAcc[c] += f
			}
		}
	}
	for _, c := range cv.cells {
		s := math.Min(1, cv.sAcc[c])
		f := math.Min(1-s, cv.fAcc[c])
		cv.spot = append(cv.spot, s)
		cv.fac = append(cv.fac, f)
		cv.spotFill += s * d.area[c]
		cv.facFill += f * d.area[c]
	}
	cv.spotFill /= math.Pi
	cv.facFill /= math.Pi
}

func ramp(x float64) float64 { return math.Max(0, math.Min(1, x+0.5)) }

// contrasts are the intensity ratios of active cells at one wavelength.
type contrasts struct {
	spot   float64 // I_spot/I_quiet
	facula float64 // c_f in 1 + c_f(1 − μ)
	supp   float64 // fraction of the convective blueshift suppressed
}

// histogram returns the disk's velocity histogram at one epoch (cells'
// limb-darkened weights deposited at their line-of-sight velocities) on grid
// g, starting from the quiet histogram quiet, and its total weight.
func (d *disk) histogram(dst, quiet []float64, g velGrid, cv *coverage, k contrasts) ([]float64, float64) {
	dst = append(dst[:0], quiet...)
	wsum := d.wsum
	for i, c := range cv.cells {
		s, f := cv.spot[i], cv.fac[i]
		w := d.w[c]
		vq := d.vrot[c] + d.vcb[c]
		va := d.vrot[c] + d.vcb[c]*(1-k.supp)
		ws := s * w * k.spot
		wf := f * w * (1 + k.facula*(1-d.mu[c]))
		g.deposit(dst, vq, -(s+f)*w)
		g.deposit(dst, va, ws+wf)
		wsum += ws + wf - (s+f)*w
	}
	return dst, wsum
}

// quietHistogram returns the histogram of the unspotted disk on grid g.
func (d *disk) quietHistogram(g velGrid) []float64 {
	H := make([]float64, g.len())
	for c := range d.x {
		g.deposit(H, d.vrot[c]+d.vcb[c], d.w[c])
	}
	return H
}
