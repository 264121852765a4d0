package starsim

import (
	"math"
	"math/rand/v2"
	"sort"
)

// SiderealDay is the sidereal day in mean solar days, 1/1.0027379057
// (docs/methods.md §0, [computed]).
const SiderealDay = 0.99726957

// visit is one planned observation.
type visit struct {
	time float64
	inst int
}

// schedule plans the visits of o with instruments ins, every draw from rng.
//
// With o.Step > 0 the visits are uniform, Start + k·Step. Otherwise there is
// at most one visit per night, at the same sidereal time as the first
// (Start + n sidereal days, plus a Gaussian jitter of TimeJitter), so that
// the one-day aliases of real data appear; seasons of SeasonLength days open
// every Julian year from Start; nights are clear or cloudy by a two-state
// Markov chain whose clear fraction is ClearFraction and whose probability
// that cloud follows cloud is WeatherPersistence. With NightLength > 0 the
// slot is the star's transit and the visit is kept inside the night, at the
// transit or at the night's nearer end within MaxHourAngle of it. Each visit goes to one of
// the instruments in use that night, drawn by weight.
func schedule(o *Observing, ins []Instrument, rng *rand.Rand) []visit {
	var out []visit
	pick := func(t float64) int {
		var tot float64
		for _, in := range ins {
			if inUse(&in, t) {
				tot += in.Weight
			}
		}
		if tot == 0 {
			return -1
		}
		u := rng.Float64() * tot
		last := -1
		for i := range ins {
			if !inUse(&ins[i], t) {
				continue
			}
			last = i
			if u < ins[i].Weight {
				return i
			}
			u -= ins[i].Weight
		}
		return last
	}
	full := func() bool { return o.MaxEpochs > 0 && len(out) >= o.MaxEpochs }
	if o.Step > 0 {
		for k := 0; ; k++ {
			t := o.Start + float64(k)*o.Step
			if t > o.End || full() {
				break
			}
			if i := pick(t); i >= 0 {
				out = append(out, visit{t, i})
			}
		}
		return out
	}
	c, p := o.ClearFraction, o.WeatherPersistence
	pCloudAfterClear := 0.0
	if c < 1 {
		pCloudAfterClear = (1 - c) * (1 - p) / c
	}
	clear := rng.Float64() < c
	for n := 0; ; n++ {
		slot := o.Start + float64(n)*SiderealDay
		if slot > o.End || full() {
			break
		}
		// Weather evolves every night, observed or not.
		if n > 0 {
			if clear {
				clear = rng.Float64() >= pCloudAfterClear
			} else {
				clear = rng.Float64() >= p
			}
		}
		jit := rng.NormFloat64() * o.TimeJitter
		if !clear || math.Mod(slot-o.Start, 365.25) >= o.SeasonLength {
			continue
		}
		t := slot + jit
		if o.NightLength > 0 {
			// The slot is the transit; observe in the nearest night.
			mid := math.Floor(slot-o.Midnight+0.5) + o.Midnight
			lo, hi := mid-o.NightLength/48, mid+o.NightLength/48
			obs := math.Max(lo, math.Min(hi, slot))
			if math.Abs(obs-slot) > o.MaxHourAngle/24 {
				continue // too far from the meridian: out of season tonight
			}
			t = math.Max(lo, math.Min(hi, obs+jit))
		}
		if t < o.Start || t > o.End {
			continue
		}
		if i := pick(t); i >= 0 {
			out = append(out, visit{t, i})
		}
	}
	// A large jitter could swap neighbours.
	sort.SliceStable(out, func(a, b int) bool { return out[a].time < out[b].time })
	return out
}

// inUse reports whether instrument in observes at time t.
func inUse(in *Instrument, t float64) bool {
	return (in.From == 0 || t >= in.From) && (in.To == 0 || t <= in.To)
}
