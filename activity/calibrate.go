package activity

import (
	"context"
	"fmt"
	"io"
	"math"
	"runtime"
	"slices"
	"sort"
	"strings"

	"spotsift/activity/starsim"
	"spotsift/rvfit"

	"spotsift/internal/worker"
)

// CalibrationCase is one simulated scenario of the calibration with the
// truth each judged signal should be matched against.
type CalibrationCase struct {
	// Name labels the case in the confusion matrix.
	Name string
	// Scenario is simulated once per seed (tables only).
	Scenario *starsim.Scenario
	// Generate, when set instead of Scenario, makes the star of a seed:
	// its series, its star file (nil: none) and the truth of its judged
	// periods. It lets a second, independent activity model (or anything
	// else) be calibrated alongside the simulator.
	Generate func(seed uint64) (*rvfit.Series, *Star, func(period float64) string, error)
	// Periods, when set, are judged as given periods (e.g. a weak signal
	// that prewhitening would not find); otherwise the periodogram peaks.
	Periods []float64
	// Star is the star file the diagnosis sees (nil: none).
	Star *Star
	// Truth classifies a judged period: "planet", "activity" or "noise"
	// (weak signals whose right answer is inconclusive); any other label
	// (e.g. "planet alias", "planet at rotation") is counted under its
	// name. An empty label leaves the signal out.
	Truth func(period float64) string
}

// ProbPoint is one judged signal's probability of being planetary and
// whether it is (truth "planet").
type ProbPoint struct {
	Prob   float64
	Score  float64
	Planet bool
	// Truth is the signal's truth label; Blocked whether a caveat bars
	// it from planet-like; Significant whether its false-alarm
	// probability passed the threshold.
	Truth       string
	Blocked     bool
	Significant bool
	// Kind is the kind of the caveat (Signal.CaveatKind) when Blocked.
	Kind string
}

// RatesAt returns, for a verdict threshold thr, the share of
// non-planetary signals and of signals with truth "planet" that would be
// planet-like, from the recorded points (no diagnosis is rerun).
func RatesAt(pts []ProbPoint, thr float64) (falsePlanet, detected float64) {
	var nf, kf, nd, kd int
	for _, p := range pts {
		pl := p.Significant && !p.Blocked && p.Score <= -thr+scoreTolerance
		switch {
		case NonPlanetary(p.Truth):
			nf++
			if pl {
				kf++
			}
		case p.Truth == "planet":
			nd++
			if pl {
				kd++
			}
		}
	}
	return float64(kf) / float64(max(nf, 1)), float64(kd) / float64(max(nd, 1))
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
	// Points are every judged signal with truth "planet" or a
	// non-planetary truth, for the calibration curve.
	Points []ProbPoint
}

// NonPlanetary reports whether a truth label is a signal with no planet
// behind it at its own period: activity, or an alias or harmonic of a
// planet.
func NonPlanetary(truth string) bool { return truth == "activity" || truth == "alias" }

// Rate returns, over all cases whose name has the prefix, the share of
// signals with a truth accepted by want that got the verdict, and their
// number.
func (c *Confusion) Rate(prefix string, want func(truth string) bool, verdict string) (float64, int) {
	n, k := 0, 0
	for cs, m := range c.PerCase {
		if len(cs) < len(prefix) || cs[:len(prefix)] != prefix {
			continue
		}
		for truth, vs := range m {
			if !want(truth) {
				continue
			}
			for v, x := range vs {
				n += x
				if v == verdict {
					k += x
				}
			}
		}
	}
	if n == 0 {
		return math.NaN(), 0
	}
	return float64(k) / float64(n), n
}

// CalibrationBin is one bin of the calibration curve.
type CalibrationBin struct {
	Lo, Hi   float64 // the predicted probabilities of the bin
	N        int
	Mean     float64 // mean predicted probability
	Observed float64 // share of planets
}

// Curve returns the calibration curve of the probabilities in nbins equal
// bins of predicted probability. An empty bin's Mean and Observed are NaN
// (unknown, not zero); points whose probability is not a number in [0, 1]
// are left out.
func (c *Confusion) Curve(nbins int) []CalibrationBin {
	out := make([]CalibrationBin, nbins)
	for b := range out {
		out[b].Lo, out[b].Hi = float64(b)/float64(nbins), float64(b+1)/float64(nbins)
	}
	for _, p := range c.Points {
		if !(p.Prob >= 0 && p.Prob <= 1) {
			continue
		}
		b := min(nbins-1, int(p.Prob*float64(nbins)))
		out[b].N++
		out[b].Mean += p.Prob
		if p.Planet {
			out[b].Observed++
		}
	}
	for b := range out {
		if out[b].N > 0 {
			out[b].Mean /= float64(out[b].N)
			out[b].Observed /= float64(out[b].N)
		} else {
			out[b].Mean, out[b].Observed = math.NaN(), math.NaN()
		}
	}
	return out
}

// calibrationMinPoints is the fewest signals of a kind, with both truths
// among them, that FitCalibration fits a logistic to; fewer keep a
// constant.
const calibrationMinPoints = 20

// FitCalibration fits a Logistic per calibrated kind of caveat
// (calibratedKinds; "" for the points without a caveat) by FitLogistic;
// points of other kinds are left out (see Calibration). A kind with fewer than
// calibrationMinPoints points, or with points of one truth only, gets a
// constant: its planetary share with one planetary and one non-planetary
// pseudo-point added (Laplace's rule of succession), so that a handful of
// signals never claims certainty.
func FitCalibration(pts []ProbPoint) Calibration {
	by := map[string][]ProbPoint{}
	for _, p := range pts {
		k := ""
		if p.Blocked {
			if p.Kind == "" || !slices.Contains(calibratedKinds, p.Kind) {
				continue
			}
			k = p.Kind
		}
		by[k] = append(by[k], p)
	}
	c := Calibration{}
	for k, ps := range by {
		n, planets := len(ps), 0
		for _, p := range ps {
			if p.Planet {
				planets++
			}
		}
		if n >= calibrationMinPoints && planets > 0 && planets < n {
			c[k] = FitLogistic(ps)
			continue
		}
		c[k] = Logistic{A: math.Log(float64(n-planets+1) / float64(planets+1))}
	}
	return c
}

// FitLogistic fits the Logistic mapping from score to P(planet) to the
// points by maximum likelihood (Newton's method on the two parameters;
// Platt 1999), with weak Gaussian priors on A (σ = 10) and B (σ = 30, a
// rise from 0.05 to 0.95 over 0.2 in score): they leave a fit to
// hundreds of signals unchanged and keep it finite when the points are
// separated by their score (the likelihood alone then grows without
// bound as B does).
func FitLogistic(pts []ProbPoint) Logistic {
	const sigA, sigB = 10.0, 30.0
	// lnPost is the log posterior: ln L = Σ y ln P + (1−y) ln(1−P) and
	// the priors.
	lnPost := func(a, b float64) float64 {
		l := -a*a/(2*sigA*sigA) - b*b/(2*sigB*sigB)
		for _, p := range pts {
			z := a + b*p.Score // P(planet) = 1/(1+e^z)
			if p.Planet {
				l -= softplus(z)
			} else {
				l -= softplus(-z)
			}
		}
		return l
	}
	a, b := 0.0, 5.0
	cur := lnPost(a, b)
	for it := 0; it < 100; it++ {
		var ga, gb, haa, hab, hbb float64
		for _, p := range pts {
			q := 1 / (1 + math.Exp(a+b*p.Score)) // P(planet)
			y := 0.0
			if p.Planet {
				y = 1
			}
			// With dP/da = −P(1−P): ∂lnL/∂a = Σ (P − y) and ∂lnL/∂b =
			// Σ (P − y) s.
			r := q - y
			ga += r
			gb += r * p.Score
			w := q * (1 - q)
			haa += w
			hab += w * p.Score
			hbb += w * p.Score * p.Score
		}
		ga -= a / (sigA * sigA)
		gb -= b / (sigB * sigB)
		haa += 1 / (sigA * sigA)
		hbb += 1 / (sigB * sigB)
		det := haa*hbb - hab*hab
		if !(det > 0) {
			break
		}
		da := (hbb*ga - hab*gb) / det
		db := (haa*gb - hab*ga) / det
		// Newton's step, halved until the posterior does not fall (a full
		// step from far away can overshoot).
		step := 1.0
		for ; step > 1e-6; step /= 2 {
			if next := lnPost(a+step*da, b+step*db); next >= cur {
				cur = next
				break
			}
		}
		if step <= 1e-6 {
			break
		}
		a, b = a+step*da, b+step*db
		if math.Abs(step*da)+math.Abs(step*db) < 1e-9 {
			break
		}
	}
	return Logistic{A: a, B: b}
}

// softplus returns ln(1 + e^x) without overflow.
func softplus(x float64) float64 {
	if x > 30 {
		return x
	}
	return math.Log1p(math.Exp(x))
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
	return CalibrateSeeds(context.Background(), cases, 1, nseeds, workers, opts)
}

// CalibrateSeeds is Calibrate over seeds first … first+nseeds−1, so that
// weights set on one set of seeds can be checked on another. It stops
// with ctx's error when ctx is cancelled.
func CalibrateSeeds(ctx context.Context, cases []CalibrationCase, first uint64, nseeds, workers int, opts *Options) (*Confusion, error) {
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	type item struct {
		c    int
		seed uint64
	}
	type result struct {
		truths, verdicts []string
		points           []ProbPoint
		inCurve          []bool
		missed           int
		err              error
	}
	var items []item
	for c := range cases {
		for s := 0; s < nseeds; s++ {
			items = append(items, item{c, first + uint64(s)})
		}
	}
	results := make([]result, len(items))
	var wg worker.Group
	next := make(chan int)
	for w := 0; w < workers; w++ {
		wg.Go(func() {
			for k := range next {
				it := items[k]
				cs := cases[it.c]
				r := &results[k]
				if err := ctx.Err(); err != nil {
					r.err = err
					continue
				}
				var series *rvfit.Series
				star, truth := cs.Star, cs.Truth
				var planets []float64
				if cs.Generate != nil {
					var err error
					series, star, truth, err = cs.Generate(it.seed)
					if err != nil {
						r.err = fmt.Errorf("%s seed %d: %w", cs.Name, it.seed, err)
						continue
					}
				} else {
					sim, err := starsim.Simulate(cs.Scenario, it.seed, &starsim.Options{Workers: 1})
					if err != nil {
						r.err = fmt.Errorf("%s seed %d: %w", cs.Name, it.seed, err)
						continue
					}
					series = sim.Series()
					for _, p := range cs.Scenario.Planets {
						planets = append(planets, p.Period)
					}
				}
				o := opts.withDefaults()
				o.Periods, o.Star, o.Seed = cs.Periods, star, it.seed
				dg, err := Diagnose(ctx, series, &o)
				if err != nil {
					r.err = fmt.Errorf("%s seed %d: %w", cs.Name, it.seed, err)
					continue
				}
				found := map[string]bool{}
				for _, sg := range dg.Signals {
					tr := truth(float64(sg.Period))
					if tr == "" {
						continue
					}
					r.truths = append(r.truths, tr)
					r.verdicts = append(r.verdicts, sg.Verdict)
					p, ok := probPoint(tr, &sg, o.FAPThreshold)
					r.points, r.inCurve = append(r.points, p), append(r.inCurve, ok)
					found[tr] = true
				}
				for _, p := range planets {
					if truth(p) == "planet" && !found["planet"] {
						r.missed++
					}
				}
			}
		})
	}
	wg.Feed(next, len(items))
	if err := wg.Wait(); err != nil {
		return nil, err
	}
	conf := &Confusion{Counts: map[string]map[string]int{}, PerCase: map[string]map[string]map[string]int{}, Missed: map[string]int{}, Runs: len(items)}
	for k, r := range results {
		if r.err != nil {
			return nil, r.err
		}
		cs := cases[items[k].c].Name
		for i := range r.truths {
			conf.add(cs, r.truths[i], r.verdicts[i])
			if r.inCurve[i] {
				conf.Points = append(conf.Points, r.points[i])
			}
		}
		conf.Missed[cs] += r.missed
	}
	return conf, nil
}

// probPoint returns the calibration point of a signal sg judged with
// truth tr; ok is false for the truths the calibration curve leaves out
// (a planet at P_rot or P_rot/2, whose right answer is not "planet", and
// labels other than planets' and NonPlanetary's).
func probPoint(tr string, sg *Signal, fapThreshold float64) (p ProbPoint, ok bool) {
	p = ProbPoint{Prob: float64(sg.Probability), Score: sg.Score, Planet: strings.HasPrefix(tr, "planet"), Truth: tr,
		Blocked: sg.Caveat != "", Significant: float64(sg.FAP) <= fapThreshold, Kind: sg.CaveatKind}
	return p, p.Planet && tr != "planet at rotation" || NonPlanetary(tr)
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
	// the calibration moves it to a period unrelated to rotation: the
	// middle (in frequency) of the widest gap between the bands of n/P_rot
	// that the star's differential rotation spans (see harmonicBands),
	// between P_rot and P_rot/2.
	planet := *quiet
	planet.Name = "planet unrelated to rotation"
	planet.Planets = []starsim.Planet{quiet.Planets[0]}
	planet.Planets[0].Period = 20.4
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
	// comes from the star's activity: these stars have no other planets. A
	// planet within a harmonic band of the rotation is labelled as such,
	// by the rule of the FF' generator's truth.
	activityOr := func(sc *starsim.Scenario, planets ...float64) func(float64) string {
		return func(p float64) string {
			for _, q := range planets {
				if near(p, 0.01, q) || near(p, 0.01, 1/math.Abs(1/q-siderealFreq)) {
					if nearHarmonic(1/q, sc.Star.RotationPeriod, sc.Star.DiffRotation, 1.5/(sc.Observing.End-sc.Observing.Start)) {
						return "planet near a harmonic"
					}
					return "planet"
				}
			}
			return "activity"
		}
	}
	return []CalibrationCase{
		{Name: planet.Name, Scenario: &planet, Star: quietStar, Truth: activityOr(&planet, pPlanet)},
		{Name: act.Name, Scenario: &act, Star: activeStar, Truth: activityOr(&act)},
		{Name: weak.Name, Scenario: &weak, Star: quietStar, Periods: []float64{6.37}, Truth: func(p float64) string { return "noise" }},
		{Name: both.Name, Scenario: &both, Star: activeStar, Truth: activityOr(&both, 5.71)},
	}, nil
}

// nearHarmonic reports whether frequency f lies within max(res, 0.1/P_eq)
// of a band n/P (n = 1 … 4) spanned by the rotation periods of a star with
// equatorial period peq and differential rotation alpha (Ω(θ) = Ω_eq
// (1 − α sin²θ): periods from P_eq to P_eq/(1 − α)). A planet there cannot
// be told from activity by its period: the calibration leaves it out of
// the rate of detectable planets.
func nearHarmonic(f, peq, alpha, res float64) bool {
	tol := math.Max(res, 0.1/peq)
	for n := 1.0; n <= 4; n++ {
		lo, hi := n*(1-alpha)/peq, n/peq
		if f >= lo-tol && f <= hi+tol {
			return true
		}
	}
	return false
}
