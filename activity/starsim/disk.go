package starsim

import "math"

// Physical constants (SI, exact since the 2019 redefinition).
const (
	cLight   = 299792458.0     // speed of light, m/s
	hPlanck  = 6.62607015e-34  // Planck constant, J s
	kBoltz   = 1.380649e-23    // Boltzmann constant, J/K
	cKms     = cLight / 1000.0 // speed of light, km/s
	fwhmSig  = 2.354820045030949
	subCells = 8 // sub-samples per side for cells on the limb
)

// LimbDarkening returns the quadratic limb-darkening law
//
//	I(μ)/I(1) = 1 − u1(1 − μ) − u2(1 − μ)²
//
// for μ the cosine of the angle from disk centre (docs/methods.md §13, common
// practice). It is not clipped: a law that goes negative is the caller's
// choice.
func LimbDarkening(mu, u1, u2 float64) float64 {
	q := 1 - mu
	return 1 - u1*q - u2*q*q
}

// Planck returns the Planck spectral radiance B_λ(T) in W m⁻³ sr⁻¹ at the
// wavelength lambda in Å:
//
//	B_λ(T) = (2hc²/λ⁵) / (exp(hc/(λkT)) − 1)
//
// Special cases: T ≤ 0 returns 0.
func Planck(lambda, T float64) float64 {
	if T <= 0 {
		return 0
	}
	l := lambda * 1e-10
	return 2 * hPlanck * cLight * cLight / (l * l * l * l * l) / math.Expm1(hPlanck*cLight/(l*kBoltz*T))
}

// SpotContrast returns the intensity ratio of a spot at T − dT to the
// photosphere at T at the wavelength lambda (Å), B_λ(T − dT)/B_λ(T)
// (docs/methods.md §13, common practice).
func SpotContrast(lambda, T, dT float64) float64 {
	return Planck(lambda, T-dT) / Planck(lambda, T)
}

// disk is the visible stellar disk on a square grid of cells in the sky
// plane: x to the right (receding side), y along the projected rotation
// axis, z = μ towards the observer, in units of the stellar radius.
type disk struct {
	n     int     // cells across the diameter
	delta float64 // cell size, stellar radii
	// index maps grid position iy*n+ix to the cell number, -1 off the disk.
	index []int32
	// Per cell: position, μ, quiet weight (limb-darkened projected area)
	// and velocities in km/s.
	x, y, mu []float64
	w        []float64
	area     []float64 // projected area on the disk
	vrot     []float64 // rotation velocity (differential rotation included)
	vcb      []float64 // convective-blueshift velocity of a quiet cell (≤ 0 for a blueshift)
	wsum     float64
	vmax     float64 // largest |vrot + vcb|
	sinI     float64
	cosI     float64
}

// newDisk lays the grid for star st (defaults applied).
func newDisk(st *Star, n int) *disk {
	d := &disk{n: n, delta: 2 / float64(n), index: make([]int32, n*n)}
	inc := st.Inclination * math.Pi / 180
	d.sinI, d.cosI = math.Sin(inc), math.Cos(inc)
	vsini := st.VEq * d.sinI
	u1, u2 := st.LimbU1, st.LimbU2
	cb := st.ConvectiveBlueshift / 1000
	for iy := 0; iy < n; iy++ {
		for ix := 0; ix < n; ix++ {
			d.index[iy*n+ix] = -1
			x0 := -1 + float64(ix)*d.delta
			y0 := -1 + float64(iy)*d.delta
			// Fraction of the cell on the disk and the centroid of that part;
			// only cells the limb crosses need sub-sampling.
			xc, yc := x0+d.delta/2, y0+d.delta/2
			rIn := math.Hypot(math.Max(math.Abs(x0), math.Abs(x0+d.delta)), math.Max(math.Abs(y0), math.Abs(y0+d.delta)))
			frac := 1.0
			if rIn > 1 {
				var cnt, sx, sy float64
				for sy0 := 0; sy0 < subCells; sy0++ {
					for sx0 := 0; sx0 < subCells; sx0++ {
						px := x0 + (float64(sx0)+0.5)*d.delta/subCells
						py := y0 + (float64(sy0)+0.5)*d.delta/subCells
						if px*px+py*py < 1 {
							cnt++
							sx += px
							sy += py
						}
					}
				}
				if cnt == 0 {
					continue
				}
				frac = cnt / (subCells * subCells)
				xc, yc = sx/cnt, sy/cnt
			}
			mu := math.Sqrt(math.Max(0, 1-xc*xc-yc*yc))
			d.index[iy*n+ix] = int32(len(d.x))
			d.x = append(d.x, xc)
			d.y = append(d.y, yc)
			d.mu = append(d.mu, mu)
			w := LimbDarkening(mu, u1, u2) * frac * d.delta * d.delta
			d.w = append(d.w, w)
			d.area = append(d.area, frac*d.delta*d.delta)
			d.wsum += w
			sinLat := yc*d.sinI + mu*d.cosI
			v := xc * vsini * (1 - st.DiffRotation*sinLat*sinLat)
			d.vrot = append(d.vrot, v)
			d.vcb = append(d.vcb, -cb*mu)
			d.vmax = math.Max(d.vmax, math.Abs(v-cb*mu))
		}
	}
	return d
}

// velGrid is a uniform velocity grid u_k = (k − half)·h, k = 0 … 2·half,
// in km/s.
type velGrid struct {
	h    float64
	half int
}

func (g velGrid) len() int               { return 2*g.half + 1 }
func (g velGrid) at(k int) float64       { return float64(k-g.half) * g.h }
func (g velGrid) span() float64          { return float64(g.half) * g.h }
func newVelGrid(span, h float64) velGrid { return velGrid{h: h, half: int(math.Ceil(span / h))} }

// deposit adds weight w at velocity v (km/s) to the histogram H on grid g,
// shared linearly between the two nearest nodes (cloud in cell), which keeps
// the weight and its first moment exact.
func (g velGrid) deposit(H []float64, v, w float64) {
	p := v/g.h + float64(g.half)
	i := int(math.Floor(p))
	t := p - float64(i)
	if i < 0 || i+1 >= len(H) {
		return
	}
	H[i] += w * (1 - t)
	H[i+1] += w * t
}

// gaussSmooth returns dst[j] = Σ_k H[k] exp(−(u_j − u_k)²/(2σ²)) / norm on
// the grid of H (spacing h, km/s): the disk absorption kernel of a local
// Gaussian line of unit central depth. dst is reused when long enough.
func gaussSmooth(dst, H []float64, h, sigma, norm float64) []float64 {
	n := len(H)
	if cap(dst) < n {
		dst = make([]float64, n)
	}
	dst = dst[:n]
	for i := range dst {
		dst[i] = 0
	}
	m := int(math.Ceil(7 * sigma / h))
	g := make([]float64, 2*m+1)
	for k := -m; k <= m; k++ {
		u := float64(k) * h / sigma
		g[k+m] = math.Exp(-0.5*u*u) / norm
	}
	for k, hk := range H {
		if hk == 0 {
			continue
		}
		lo, hi := k-m, k+m
		if lo < 0 {
			lo = 0
		}
		if hi > n-1 {
			hi = n - 1
		}
		off := m - k
		for j := lo; j <= hi; j++ {
			dst[j] += hk * g[j+off]
		}
	}
	return dst
}
