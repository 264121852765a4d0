package indicators

import (
	"fmt"
	"math"
	"sort"
)

// Region is a wavelength interval in Å (air), as used for the regions a
// mask builder rejects.
type Region struct{ Lo, Hi float64 }

// DefaultTelluric lists wavelength regions (air, Å, observatory frame) with
// strong telluric absorption: H₂O near Na D, O₂ γ, O₂ B, H₂O and O₂ A bands
// (common practice; limits rounded generously).
var DefaultTelluric = []Region{
	{5880, 5990}, {6270, 6330}, {6860, 6960}, {7160, 7340}, {7590, 7700},
}

// DefaultActive lists regions (air, Å, stellar rest frame) around lines that
// respond to activity or are too broad for a binary mask: Ca II H and K,
// H-epsilon, H-delta, H-gamma, H-beta, Mg I b, Na I D, H-alpha (common
// practice).
var DefaultActive = []Region{
	{3923, 3944}, {3958, 3979}, {4096, 4108}, {4336, 4346}, {4855, 4867},
	{5164, 5187}, {5886, 5900}, {6550, 6576},
}

// MaskOptions set how BuildMask derives a mask. A nil *MaskOptions means
// the zero value, whose fields are documented below.
type MaskOptions struct {
	// MinDepth is the smallest relative depth below the local continuum
	// for a line to enter the mask; zero means 0.05.
	MinDepth float64
	// MinSeparation is the smallest velocity distance in m/s to the
	// nearest other line at least half as deep; closer lines are treated
	// as blends and both are rejected. Zero means 2.5 × the median FWHM of
	// the lines found. Lines more than 1.3 times wider than the median are
	// rejected as unresolved blends.
	MinSeparation float64
	// Telluric lists regions (air, observatory frame) to reject, widened
	// by the spread of BERV among the spectra; nil means DefaultTelluric, an
	// empty non-nil slice rejects none.
	Telluric []Region
	// Active lists regions (air, stellar rest frame) to reject; nil means
	// DefaultActive, an empty non-nil slice none.
	Active []Region
	// Systemic is the star's systemic velocity in m/s, used (when
	// FixedSystemic is set) to put the mask in the stellar rest frame.
	Systemic float64
	// FixedSystemic reports whether Systemic is used as given; by default
	// the velocity is estimated from the Na I D and H-alpha minima of the
	// co-added spectrum against their laboratory wavelengths (0 when they
	// are not found), good to about 1 km/s.
	FixedSystemic bool
	// MaxSpectra bounds how many spectra are co-added (the first ones
	// given); zero means all.
	MaxSpectra int
}

// BuildMask derives a weighted line mask from a star's own spectra: it
// co-adds them (each moved to the first one's frame by the difference of
// their BERVs and resampled by linear interpolation onto the first spectrum's grid),
// normalises the co-add by an upper envelope (the 0.9 quantile of the flux
// in windows of 2 Å, interpolated), and keeps local minima deeper than
// MinDepth that are the lowest point of their line down to half depth, and
// neither blended (MinSeparation), nor in a telluric region, nor in an
// activity-sensitive region. Line centres and depths come from a Gaussian
// fitted to each line's core; weights are the depths. The
// mask is moved to the stellar rest frame by the systemic velocity and has
// the air or vacuum scale of the spectra.
//
// Reference: the weighting by line depth follows Pepe et al. 2002, A&A 388,
// 632 (from memory); the rest is common practice. It returns an error
// wrapping ErrNoData when no spectrum is given, ErrScaleMismatch when the
// spectra mix air and vacuum, and ErrNoMaskLines when no line survives.
func BuildMask(spectra []*Spectrum, opts *MaskOptions) (*Mask, error) {
	var o MaskOptions
	if opts != nil {
		o = *opts
	}
	if len(spectra) == 0 {
		return nil, fmt.Errorf("%w: no spectra to build a mask from", ErrNoData)
	}
	if o.MinDepth == 0 {
		o.MinDepth = 0.05
	}
	if !(o.MinDepth > 0 && o.MinDepth < 1) || o.MinSeparation < 0 || o.MaxSpectra < 0 {
		return nil, fmt.Errorf("%w: mask options %+v", ErrBadParameter, o)
	}
	if o.Telluric == nil {
		o.Telluric = DefaultTelluric
	}
	if o.Active == nil {
		o.Active = DefaultActive
	}
	if o.MaxSpectra > 0 && len(spectra) > o.MaxSpectra {
		spectra = spectra[:o.MaxSpectra]
	}
	ref := spectra[0]
	for _, s := range spectra {
		if err := s.validate(true); err != nil {
			return nil, err
		}
		if s.Vacuum != ref.Vacuum {
			return nil, fmt.Errorf("%w: %s and %s", ErrScaleMismatch, ref.Name, s.Name)
		}
	}
	maxBERV := 0.0
	for _, s := range spectra {
		maxBERV = math.Max(maxBERV, math.Abs(s.BERV-ref.BERV))
	}
	// Co-add onto the reference grid, in the observer's frame of the
	// reference: a spectrum with BERV b is moved by D(b)/D(b_ref).
	var found []maskLine
	for _, ord := range ref.Orders {
		n := len(ord.Wavelength)
		sum := make([]float64, n)
		cnt := make([]float64, n)
		for _, s := range spectra {
			d := math.Exp(LogDopplerFactor(s.BERV) - LogDopplerFactor(ref.BERV))
			for _, so := range s.Orders {
				if so.Wavelength[len(so.Wavelength)-1]*d < ord.Wavelength[0] || so.Wavelength[0]*d > ord.Wavelength[n-1] {
					continue
				}
				resampleAdd(sum, cnt, ord.Wavelength, so.Wavelength, so.Flux, d)
			}
		}
		f := make([]float64, n)
		for i := range f {
			if cnt[i] > 0 {
				f[i] = sum[i] / cnt[i]
			} else {
				f[i] = math.NaN()
			}
		}
		cont := envelope(ord.Wavelength, f, 2.0, 0.9)
		for i := 2; i+2 < n; i++ {
			if math.IsNaN(f[i-1]) || math.IsNaN(f[i]) || math.IsNaN(f[i+1]) || !(cont[i] > 0) {
				continue
			}
			if !(f[i] < f[i-1] && f[i] <= f[i+1]) {
				continue
			}
			// The minimum must be the lowest point down to half its depth
			// on both sides (noise makes several minima in one line).
			depth0 := 1 - f[i]/cont[i]
			if depth0 < o.MinDepth {
				continue
			}
			half := cont[i] * (1 - depth0/2)
			l, r := i, i
			lowest := true
			for l > 0 && f[l] < half && !math.IsNaN(f[l]) {
				l--
				if f[l] < f[i] {
					lowest = false
				}
			}
			for r < n-1 && f[r] < half && !math.IsNaN(f[r]) {
				r++
				if f[r] < f[i] {
					lowest = false
				}
			}
			if !lowest || math.IsNaN(f[l]) || math.IsNaN(f[r]) {
				continue
			}
			// Fit a Gaussian to the core (down to half depth, at least 7
			// pixels) in velocity about pixel i.
			for r-l < 6 && l > 0 && r < n-1 {
				l--
				r++
			}
			x := make([]float64, 0, r-l+1)
			y := make([]float64, 0, r-l+1)
			for j := l; j <= r; j++ {
				x = append(x, C*math.Log(ord.Wavelength[j]/ord.Wavelength[i]))
				y = append(y, f[j]/cont[i])
			}
			sg := C * (ord.Wavelength[r] - ord.Wavelength[l]) / ord.Wavelength[i] / 2.3548
			res, ok := lmFit(x, y, ones(len(x)), []float64{1, depth0, 0, math.Max(sg, 1)}, gaussModel, 100)
			if !ok || math.Abs(res.theta[2]) > x[len(x)-1]-x[0] {
				continue
			}
			lam := ord.Wavelength[i] * math.Exp(LogDopplerFactor(res.theta[2]))
			depth := res.theta[1] / res.theta[0]
			fwhm := 2.3548 * math.Abs(res.theta[3])
			if depth < o.MinDepth || depth >= 1 {
				continue
			}
			found = append(found, maskLine{lam, depth, fwhm})
		}
	}
	if len(found) == 0 {
		return nil, fmt.Errorf("%w: no line deeper than %.3g in the co-added spectra", ErrNoMaskLines, o.MinDepth)
	}
	sort.Slice(found, func(a, b int) bool { return found[a].lambda < found[b].lambda })
	// Systemic velocity.
	vsys := o.Systemic
	if !o.FixedSystemic {
		vsys = VelocityFromLog(LogDopplerFactor(estimateSystemic(ref, found)) + LogDopplerFactor(ref.BERV))
	}
	// Blends.
	ws := make([]float64, len(found))
	for i, l := range found {
		ws[i] = l.fwhm
	}
	sort.Float64s(ws)
	medFWHM := ws[len(ws)/2]
	sep := o.MinSeparation
	if sep == 0 {
		sep = 2.5 * medFWHM
	}
	// Unresolved blends show up as lines much wider than the median.
	keep := make([]bool, len(found))
	for i := range keep {
		keep[i] = found[i].fwhm <= 1.3*medFWHM
	}
	for i := range found {
		for j := i + 1; j < len(found) && C*(found[j].lambda-found[i].lambda)/found[i].lambda < sep; j++ {
			if found[j].depth >= found[i].depth/2 {
				keep[i] = false
			}
			if found[i].depth >= found[j].depth/2 {
				keep[j] = false
			}
		}
	}
	// Rest wavelength = co-added wavelength · D(BERV_ref)/D(v_sys).
	dsys := math.Exp(LogDopplerFactor(vsys) - LogDopplerFactor(ref.BERV))
	inAny := func(lam float64, regs []Region, vacuum bool, widen float64) bool {
		for _, r := range regs {
			lo := onScale(r.Lo, false, vacuum) * (1 - widen/C)
			hi := onScale(r.Hi, false, vacuum) * (1 + widen/C)
			if lam >= lo && lam <= hi {
				return true
			}
		}
		return false
	}
	var wl, wt []float64
	for i, l := range found {
		if !keep[i] {
			continue
		}
		// Telluric regions are fixed in the observatory frame; in the
		// co-add they are smeared by the spread of BERV.
		if inAny(l.lambda, o.Telluric, ref.Vacuum, maxBERV) {
			continue
		}
		rest := l.lambda / dsys
		if inAny(rest, o.Active, ref.Vacuum, 0) {
			continue
		}
		wl = append(wl, rest)
		wt = append(wt, l.depth)
	}
	if len(wl) == 0 {
		return nil, fmt.Errorf("%w: every line was rejected as a blend, telluric or active", ErrNoMaskLines)
	}
	m, err := NewMask(wl, wt, ref.Vacuum)
	if err != nil {
		return nil, err
	}
	m.Name = "built from " + ref.Name
	return m, nil
}

// maskLine is a minimum found in a co-added spectrum.
type maskLine struct{ lambda, depth, fwhm float64 }

func ones(n int) []float64 {
	w := make([]float64, n)
	for i := range w {
		w[i] = 1
	}
	return w
}

// resampleAdd adds flux (at wavelengths src·d) linearly interpolated onto
// the grid dst to sum, counting contributions in cnt.
func resampleAdd(sum, cnt, dst, src, flux []float64, d float64) {
	j := 0
	for i, w := range dst {
		w /= d
		if w < src[0] || w > src[len(src)-1] {
			continue
		}
		for j+1 < len(src)-1 && src[j+1] < w {
			j++
		}
		t := (w - src[j]) / (src[j+1] - src[j])
		sum[i] += flux[j] + t*(flux[j+1]-flux[j])
		cnt[i]++
	}
}

// envelope estimates the continuum as the q-quantile of the flux in
// windows of width w Å, linearly interpolated between window centres.
func envelope(wl, f []float64, w, q float64) []float64 {
	n := len(wl)
	var cx, cy []float64
	buf := make([]float64, 0, 256)
	for i0 := 0; i0 < n; {
		i1 := i0
		for i1 < n && wl[i1] < wl[i0]+w {
			i1++
		}
		buf = buf[:0]
		for i := i0; i < i1; i++ {
			if !math.IsNaN(f[i]) {
				buf = append(buf, f[i])
			}
		}
		if len(buf) > 0 {
			sort.Float64s(buf)
			cx = append(cx, 0.5*(wl[i0]+wl[i1-1]))
			cy = append(cy, buf[int(q*float64(len(buf)-1))])
		}
		i0 = i1
	}
	out := make([]float64, n)
	if len(cx) == 0 {
		return out
	}
	k := 0
	for i, x := range wl {
		for k+1 < len(cx)-1 && cx[k+1] < x {
			k++
		}
		if len(cx) == 1 {
			out[i] = cy[0]
			continue
		}
		t := (x - cx[k]) / (cx[k+1] - cx[k])
		t = math.Max(-0.5, math.Min(1.5, t))
		out[i] = cy[k] + t*(cy[k+1]-cy[k])
	}
	return out
}

// estimateSystemic returns the median velocity offset of the deepest found
// minima near Na I D1, D2 and H-alpha from their laboratory wavelengths,
// in the frame of the co-add; 0 when none is found within ±150 km/s.
func estimateSystemic(ref *Spectrum, found []maskLine) float64 {
	var vs []float64
	for _, b := range []Band{BandNaD1, BandNaD2, BandHAlpha} {
		lab := onScale(b.Center, false, ref.Vacuum)
		best, bd := -1, 0.0
		for i, l := range found {
			v := C * (l.lambda - lab) / lab
			if math.Abs(v) < 150e3 && l.depth > bd {
				best, bd = i, l.depth
			}
		}
		if best >= 0 && bd > 0.3 {
			vs = append(vs, Velocity(found[best].lambda/lab))
		}
	}
	if len(vs) == 0 {
		return 0
	}
	sort.Float64s(vs)
	return vs[len(vs)/2]
}
