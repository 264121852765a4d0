package indicators

import (
	"math"
	"math/rand/v2"
)

// synthLine is one Gaussian absorption line of a synthetic spectrum.
type synthLine struct {
	lambda, depth, sigma float64 // Å (rest), fraction, m/s
}

// synthStar describes a synthetic spectrum: a flat continuum of cont
// electrons per pixel with Gaussian lines, on a grid uniform in ln λ.
type synthStar struct {
	lo, hi  float64 // Å
	step    float64 // ln λ step
	cont    float64
	lines   []synthLine
	vacuum  bool
	profile func(dv, sigma float64) float64 // line shape; nil: Gaussian
}

func newSynthStar(rng *rand.Rand, lo, hi, step float64, nlines int, cont float64) *synthStar {
	s := &synthStar{lo: lo, hi: hi, step: step, cont: cont}
	// Isolated lines: one per slot, jittered inside the middle half of the
	// slot, so that no line's wings reach another's CCF window.
	slot := (hi - lo - 4) / float64(nlines)
	for i := 0; i < nlines; i++ {
		s.lines = append(s.lines, synthLine{
			lambda: lo + 2 + slot*(float64(i)+0.25+0.5*rng.Float64()),
			depth:  0.2 + 0.6*rng.Float64(),
			sigma:  3000,
		})
	}
	sortLines(s.lines)
	return s
}

func sortLines(l []synthLine) {
	for i := 1; i < len(l); i++ {
		for j := i; j > 0 && l[j].lambda < l[j-1].lambda; j-- {
			l[j], l[j-1] = l[j-1], l[j]
		}
	}
}

// spectrum returns the star shifted by v m/s, noiseless, sampled at pixel
// centres.
func (st *synthStar) spectrum(v float64) *Spectrum {
	n := int(math.Log(st.hi/st.lo) / st.step)
	o := Order{Wavelength: make([]float64, n), Flux: make([]float64, n)}
	d := DopplerFactor(v)
	for i := range o.Wavelength {
		o.Wavelength[i] = st.lo * math.Exp(st.step*float64(i))
		o.Flux[i] = 1
	}
	for _, l := range st.lines {
		c := l.lambda * d
		// Lines affect ±8σ.
		w := 8 * l.sigma / C * c
		i0 := max(0, int(math.Log((c-w)/st.lo)/st.step))
		for i := i0; i < n && o.Wavelength[i] < c+w; i++ {
			dv := C * math.Log(o.Wavelength[i]/c)
			var p float64
			if st.profile != nil {
				p = st.profile(dv, l.sigma)
			} else {
				p = math.Exp(-0.5 * dv * dv / (l.sigma * l.sigma))
			}
			o.Flux[i] *= 1 - l.depth*p
		}
	}
	for i := range o.Flux {
		o.Flux[i] *= st.cont
	}
	return &Spectrum{Name: "synthetic", Orders: []Order{o}, Vacuum: st.vacuum}
}

func (st *synthStar) mask() *Mask {
	wl := make([]float64, len(st.lines))
	wt := make([]float64, len(st.lines))
	for i, l := range st.lines {
		wl[i], wt[i] = l.lambda, l.depth
	}
	m, err := NewMask(wl, wt, st.vacuum)
	if err != nil {
		panic(err)
	}
	return m
}

// addNoise returns a copy of s with Poisson-like Gaussian noise of variance
// equal to the flux, and the noiseless flux as error.
func addNoise(s *Spectrum, rng *rand.Rand) *Spectrum {
	c := s.Clone()
	for o := range c.Orders {
		ord := &c.Orders[o]
		ord.Err = make([]float64, len(ord.Flux))
		for i, f := range ord.Flux {
			ord.Err[i] = math.Sqrt(f)
			ord.Flux[i] = math.Max(0, f+math.Sqrt(f)*rng.NormFloat64())
		}
	}
	return c
}
