package photometry

import (
	"math"
	"math/rand/v2"
	"os"
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

// redNoise draws a light curve of red noise without rotation (seed k of
// stream family): 30-minute cadence over 60–300 days, 27-day sectors
// with 1-day gaps and 10% of the points lost in half-day outages, white
// noise 10⁻⁴–10⁻³ and a red component of rms 3×10⁻⁴–3×10⁻³ that is
// either
//
//   - family 0: an Ornstein–Uhlenbeck (AR(1)) process, correlation time
//     0.2–5 d (granulation and supergranulation-like), or
//   - family 1: power-law noise, power ∝ f^−α with α in 1–2.5 from 1/span
//     to the Nyquist frequency (random phases; flicker to random walk).
//
// The parameters are drawn log-uniformly.
func redNoise(family int, seed uint64) *LightCurve {
	rng := rand.New(rand.NewPCG(seed, 0x5ed+uint64(family)))
	logU := func(lo, hi float64) float64 { return math.Exp(math.Log(lo) + rng.Float64()*math.Log(hi/lo)) }
	span := logU(60, 300)
	white := logU(1e-4, 1e-3)
	rms := logU(3e-4, 3e-3)
	const dt = 1.0 / 48
	n := int(span / dt)
	red := make([]float64, n)
	switch family {
	case 0:
		tau := logU(0.2, 5)
		phi := math.Exp(-dt / tau)
		x := rms * rng.NormFloat64()
		for i := range red {
			x = phi*x + rms*math.Sqrt(1-phi*phi)*rng.NormFloat64()
			red[i] = x
		}
	default:
		alpha := 1 + 1.5*rng.Float64()
		m := 1
		for m < 2*n {
			m <<= 1
		}
		c := make([]complex128, m/2+1)
		for k := 1; k < len(c); k++ {
			f := float64(k) / (float64(m) * dt)
			a := math.Pow(f*span, -alpha/2)
			c[k] = complex(a*rng.NormFloat64(), a*rng.NormFloat64())
		}
		x := fourier.NewFFT(m).Sequence(nil, c)
		var s, s2 float64
		for i := 0; i < n; i++ {
			s += x[i]
			s2 += x[i] * x[i]
		}
		sd := math.Sqrt(s2/float64(n) - (s/float64(n))*(s/float64(n)))
		for i := range red {
			red[i] = rms * (x[i] - s/float64(n)) / sd
		}
	}
	lc := &LightCurve{Name: "red noise"}
	var outUntil float64
	for i := 0; i < n; i++ {
		t := float64(i) * dt
		if math.Mod(t, 28) >= 27 || t < outUntil {
			continue
		}
		if rng.Float64() < 0.1/0.9/0.5*dt {
			outUntil = t + 0.5*(0.5+rng.Float64())
			continue
		}
		lc.Time = append(lc.Time, 1000+t)
		lc.Flux = append(lc.Flux, 1+red[i]+white*rng.NormFloat64())
		lc.Err = append(lc.Err, white)
	}
	return lc
}

// Red noise is not rotation: the white-noise false-alarm probability of
// the GLS peak is tiny, but the peak does not stand above the red
// continuum, and the ACF's peaks are no higher than those of the ACF of
// red noise with the light curve's own correlation time. The criteria
// were developed on seeds 1–10 of each family; the rate is measured on
// seeds 101–… (10 per family by default, 30 with SPOTSIFT_LONG=1).
func TestRotationRedNoise(t *testing.T) {
	n := 10
	if testing.Short() {
		n = 4
	}
	if os.Getenv("SPOTSIFT_LONG") == "1" {
		n = 30
	}
	detected := 0
	for fam := 0; fam < 2; fam++ {
		for s := 0; s < n; s++ {
			seed := uint64(101 + s)
			r, err := EstimateRotation(redNoise(fam, seed), &RotationOptions{SkipGP: testing.Short()})
			if err != nil {
				t.Fatal(err)
			}
			if r.Detected {
				detected++
				t.Logf("family %d seed %d: a false rotation at %.3g d (%s; %s)", fam, seed, r.Period, r.Method, r.Agreement)
			}
		}
	}
	t.Logf("%d of %d red-noise light curves show a rotation", detected, 2*n)
	if float64(detected) > 0.1*float64(2*n) {
		t.Errorf("%d of %d red-noise light curves show a rotation, want at most 10%%", detected, 2*n)
	}
}
