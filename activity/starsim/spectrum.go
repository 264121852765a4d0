package starsim

import (
	"math"
	"math/rand/v2"
)

// StrongLine is one of the strong lines every simulated spectrum carries, at
// its laboratory wavelength in air (docs/methods.md §1 table, Morton 2000
// conversion). The absorption is a Lorentzian of half-width Gamma and
// central depth Depth, tapered to zero at 40·Gamma; a Gaussian emission core
// of σ EmissionSigma and relative strength EmissionScale (times the epoch's
// chromospheric emission) fills it in.
//
// The depths, widths and emission strengths are invented, chosen only to
// look like a G dwarf; the wavelengths are the laboratory ones.
type StrongLine struct {
	Name          string
	Lambda        float64 // Å, air
	Depth         float64
	Gamma         float64 // Å
	EmissionSigma float64 // Å
	EmissionScale float64
}

// StrongLines lists the strong lines of the simulated spectra, bluest first.
var StrongLines = []StrongLine{
	{"Ca II K", 3933.6633, 0.97, 1.6, 0.18, 1},
	{"Ca II H", 3968.4682, 0.96, 1.3, 0.18, 0.75},
	{"Na I D2", 5889.9506, 0.85, 0.22, 0.10, 0.08},
	{"Na I D1", 5895.9240, 0.80, 0.18, 0.10, 0.06},
	{"H-alpha", 6562.8010, 0.80, 0.9, 0.35, 0.25},
}

// Mount Wilson S-index bands (air, docs/methods.md §4.1): triangular H and K
// cores of FWHM 1.09 Å, rectangular 20 Å V and R continua.
const (
	sBandK  = 3933.664
	sBandH  = 3968.470
	sBandHW = 1.09
	sBandV0 = 3891.067
	sBandV1 = 3911.069
	sBandR0 = 3991.067
	sBandR1 = 4011.067
	// SIndexScale is the factor α·8 = 2.4 × 8 = 19.2 that turns the ratio of
	// integrated band fluxes (H + K)/(R + V) into an S-index on a scale
	// close to Mount Wilson's (α = 2.4 and the photometer's 8-fold longer
	// H/K exposure, Duncan et al. 1991, ApJS 76, 383; from memory).
	SIndexScale = 19.2
)

// specModel is the fixed part of the full spectrum: the log-linear grid,
// the continuum, the weak-line list and the kernel nodes.
type specModel struct {
	n        int
	lnl0, dl float64   // ln λ of pixel 0, step in ln λ
	lam      []float64 // pixel wavelengths, Å air
	cont     []float64 // continuum, B_λ(Teff)/B_5500(Teff)
	gcont    []float64 // d ln C / d ln λ
	g2cont   []float64 // d² ln C / d ln λ²
	pixVel   float64   // km/s per pixel
	// weak lines
	lpix   []float64 // fractional pixel of the rest wavelength
	ldepth []float64
	lnode  []int32   // lower kernel node
	lw     []float64 // weight of the upper node
	nodes  []float64 // kernel node wavelengths, Å
}

// newSpecModel lays the grid and draws the weak lines from rng: positions
// uniform in λ, depths 0.05 + 0.85 u² (u uniform), so that weak lines
// dominate in number.
func newSpecModel(sc *Scenario, rng *rand.Rand) *specModel {
	sp := &sc.Spectrum
	n := sp.Pixels
	m := &specModel{n: n, lnl0: math.Log(sp.LambdaMin)}
	m.dl = (math.Log(sp.LambdaMax) - m.lnl0) / float64(n-1)
	m.pixVel = cKms * m.dl
	m.lam = make([]float64, n)
	m.cont = make([]float64, n)
	m.gcont = make([]float64, n)
	m.g2cont = make([]float64, n)
	T := sc.Star.Teff
	b0 := Planck(5500, T)
	x0 := hPlanck * cLight / (kBoltz * T * 1e-10)
	for i := range m.lam {
		l := math.Exp(m.lnl0 + float64(i)*m.dl)
		m.lam[i] = l
		m.cont[i] = Planck(l, T) / b0
		// d ln B_λ / d ln λ = −5 + (x/λ) e^{x/λ}/(e^{x/λ} − 1), x = hc/kT.
		y := x0 / l
		q := -math.Expm1(-y) // 1 − e^{−y}
		m.gcont[i] = -5 + y/q
		// d/d ln λ = −y d/dy; d/dy [y/q] = (q − y e^{−y})/q².
		m.g2cont[i] = -y * (q - y*math.Exp(-y)) / (q * q)
	}
	const nNodes = 4
	for j := 0; j < nNodes; j++ {
		m.nodes = append(m.nodes, math.Exp(m.lnl0+float64(j)*(float64(n-1)*m.dl)/(nNodes-1)))
	}
	lo, hi := sp.LambdaMin, sp.LambdaMax
	for k := 0; k < sp.Lines; k++ {
		l := lo + (hi-lo)*rng.Float64()
		u := rng.Float64()
		m.lpix = append(m.lpix, (math.Log(l)-m.lnl0)/m.dl)
		m.ldepth = append(m.ldepth, 0.05+0.85*u*u)
		j, w := m.nodeOf(l)
		m.lnode = append(m.lnode, int32(j))
		m.lw = append(m.lw, w)
	}
	return m
}

// nodeOf returns the lower kernel node of wavelength l and the weight of
// the upper one (linear in ln λ).
func (m *specModel) nodeOf(l float64) (int, float64) {
	t := (math.Log(l) - math.Log(m.nodes[0])) / (math.Log(m.nodes[len(m.nodes)-1]) - math.Log(m.nodes[0])) * float64(len(m.nodes)-1)
	t = math.Max(0, math.Min(float64(len(m.nodes)-1)-1e-12, t))
	j := int(t)
	return j, t - float64(j)
}

// kernels holds one epoch's broadening kernels: the absorption kernels
// A_j(u) of a local Gaussian line at each node (fine grid g), and the
// rotation-plus-instrument kernels of the strong lines at pixel steps.
type kernels struct {
	g       velGrid
	A       [][]float64
	strong  [][]float64 // per StrongLines entry, index p − half at pixel steps
	shalf   []int
	scratch []float64
}

// catmullRom interpolates between a[1] and a[2] at fraction t with the
// Catmull–Rom cubic through a[0..3]: continuous in value and slope, so that
// a sub-grid Doppler shift moves a line smoothly (a linear interpolant's
// kinks bias small shifts by ~3e-4 of their size).
func catmullRom(a []float64, t float64) float64 {
	p0, p1, p2, p3 := a[0], a[1], a[2], a[3]
	return p1 + 0.5*t*(p2-p0+t*(2*p0-5*p1+4*p2-p3+t*(3*(p1-p2)+p3-p0)))
}

// strongProfile returns the intrinsic (unbroadened) transmission of strong
// line s at wavelength l (Å) with chromospheric emission e.
func strongProfile(s *StrongLine, l, e float64) float64 {
	x := (l - s.Lambda) / s.Gamma
	const taper = 40
	var a float64
	if ax := math.Abs(x); ax < taper {
		q := 1 - (x/taper)*(x/taper)
		a = s.Depth / (1 + x*x) * q * q
	}
	if d := (l - s.Lambda) / s.EmissionSigma; math.Abs(d) < 8 {
		a -= e * s.EmissionScale * math.Exp(-0.5*d*d)
	}
	return 1 - a
}

// synth writes into dst[i0:i1] the continuum-normalised spectrum for pixels
// i0 ≤ i < i1, every line shifted by the Doppler factor exp(lnD) and
// broadened by the kernels, with chromospheric emission e. absorb is
// scratch of the same length as dst.
func (m *specModel) synth(dst, absorb []float64, i0, i1 int, k *kernels, lnD, e float64) {
	for i := i0; i < i1; i++ {
		absorb[i] = 0
	}
	shift := lnD / m.dl // pixels
	reach := k.g.span() / m.pixVel
	for l, p0 := range m.lpix {
		c := p0 + shift
		lo := max(i0, int(math.Ceil(c-reach)))
		hi := min(i1-1, int(math.Floor(c+reach)))
		if lo > hi {
			continue
		}
		d := m.ldepth[l]
		j, w := int(m.lnode[l]), m.lw[l]
		a0, a1 := k.A[j], k.A[j+1]
		for i := lo; i <= hi; i++ {
			u := (float64(i) - c) * m.pixVel
			q := u/k.g.h + float64(k.g.half)
			iq := int(q)
			if q < 1 || iq >= len(a0)-2 {
				continue
			}
			t := q - float64(iq)
			v0 := catmullRom(a0[iq-1:iq+3], t)
			v1 := catmullRom(a1[iq-1:iq+3], t)
			absorb[i] += d * (v0 + w*(v1-v0))
		}
	}
	for i := i0; i < i1; i++ {
		// Depths add linearly (the local line model is linear); a floor keeps
		// rare deep blends physical.
		if v := 1 - absorb[i]; v > 0.005 {
			dst[i] = v
		} else {
			dst[i] = 0.005
		}
	}
	invD := math.Exp(-lnD)
	for s := range StrongLines {
		sl := &StrongLines[s]
		ker := k.strong[s]
		half := k.shalf[s]
		wing := 40*sl.Gamma + 10*sl.EmissionSigma
		plo := max(i0, int(math.Floor((math.Log((sl.Lambda-wing)/invD)-m.lnl0)/m.dl))-half)
		phi := min(i1-1, int(math.Ceil((math.Log((sl.Lambda+wing)/invD)-m.lnl0)/m.dl))+half)
		if plo > phi {
			continue
		}
		// The intrinsic profile, Doppler-shifted, at every source pixel the
		// convolution reaches; then the discrete convolution with the
		// kernel, tap p standing for the velocity (p − half)·pixVel.
		slo, shi := max(0, plo-half), min(m.n-1, phi+half)
		src := k.scratch[:0]
		for q := slo; q <= shi; q++ {
			src = append(src, strongProfile(sl, m.lam[q]*invD, e))
		}
		k.scratch = src
		// Far in the wings (beyond 10 Lorentz and emission widths) the
		// profile is so smooth that the convolution only shifts it by the
		// kernel's mean velocity: the neglected ½P″σ² is below 2e-7.
		var pm, pw float64
		for p, kp := range ker {
			pm += kp * float64(p-half)
			pw += kp
		}
		meanShift := math.Exp(-pm / pw * m.dl)
		far := 10 * math.Max(sl.Gamma, sl.EmissionSigma)
		for i := plo; i <= phi; i++ {
			if math.Abs(m.lam[i]*invD-sl.Lambda) > far {
				dst[i] *= strongProfile(sl, m.lam[i]*invD*meanShift, e)
				continue
			}
			var v, wsum float64
			for p, kp := range ker {
				q := i - (p - half)
				if q < slo || q > shi {
					continue
				}
				v += kp * src[q-slo]
				wsum += kp
			}
			if wsum > 0 {
				dst[i] *= v / wsum
			}
		}
	}
}
