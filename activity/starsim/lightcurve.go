package starsim

import (
	"fmt"
	"math"
	"math/rand/v2"

	"spotsift/internal/worker"
)

// streamPhotometry is the random stream of the light curve's noise and
// outages.
const streamPhotometry = 5

// Photometry plans the light curve of a simulated star. The zero value (or
// nil) gives the defaults below.
type Photometry struct {
	// Cadence is the time between points in days; 0 means the larger of
	// 30 minutes and a span / 20000.
	Cadence float64
	// Noise is the white noise per point, relative flux; 0 means 5×10⁻⁴.
	Noise float64
	// Wavelength (Å) at which the spot and facular contrasts are taken; 0
	// means 6500 Å, the middle of a broad red band.
	Wavelength float64
	// SectorLength and SectorGap: continuous stretches of SectorLength days
	// separated by SectorGap days without data, as between a space
	// telescope's pointings; 0 means 27 d and 1 d.
	SectorLength, SectorGap float64
	// Outages is the fraction of points lost in runs of about half a day
	// (weather, safe modes); 0 means 0.1, negative none.
	Outages float64
	// Start and End bound the light curve (days); 0 means the scenario's
	// observing window. Within it the seasons of the RV observations
	// (Observing.SeasonLength) apply too.
	Start, End float64
}

func (p *Photometry) defaults(o *Observing) Photometry {
	var d Photometry
	if p != nil {
		d = *p
	}
	if d.Start == 0 {
		d.Start = o.Start
	}
	if d.End == 0 {
		d.End = o.End
	}
	if d.Cadence == 0 {
		d.Cadence = math.Max(1.0/48, (d.End-d.Start)/20000)
	}
	if d.Noise == 0 {
		d.Noise = 5e-4
	}
	if d.Wavelength == 0 {
		d.Wavelength = 6500
	}
	if d.SectorLength == 0 {
		d.SectorLength = 27
	}
	if d.SectorGap == 0 {
		d.SectorGap = 1
	}
	if d.Outages == 0 {
		d.Outages = 0.1
	}
	return d
}

// LightCurve is a simulated star's disk-integrated light curve.
type LightCurve struct {
	// Time in days; Flux the measured relative flux (the quiet star is 1)
	// and Err its uncertainty; TrueFlux the noise-free flux.
	Time, Flux, Err, TrueFlux []float64
	// Sector labels each point by its observing season ("season1", …),
	// each of which may carry its own offset.
	Sector []string
}

// LightCurve returns the disk-integrated flux of the simulated star — the
// same spotted and facular disk as the spectra, integrated over the disk
// with the contrasts at plan.Wavelength — sampled with sectors, seasons
// and outages, with white noise drawn from the result's seed.
func (r *Result) LightCurve(plan *Photometry) (*LightCurve, error) {
	s := r.s
	p := plan.defaults(&s.sc.Observing)
	if !(p.End > p.Start) || !(p.Cadence > 0) || !(p.Noise >= 0) || !(p.SectorLength > 0) || p.SectorGap < 0 || p.Outages >= 1 {
		return nil, fmt.Errorf("starsim: photometry plan: start %g, end %g, cadence %g d, noise %g, sectors of %g d with gaps of %g d, outages %g: out of range",
			p.Start, p.End, p.Cadence, p.Noise, p.SectorLength, p.SectorGap, p.Outages)
	}
	rng := rand.New(rand.NewPCG(r.Seed, streamPhotometry))
	season := s.sc.Observing.SeasonLength
	lc := &LightCurve{}
	// Outages: runs of half a day starting at a rate that loses the
	// fraction Outages of the time (f = rL/(1 + rL)).
	runLen := 0.5
	rate := 0.0
	if p.Outages > 0 {
		rate = p.Outages / (1 - p.Outages) / runLen * p.Cadence
	}
	var outUntil float64
	for t := p.Start; t <= p.End; t += p.Cadence {
		sec := math.Mod(t-p.Start, p.SectorLength+p.SectorGap)
		if sec >= p.SectorLength {
			continue
		}
		if season > 0 && season < 365.25 && math.Mod(t-s.sc.Observing.Start, 365.25) >= season {
			continue
		}
		if t < outUntil {
			continue
		}
		if rate > 0 && rng.Float64() < rate {
			outUntil = t + runLen*(0.5+rng.Float64())
			continue
		}
		lc.Time = append(lc.Time, t)
		// One label (one offset) per observing season: the gaps between
		// pointings keep the calibration, a new season may not.
		lc.Sector = append(lc.Sector, fmt.Sprintf("season%d", int((t-s.sc.Observing.Start)/365.25)+1))
	}
	if len(lc.Time) == 0 {
		return nil, fmt.Errorf("starsim: photometry plan leaves no points between %g and %g", p.Start, p.End)
	}
	lc.TrueFlux = s.diskFlux(lc.Time, p.Wavelength, s.workers)
	lc.Flux = make([]float64, len(lc.Time))
	lc.Err = make([]float64, len(lc.Time))
	for i, f := range lc.TrueFlux {
		lc.Err[i] = p.Noise
		lc.Flux[i] = f
		if !s.noNoise {
			lc.Flux[i] += p.Noise * rng.NormFloat64()
		}
	}
	return lc, nil
}

// DiskFlux returns the noise-free disk-integrated flux (the quiet star is
// 1) at times t with the contrasts at wavelength lambda (Å).
func (r *Result) DiskFlux(t []float64, lambda float64) []float64 {
	return r.s.diskFlux(t, lambda, r.s.workers)
}

// diskFlux computes the relative flux at each time in parallel.
func (s *sim) diskFlux(t []float64, lambda float64, workers int) []float64 {
	k := s.contrastsAt(lambda)
	out := make([]float64, len(t))
	workers = max(1, min(workers, len(t)/256+1))
	var wg worker.Group
	chunk := (len(t) + workers - 1) / workers
	for w := 0; w < workers; w++ {
		lo, hi := w*chunk, min(len(t), (w+1)*chunk)
		if lo >= hi {
			break
		}
		wg.Go(func() {
			var cv coverage
			for i := lo; i < hi; i++ {
				s.d.cover(&cv, s.regs, t[i])
				out[i] = s.d.flux(&cv, k)
			}
		})
	}
	wg.Rethrow()
	return out
}

// flux returns the disk's flux relative to the quiet disk for coverage cv
// and contrasts k: the total weight of disk.histogram without the
// velocities.
func (d *disk) flux(cv *coverage, k contrasts) float64 {
	wsum := d.wsum
	for i, c := range cv.cells {
		s, f := cv.spot[i], cv.fac[i]
		w := d.w[c]
		wsum += s*w*k.spot + f*w*(1+k.facula*(1-d.mu[c])) - (s+f)*w
	}
	return wsum / d.wsum
}
