package starsim

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestScheduleNightly checks the nightly plan: visits at the same sidereal
// time (every gap a whole number of sidereal days, to the jitter), one per
// night at most, no visit outside the seasons, a clear fraction near the
// one asked for, and instruments used only in their periods.
func TestScheduleNightly(t *testing.T) {
	o := Observing{Start: 2460000.3, End: 2460000.3 + 3*365.25, SeasonLength: 200, ClearFraction: 0.6,
		WeatherPersistence: 0.7, TimeJitter: 0.01}
	ins := []Instrument{{Name: "A", Weight: 1, To: 2460500}, {Name: "B", Weight: 2, From: 2460400}}
	v := schedule(&o, ins, rand.New(rand.NewPCG(1, 1)))
	nights := 0.0
	for n := 0; ; n++ {
		slot := o.Start + float64(n)*SiderealDay
		if slot > o.End {
			break
		}
		if math.Mod(slot-o.Start, 365.25) < o.SeasonLength {
			nights++
		}
	}
	// Markov weather: the count of clear nights scatters more than a binomial;
	// 0.6 ± 0.05 over ~600 nights is a loose bound.
	if f := float64(len(v)) / nights; math.Abs(f-0.6) > 0.05 {
		t.Errorf("clear fraction %.3f over %v season nights, want 0.6 ± 0.05", f, nights)
	}
	for i, x := range v {
		k := (x.time - o.Start) / SiderealDay
		if d := math.Abs(k - math.Round(k)); d*SiderealDay > 6*o.TimeJitter {
			t.Fatalf("visit %d at %v is %.3f d from a sidereal slot", i, x.time, d*SiderealDay)
		}
		if math.Mod(x.time-o.Start+0.1, 365.25) > o.SeasonLength+0.2 {
			t.Errorf("visit %d at %v outside the season", i, x.time)
		}
		if i > 0 && x.time-v[i-1].time < 0.9 {
			t.Errorf("visits %d and %d on the same night", i-1, i)
		}
		if !inUse(&ins[x.inst], x.time) {
			t.Errorf("visit %d with %s outside its period", i, ins[x.inst].Name)
		}
	}
	// Runs of cloud: with persistence 0.7 the mean cloudy run is 1/(1 − 0.7)
	// ≈ 3.3 nights, so some gaps between visits exceed 5 nights in a season.
	long := 0
	for i := 1; i < len(v); i++ {
		if g := v[i].time - v[i-1].time; g > 5 && g < 100 {
			long++
		}
	}
	if long < 5 {
		t.Errorf("%d weather gaps longer than 5 nights, want several", long)
	}
}

func TestScheduleUniform(t *testing.T) {
	o := Observing{Start: 10, End: 20, Step: 0.5, MaxEpochs: 15}
	v := schedule(&o, []Instrument{{Name: "A", Weight: 1}}, rand.New(rand.NewPCG(1, 1)))
	if len(v) != 15 || v[0].time != 10 || v[14].time != 17 {
		t.Errorf("uniform plan: %d visits from %v to %v, want 15 from 10 to 17", len(v), v[0].time, v[len(v)-1].time)
	}
}

// TestScheduleNights checks the night-constrained plan: every visit inside
// its night and within the hour-angle limit of the transit, one per night,
// and seasons that follow from the sky: for a 9 h night and ±4 h of hour
// angle the transit is reachable while it lies within ±8.5 h of midnight,
// 17 h of the 23.93 h sidereal drift a year, so about 259 days a year are
// observable [computed from the 3.94 min/day drift].
func TestScheduleNights(t *testing.T) {
	o := Observing{Start: 2460000.3, End: 2460000.3 + 3*365.25, SeasonLength: 366, ClearFraction: 1,
		TimeJitter: 0.01, NightLength: 9, Midnight: 0.694, MaxHourAngle: 4}
	v := schedule(&o, []Instrument{{Name: "A", Weight: 1}}, rand.New(rand.NewPCG(1, 1)))
	half := 4.5 / 24
	for i, x := range v {
		mid := math.Floor(x.time-o.Midnight+0.5) + o.Midnight
		if math.Abs(x.time-mid) > half+1e-12 {
			t.Fatalf("visit %d at %.4f outside the night around %.4f", i, x.time, mid)
		}
		k := math.Round((x.time - o.Start) / SiderealDay)
		transit := o.Start + k*SiderealDay
		if math.Abs(x.time-transit) > 4.0/24+6*o.TimeJitter {
			t.Fatalf("visit %d at hour angle %.2f h", i, 24*(x.time-transit))
		}
		if i > 0 && x.time-v[i-1].time < 0.5 {
			t.Fatalf("visits %d and %d in one night", i-1, i)
		}
	}
	perYear := float64(len(v)) / 3
	if math.Abs(perYear-259) > 10 {
		t.Errorf("%.1f visits a year on clear nights, want about 259", perYear)
	}
	gaps := 0
	for i := 1; i < len(v); i++ {
		if v[i].time-v[i-1].time > 60 {
			gaps++
		}
	}
	if gaps < 2 {
		t.Errorf("%d seasonal gaps over 3 years, want 2 or 3", gaps)
	}
}
