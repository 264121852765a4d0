package starsim

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// refValues holds testdata/starsim/ref.json, made by make_ref.py with scipy
// and astropy (versions recorded in the file).
type refValues struct {
	Source   string `json:"source"`
	GrayFWHM []struct {
		VSinI, Sigma, Eps, FWHM float64
	} `json:"gray_fwhm"`
	Planck []struct {
		Lambda, T, B float64
	} `json:"planck"`
}

func loadRef(t *testing.T) *refValues {
	t.Helper()
	b, err := os.ReadFile("../../testdata/starsim/ref.json")
	if err != nil {
		t.Fatal(err)
	}
	var r refValues
	if err := json.Unmarshal(b, &r); err != nil {
		t.Fatal(err)
	}
	return &r
}

// smallSpectrum keeps the spectral part of a test scenario cheap: a 200 Å
// window holding Ca II H and K.
var smallSpectrum = SpectrumPlan{Pixels: 20000, LambdaMin: 3850, LambdaMax: 4050, Lines: 50}

// mustSimulate runs sc or fails the test.
func mustSimulate(t testing.TB, sc *Scenario, seed uint64, opts *Options) *Result {
	t.Helper()
	res, err := Simulate(sc, seed, opts)
	if err != nil {
		t.Fatal(err)
	}
	return res
}

// halfWidth returns the full width at half depth of an absorption profile
// on a uniform grid, by linear interpolation of the two crossings.
func halfWidth(v, f []float64) float64 {
	imin := 0
	for i := range f {
		if f[i] < f[imin] {
			imin = i
		}
	}
	level := 1 - (1-f[imin])/2
	var lo, hi float64
	for i := imin; i > 0; i-- {
		if f[i-1] >= level {
			lo = v[i] + (level-f[i])/(f[i-1]-f[i])*(v[i-1]-v[i])
			break
		}
	}
	for i := imin; i < len(f)-1; i++ {
		if f[i+1] >= level {
			hi = v[i] + (level-f[i])/(f[i+1]-f[i])*(v[i+1]-v[i])
			break
		}
	}
	return hi - lo
}

// glsPeak returns the frequency (cycles/day) of the highest power of a
// floating-mean Lomb–Scargle periodogram (unit weights) of y(t) over
// [fmin, fmax], on a grid oversampled 10 times the baseline's resolution.
// It is a small independent implementation for the tests (Zechmeister &
// Kürster 2009, A&A 496, 577, with equal errors).
func glsPeak(t, y []float64, fmin, fmax float64) float64 {
	n := float64(len(t))
	var mean float64
	for _, v := range y {
		mean += v
	}
	mean /= n
	span := t[len(t)-1] - t[0]
	df := 1 / (10 * span)
	best, bestF := -1.0, 0.0
	for f := fmin; f <= fmax; f += df {
		w := 2 * math.Pi * f
		var C, S, YC, YS, CC, SS, CS float64
		for i := range t {
			s, c := math.Sincos(w * t[i])
			C += c
			S += s
			YC += (y[i] - mean) * c
			YS += (y[i] - mean) * s
			CC += c * c
			SS += s * s
			CS += c * s
		}
		C, S = C/n, S/n
		YC, YS = YC/n, YS/n
		CCh := CC/n - C*C
		SSh := SS/n - S*S
		CSh := CS/n - C*S
		D := CCh*SSh - CSh*CSh
		p := (SSh*YC*YC + CCh*YS*YS - 2*CSh*YC*YS) / D
		if p > best {
			best, bestF = p, f
		}
	}
	return bestF
}
