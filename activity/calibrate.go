package activity

import (
	"context"
	"fmt"
	"io"
	"math"
	"runtime"
	"sort"
	"sync"

	"spotsift/activity/starsim"
)

// CalibrationCase is one simulated scenario of the calibration with the
// truth each judged signal should be matched against.
type CalibrationCase struct {
	// Name labels the case in the confusion matrix.
	Name string
	// Scenario is simulated once per seed (tables only).
	Scenario *starsim.Scenario
	// Periods, when set, are judged as given periods (e.g. a weak signal
	// that prewhitening would not find); otherwise the periodogram peaks.
	Periods []float64
	// Star is the star file the diagnosis sees (nil: none).
	Star *Star
	// Truth classifies a judged period: "planet", "activity" or "noise"
	// (weak signals whose right answer is inconclusive).
	Truth func(period float64) string
}

// Confusion counts verdicts against truth.
type Confusion struct {
	// Counts[truth][verdict] over all judged signals.
	Counts map[string]map[string]int
	// PerCase[case][truth][verdict].
	PerCase map[string]map[string]map[string]int
	// Missed counts, per case, the seeds in which a true signal was not
	// among the judged ones.
	Missed map[string]int
	// Runs is the number of simulated stars.
	Runs int
}

func (c *Confusion) add(cs, truth, verdict string) {
	if c.Counts[truth] == nil {
		c.Counts[truth] = map[string]int{}
	}
	c.Counts[truth][verdict]++
	if c.PerCase[cs] == nil {
		c.PerCase[cs] = map[string]map[string]int{}
	}
	if c.PerCase[cs][truth] == nil {
		c.PerCase[cs][truth] = map[string]int{}
	}
	c.PerCase[cs][truth][verdict]++
}

// Fraction returns the share of signals of case cs with this truth that got
// the verdict.
func (c *Confusion) Fraction(cs, truth, verdict string) float64 {
	m := c.PerCase[cs][truth]
	n := 0
	for _, k := range m {
		n += k
	}
	if n == 0 {
		return math.NaN()
	}
	return float64(m[verdict]) / float64(n)
}

// Write prints the confusion matrix per case.
func (c *Confusion) Write(w io.Writer) {
	verdicts := []string{PlanetLike, ActivityLike, Inconclusive}
	fmt.Fprintf(w, "%-28s %-9s %6s %12s %14s %13s\n", "case", "truth", "n", PlanetLike, ActivityLike, Inconclusive)
	for _, cs := range sortedKeysOf(c.PerCase) {
		for _, truth := range sortedKeysOf(c.PerCase[cs]) {
			m := c.PerCase[cs][truth]
			n := 0
			for _, k := range m {
				n += k
			}
			fmt.Fprintf(w, "%-28s %-9s %6d", cs, truth, n)
			for i, v := range verdicts {
				width := []int{12, 14, 13}[i]
				fmt.Fprintf(w, " %*s", width, fmt.Sprintf("%d (%.0f%%)", m[v], 100*float64(m[v])/float64(n)))
			}
			fmt.Fprintln(w)
		}
		if c.Missed[cs] > 0 {
			fmt.Fprintf(w, "%-28s %d true signals were not found by the periodogram\n", cs, c.Missed[cs])
		}
	}
}

// sortedKeysOf returns the keys of m in order.
func sortedKeysOf[V any](m map[string]V) []string {
	k := make([]string, 0, len(m))
	for s := range m {
		k = append(k, s)
	}
	sort.Strings(k)
	return k
}

// Calibrate simulates every case with seeds 1…nseeds, diagnoses each star
// and counts verdicts against truth. Work items run on workers goroutines
// (0: all cores); the result does not depend on the number of workers.
// opts are the diagnosis options (Periods and Star come from each case).
func Calibrate(cases []CalibrationCase, nseeds, workers int, opts *Options) (*Confusion, error) {
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	type item struct {
		c    int
		seed uint64
	}
	type result struct {
		truths, verdicts []string
		missed           int
		err              error
	}
	var items []item
	for c := range cases {
		for s := 1; s <= nseeds; s++ {
			items = append(items, item{c, uint64(s)})
		}
	}
	results := make([]result, len(items))
	var wg sync.WaitGroup
	next := make(chan int)
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for k := range next {
				it := items[k]
				cs := cases[it.c]
				r := &results[k]
				sim, err := starsim.Simulate(cs.Scenario, it.seed, &starsim.Options{Workers: 1})
				if err != nil {
					r.err = fmt.Errorf("%s seed %d: %w", cs.Name, it.seed, err)
					continue
				}
				o := opts.withDefaults()
				o.Periods, o.Star, o.Seed = cs.Periods, cs.Star, it.seed
				dg, err := Diagnose(context.Background(), sim.Series(), &o)
				if err != nil {
					r.err = fmt.Errorf("%s seed %d: %w", cs.Name, it.seed, err)
					continue
				}
				found := map[string]bool{}
				for _, sg := range dg.Signals {
					truth := cs.Truth(float64(sg.Period))
					if truth == "" {
						continue
					}
					r.truths = append(r.truths, truth)
					r.verdicts = append(r.verdicts, sg.Verdict)
					found[truth] = true
				}
				for _, p := range cs.Scenario.Planets {
					if cs.Truth(p.Period) == "planet" && !found["planet"] {
						r.missed++
					}
				}
			}
		}()
	}
	for k := range items {
		next <- k
	}
	close(next)
	wg.Wait()
	conf := &Confusion{Counts: map[string]map[string]int{}, PerCase: map[string]map[string]map[string]int{}, Missed: map[string]int{}, Runs: len(items)}
	for k, r := range results {
		if r.err != nil {
			return nil, r.err
		}
		cs := cases[items[k].c].Name
		for i := range r.truths {
			conf.add(cs, r.truths[i], r.verdicts[i])
		}
		conf.Missed[cs] += r.missed
	}
	return conf, nil
}

// near reports whether period p lies within frac (relative) of any of ps.
func near(p float64, frac float64, ps ...float64) bool {
	for _, q := range ps {
		if math.Abs(p-q) <= frac*q {
			return true
		}
	}
	return false
}

// CalibrationCases returns the four scenarios of the calibration, built on
// the simulator's demo stars: a planet at a period unrelated to rotation; an
// active star with no planet; a weak signal at the noise level, judged at
// its given period; a planet around an active star.
func CalibrationCases() ([]CalibrationCase, error) {
	quiet, err := starsim.DemoScenario("quiet-planet")
	if err != nil {
		return nil, err
	}
	active, err := starsim.DemoScenario("active-no-planet")
	if err != nil {
		return nil, err
	}
	// The diagnosis sees what an observer would know: the colour, and no
	// rotation period (it must estimate one).
	quietStar := &Star{Name: quiet.Name, BV: 0.66, Mass: 1.0}
	activeStar := &Star{Name: active.Name, BV: 0.86, Mass: 0.85}

	// The demo's planet (9.73 d) lies near a third of the rotation period;
	// the calibration moves it to a period unrelated to rotation.
	planet := *quiet
	planet.Name = "planet unrelated to rotation"
	planet.Planets = []starsim.Planet{quiet.Planets[0]}
	planet.Planets[0].Period = 16.9
	pPlanet := planet.Planets[0].Period

	act := *active
	act.Name = "activity only"

	weak := *quiet
	weak.Name = "weak signal at noise level"
	weak.Planets = []starsim.Planet{{Name: "w", Period: 6.37, K: 0.15, Tc: quiet.Observing.Start + 1}}

	both := *active
	both.Name = "planet around an active star"
	both.Planets = []starsim.Planet{{Name: "b", Period: 5.71, K: 25, Tc: active.Observing.Start + 0.7}}

	// Every judged period is the planet's (or its 1-day alias) or else
	// comes from the star's activity: these stars have no other planets.
	activityOr := func(planets ...float64) func(float64) string {
		return func(p float64) string {
			for _, q := range planets {
				if near(p, 0.01, q) || near(p, 0.01, 1/math.Abs(1/q-1.0027379)) {
					return "planet"
				}
			}
			return "activity"
		}
	}
	return []CalibrationCase{
		{Name: planet.Name, Scenario: &planet, Star: quietStar, Truth: activityOr(pPlanet)},
		{Name: act.Name, Scenario: &act, Star: activeStar, Truth: activityOr()},
		{Name: weak.Name, Scenario: &weak, Star: quietStar, Periods: []float64{6.37}, Truth: func(p float64) string { return "noise" }},
		{Name: both.Name, Scenario: &both, Star: activeStar, Truth: activityOr(5.71)},
	}, nil
}
