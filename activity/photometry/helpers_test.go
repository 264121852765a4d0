package photometry

import (
	"math"
	"math/rand/v2"
)

// synth returns a light curve of n points over span days at times with
// gaps (a 1-day gap every 27 days, as between space-photometry orbits, and
// a 20% chunk of random outages), flux 1 + f(t) and white noise sigma.
func synth(n int, span, sigma float64, f func(t float64) float64, seed uint64) *LightCurve {
	rng := rand.New(rand.NewPCG(seed, 7))
	lc := &LightCurve{Name: "synthetic"}
	dt := span / float64(n)
	for i := 0; i < n; i++ {
		t := 1000 + float64(i)*dt
		if math.Mod(t-1000, 27) > 26 {
			continue
		}
		lc.Time = append(lc.Time, t)
		lc.Flux = append(lc.Flux, 1+f(t)+sigma*rng.NormFloat64())
		lc.Err = append(lc.Err, sigma)
	}
	// Random outages: runs of 50 points start with probability 0.005 per
	// point, about 20% of the points in all (50p/(1+50p)).
	out := &LightCurve{Name: lc.Name}
	for i := 0; i < len(lc.Time); {
		if rng.Float64() < 0.005 {
			i += 50
			continue
		}
		out.Time = append(out.Time, lc.Time[i])
		out.Flux = append(out.Flux, lc.Flux[i])
		out.Err = append(out.Err, lc.Err[i])
		i++
	}
	return out
}
