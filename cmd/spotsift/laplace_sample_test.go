package main

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"spotsift/activity"
	"spotsift/rvfit"
	"spotsift/rvfit/rvgp"
)

// TestLaplaceAgainstSampling runs "model --activity rotation|qp|multi" on
// both demo stars with --sample and compares, parameter by parameter, the
// Laplace approximation's asymmetric errors (its median less its 16th
// percentile, its 84th percentile less its median: the Gaussian in the
// fit's transformed coordinates mapped back) with the sampler's (median
// less 16th percentile, 84th percentile less median). Issue 15 asks for
// agreement within 30 % for every parameter the data constrain; excluded,
// with the reason logged: a parameter flagged at a bound of its prior, one
// whose Laplace error is unknown (no curvature), and one the data do not
// constrain, whose sampled 68 % interval is wider than half its prior's
// 68 % interval (in ln x for a log-uniform prior): a posterior that
// broad is mostly prior, cut by the prior's bounds, and is not what a
// Laplace approximation describes (common practice: a parameter is
// constrained when the data shrink its prior several-fold).
//
// The chains run 6,000 steps: about 30 autocorrelation times of these
// posteriors (τ ≈ 90–250 steps), short of the 50 the sampler's
// convergence flag asks; their own Monte Carlo error on a 16 % quantile
// is a few per cent, up to 10 % on the far tail of a skewed parameter
// (SPOTSIFT_LAPLACE_STEPS=n sets the steps). Long (a quarter of a minute
// to two minutes per model with GOMAXPROCS=1, the dense qp model on the
// larger star 6–20 by the machine's load): SPOTSIFT_LONG=1 only;
// SPOTSIFT_LAPLACE_ONLY=star/model runs one case.
func TestLaplaceAgainstSampling(t *testing.T) {
	if os.Getenv("SPOTSIFT_LONG") != "1" {
		t.Skip("samples six GP models for minutes each; set SPOTSIFT_LONG=1 to run it")
	}
	dir := t.TempDir()
	stars := map[string]int{"quiet-planet": 1, "active-no-planet": 0}
	for _, star := range []string{"quiet-planet", "active-no-planet"} {
		sim := filepath.Join(dir, star)
		if code, _, stderr := runCmd("simulate", "--demo", star, "--out", sim, "--quiet"); code != exitOK {
			t.Fatalf("simulate %s: exit %d\n%s", star, code, stderr)
		}
		for _, act := range []string{"rotation", "qp", "multi"} {
			name := star + "/" + act
			if only := os.Getenv("SPOTSIFT_LAPLACE_ONLY"); only != "" && only != name {
				continue
			}
			steps := 6000
			if v := os.Getenv("SPOTSIFT_LAPLACE_STEPS"); v != "" {
				n, err := strconv.Atoi(v)
				if err != nil || n < 100 {
					t.Fatalf("SPOTSIFT_LAPLACE_STEPS=%q: want a number of steps ≥ 100", v)
				}
				steps = n
			}
			t.Run(name, func(t *testing.T) {
				compareLaplaceSampling(t, sim, stars[star], act, steps)
			})
		}
	}
}

type laplaceRun struct {
	Fit struct {
		Names    []string   `json:"param_names"`
		Params   []*float64 `json:"params"`
		Median   []*float64 `json:"laplace_median"`
		Lo       []*float64 `json:"laplace_p16"`
		Hi       []*float64 `json:"laplace_p84"`
		AtBound  []string   `json:"at_bound"`
		Status   string     `json:"status"`
		Converge bool       `json:"converged"`
	} `json:"fit"`
	Posterior struct {
		Params []struct {
			Name   string  `json:"name"`
			Median float64 `json:"median"`
			Lo     float64 `json:"p16"`
			Hi     float64 `json:"p84"`
		} `json:"params"`
		TauMax    float64 `json:"tau_max"`
		Converged bool    `json:"converged"`
		Steps     int     `json:"steps"`
	} `json:"posterior"`
}

// priorBox is a prior's support, on a log scale for a log-uniform prior.
type priorBox struct {
	lo, hi float64
	log    bool
	width  float64 // the prior's central 68% interval (not log-uniform)
}

// priorBounds returns the support of every finite prior of the model
// that "model" fits, built as runModel builds it.
func priorBounds(t *testing.T, sim string, planets int, act string) map[string]priorBox {
	s, _, err := rvfit.ReadTable(filepath.Join(sim, "epochs.csv"), nil)
	if err != nil {
		t.Fatal(err)
	}
	star, err := activity.ReadStar(filepath.Join(sim, "star.toml"))
	if err != nil {
		t.Fatal(err)
	}
	noise, priors, err := rvgp.NewActivity(act, s, rvgp.ActivityOptions{Rotation: star.RotationPeriod, RotationErr: star.RotationPeriodErr})
	if err != nil {
		t.Fatal(err)
	}
	m, err := rvfit.NewModel(s, planets, noise, &rvfit.ModelOptions{Priors: priors})
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]priorBox{}
	for i, n := range m.ParamNames() {
		pr := m.Prior(i)
		if pr == nil {
			continue
		}
		lo, hi := pr.Support()
		if math.IsInf(lo, 0) || math.IsInf(hi, 0) {
			continue
		}
		b := priorBox{lo: lo, hi: hi, width: 0.6827 * (hi - lo)}
		switch q := pr.(type) {
		case rvfit.LogUniform:
			b.log = true
		case rvfit.TruncatedGaussian:
			b.width = tgWidth(q)
		case rvfit.Uniform:
		default:
			continue
		}
		out[n] = b
	}
	return out
}

func compareLaplaceSampling(t *testing.T, sim string, planets int, act string, steps int) {
	code, stdout, stderr := runCmd("model", "--data", filepath.Join(sim, "epochs.csv"), "--star", filepath.Join(sim, "star.toml"),
		"--planets", strconv.Itoa(planets), "--activity", act, "--json", "--sample", strconv.Itoa(steps), "--seed", "3")
	if code != exitOK {
		t.Fatalf("model: exit %d\n%s", code, stderr)
	}
	var r laplaceRun
	if err := json.Unmarshal([]byte(stdout), &r); err != nil {
		t.Fatalf("model --json: %v", err)
	}
	compareLaplaceRun(t, &r, sim, planets, act)
}

// compareLaplaceRun compares the fit's Laplace percentiles in r with the
// sampled ones (see TestLaplaceAgainstSampling).
func compareLaplaceRun(t *testing.T, r *laplaceRun, sim string, planets int, act string) {
	if !r.Fit.Converge {
		t.Errorf("fit not converged: %s", r.Fit.Status)
	}
	bounds := priorBounds(t, sim, planets, act)
	var b strings.Builder
	fmt.Fprintf(&b, "%d steps, autocorrelation time %.0f, chain converged %v\n", r.Posterior.Steps, r.Posterior.TauMax, r.Posterior.Converged)
	fmt.Fprintf(&b, "%-18s %12s %10s %10s %12s %10s %10s %7s %7s  %s\n", "parameter", "Laplace med", "-err", "+err", "sample med", "-err", "+err", "ratio-", "ratio+", "note")
	compared, bad := 0, 0
	for i, n := range r.Fit.Names {
		ps := r.Posterior.Params[i]
		sLo, sHi := ps.Median-ps.Lo, ps.Hi-ps.Median
		note := ""
		var lLo, lHi, lMed float64 = math.NaN(), math.NaN(), math.NaN()
		if r.Fit.Median[i] != nil && r.Fit.Lo[i] != nil && r.Fit.Hi[i] != nil {
			lMed = *r.Fit.Median[i]
			lLo, lHi = lMed-*r.Fit.Lo[i], *r.Fit.Hi[i]-lMed
		}
		switch {
		case r.Fit.AtBound[i] != "":
			note = "excluded: MAP at the " + r.Fit.AtBound[i] + " of its prior"
		case math.IsNaN(lMed):
			note = "excluded: Laplace error unknown (no curvature)"
		default:
			if bd, ok := bounds[n]; ok {
				if f := bd.shrink(ps.Lo, ps.Hi); f > 0.5 {
					note = fmt.Sprintf("excluded: not constrained by the data (sampled 68%% interval %.2f of the prior's)", f)
				}
			}
		}
		rl, rh := lLo/sLo, lHi/sHi
		if note == "" {
			compared++
			if math.Abs(rl-1) > 0.3 || math.Abs(rh-1) > 0.3 {
				note = "DIFFERS by more than 30%"
				bad++
			}
		}
		fmt.Fprintf(&b, "%-18s %12.6g %10.3g %10.3g %12.6g %10.3g %10.3g %7.2f %7.2f  %s\n", n, lMed, lLo, lHi, ps.Median, sLo, sHi, rl, rh, note)
	}
	t.Logf("%s\n%s", act, b.String())
	if compared == 0 {
		t.Errorf("no parameter compared")
	}
	if bad > 0 {
		t.Errorf("%d of %d constrained parameters: Laplace and sampled errors differ by more than 30%%", bad, compared)
	}
}

// tgWidth returns the central 68 % interval of a truncated Gaussian
// (its quantiles from the normal CDF, an analytic identity).
func tgWidth(g rvfit.TruncatedGaussian) float64 {
	phi := func(x float64) float64 { return 0.5 * math.Erfc(-(x-g.Mu)/(g.Sigma*math.Sqrt2)) }
	q := func(p float64) float64 { return g.Mu - g.Sigma*math.Sqrt2*math.Erfcinv(2*p) }
	a, b := phi(g.Min), phi(g.Max)
	return q(a+0.8414*(b-a)) - q(a+0.1586*(b-a))
}

// shrink returns the width of the sampled interval [lo, hi] over that of
// the prior's central 68 % (in ln x for a log-uniform prior).
func (bd priorBox) shrink(lo, hi float64) float64 {
	if bd.log {
		return math.Log(hi/lo) / (0.6827 * math.Log(bd.hi/bd.lo))
	}
	return (hi - lo) / bd.width
}

// BenchmarkModelMarginals times the MAP fit of "model --activity act"
// on the quiet demo star (235 epochs, one planet) without and with the
// marginal percentiles (rvfit.FitOptions.Marginals), one worker:
//
//	go test ./cmd/spotsift -run '^$' -bench ModelMarginals -benchtime 3x
func BenchmarkModelMarginals(b *testing.B) {
	sim := filepath.Join(b.TempDir(), "quiet-planet")
	if code, _, stderr := runCmd("simulate", "--demo", "quiet-planet", "--out", sim, "--quiet"); code != exitOK {
		b.Fatalf("simulate: exit %d\n%s", code, stderr)
	}
	s, _, err := rvfit.ReadTable(filepath.Join(sim, "epochs.csv"), nil)
	if err != nil {
		b.Fatal(err)
	}
	star, err := activity.ReadStar(filepath.Join(sim, "star.toml"))
	if err != nil {
		b.Fatal(err)
	}
	for _, act := range []string{"rotation", "multi"} {
		noise, priors, err := rvgp.NewActivity(act, s, rvgp.ActivityOptions{Rotation: star.RotationPeriod, RotationErr: star.RotationPeriodErr})
		if err != nil {
			b.Fatal(err)
		}
		for _, marg := range []bool{false, true} {
			b.Run(fmt.Sprintf("%s/marginals=%v", act, marg), func(b *testing.B) {
				for i := 0; i < b.N; i++ {
					if _, err := rvfit.FitModel(s, 1, noise, &rvfit.FitOptions{Seed: 1, Workers: 1, Model: &rvfit.ModelOptions{Priors: priors}, Marginals: marg}); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}
