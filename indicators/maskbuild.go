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
	// Systemic is the star's barycentric systemic velocity in m/s, used
	// (when FixedSystemic is set) to put the mask in the stellar rest frame.
	Systemic float64
	// FixedSystemic reports whether Systemic is used as given; by default
	// the rest frame is found by identifying lines of the co-added
	// spectrum in LabLines.
	FixedSystemic bool
	// MaxSpectra bounds how many spectra are co-added (the first ones
	// given); zero means all.
	MaxSpectra int
}

// ZeroPoint says how a built mask's rest frame was set.
type ZeroPoint int

const (
	// ZeroNone: no rest frame; the mask is in the observer's frame of its
	// first spectrum, and velocities measured with it are relative.
	ZeroNone ZeroPoint = iota
	// ZeroLabLines: lines of the co-added spectrum were identified in
	// LabLines.
	ZeroLabLines
	// ZeroGiven: the systemic velocity was given (MaskOptions.Systemic).
	ZeroGiven
)

// MaskBuild records how BuildMask made a mask.
type MaskBuild struct {
	// Spectra names the spectra co-added.
	Spectra []string
	// LeftOut names the spectra left out of the co-add, with the reason.
	LeftOut []LeftOut
	// ZeroPoint says how the rest frame was set.
	ZeroPoint ZeroPoint
	// Systemic and SystemicSigma are the star's barycentric velocity and
	// its statistical error in m/s (NaN with ZeroNone; SystemicSigma is NaN
	// with ZeroGiven). The error leaves out the systematic floor of about
	// 0.5 km/s (see LabLines).
	Systemic, SystemicSigma float64
	// Identified is the number of LabLines matched, Candidates the number
	// that fall inside the spectra.
	Identified, Candidates int
	// StrongOnly reports whether the rest frame rests on the broad strong
	// lines only (StrongLabLines): too few of LabLines were matched.
	StrongOnly bool
	// Problem says, with ZeroNone, why no line could be identified.
	Problem string
}

// StrongLabLines are the broad strong lines of LabLines (Ca II K and H,
// the Balmer lines, Mg I b, Ca I 4227, Na I D), air, Å, from the same
// source. BuildMask falls back on them when too few of LabLines are found.
var StrongLabLines = []LabLine{
	{"Ca II", 3933.663}, {"Ca II", 3968.468}, {"H I", 4101.734}, {"Ca I", 4226.728},
	{"H I", 4340.462}, {"H I", 4861.323}, {"Mg I", 5167.321}, {"Mg I", 5172.684},
	{"Mg I", 5183.604}, {"Na I", 5889.951}, {"Na I", 5895.924}, {"H I", 6562.797},
}

// LeftOut is a spectrum left out of a mask's co-add.
type LeftOut struct {
	Name, Reason string
}

// BuildMask derives a weighted line mask from a star's own spectra.
//
// Each spectrum is moved to the first one's frame by the ratio of their
// barycentric factors, resampled by linear interpolation onto the first
// spectrum's grid and scaled to a median of 1; the co-add is the median of
// these, pixel by pixel, so that one odd spectrum cannot dominate it.
// A spectrum whose flux hardly correlates with the co-add (correlation
// below half the median of all spectra's, or undefined, as for a constant
// flux) is named in Build.LeftOut and left out. The co-add is normalised
// by an upper envelope (the 0.9 quantile of the flux in windows of 2 Å,
// interpolated); local minima deeper than MinDepth that are the lowest
// point of their line down to half depth, and neither blended
// (MinSeparation), nor in a telluric region, nor in an activity-sensitive
// region, are kept. Line centres and depths come from a Gaussian fitted to
// each line's core; weights are the depths.
//
// The rest frame: unless FixedSystemic, the minima of the co-add are
// matched against LabLines (on the spectra's air or vacuum scale) over
// velocities within ±600 km/s; the velocity where most laboratory lines
// find a minimum within a tolerance (a quarter of the median line FWHM,
// 1.5 to 5 km/s) is accepted when that count stands clear of chance
// matches (at least 6 and above the median count over all velocities by
// 6 times its square root, plus 3), and refined to the mean offset of the
// matched lines after clipping. The mask then carries rest wavelengths and
// Build reports the barycentric systemic velocity with its error. When no
// match is good enough the mask is left in the first spectrum's frame,
// Relative is set and Build.Problem says why: velocities measured with it
// are relative, and Measure leaves the chromospheric indices out.
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
	if !(o.MinDepth > 0 && o.MinDepth < 1) || o.MinSeparation < 0 || o.MaxSpectra < 0 || math.IsNaN(o.Systemic) || math.Abs(o.Systemic) >= C {
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
	build := &MaskBuild{Systemic: math.NaN(), SystemicSigma: math.NaN()}
	coadd, used, err := coAdd(spectra, build)
	if err != nil {
		return nil, err
	}
	maxBERV := 0.0
	for j, s := range spectra {
		if used[j] {
			maxBERV = math.Max(maxBERV, C*math.Abs(s.baryLog()-ref.baryLog()))
			build.Spectra = append(build.Spectra, s.Name)
		}
	}
	var found []maskLine
	for oi, ord := range ref.Orders {
		found = append(found, findLines(ord.Wavelength, coadd[oi], o.MinDepth)...)
	}
	if len(found) == 0 {
		return nil, fmt.Errorf("%w: no line deeper than %.3g in the co-added spectra", ErrNoMaskLines, o.MinDepth)
	}
	sort.Slice(found, func(a, b int) bool { return found[a].lambda < found[b].lambda })
	ws := make([]float64, len(found))
	for i, l := range found {
		ws[i] = l.fwhm
	}
	sort.Float64s(ws)
	medFWHM := ws[len(ws)/2]
	// The rest frame: vco is the star's velocity in the co-add's frame.
	vco := 0.0
	switch {
	case o.FixedSystemic:
		vco = VelocityFromLog(LogDopplerFactor(o.Systemic) - ref.baryLog())
		build.ZeroPoint, build.Systemic = ZeroGiven, o.Systemic
	default:
		lo, hi := math.Inf(1), math.Inf(-1)
		for _, ord := range ref.Orders {
			lo = math.Min(lo, ord.Wavelength[0])
			hi = math.Max(hi, ord.Wavelength[len(ord.Wavelength)-1])
		}
		id := identifyLines(found, ref.Vacuum, lo, hi, medFWHM)
		if id.problem != "" {
			// Few laboratory lines, but the strongest broad ones may be
			// there (spectra of invented lines plus the strong lines).
			if id2 := identifyStrong(ref, coadd, found); id2.problem == "" {
				id = id2
				build.StrongOnly = true
			} else {
				id.problem += "; " + id2.problem
			}
		}
		build.Identified, build.Candidates = id.n, id.candidates
		if id.problem != "" {
			build.Problem = id.problem
		} else {
			vco = id.v
			build.ZeroPoint = ZeroLabLines
			build.Systemic = ref.BarycentricVelocity(vco)
			build.SystemicSigma = id.sigma
		}
	}
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
	// Rest wavelength = co-added wavelength / D(vco).
	dsys := DopplerFactor(vco)
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
	m.Build = build
	m.Relative = build.ZeroPoint == ZeroNone
	return m, nil
}

// coAdd resamples every spectrum onto the first one's grid and frame,
// scales each to a median of 1 per order and returns the pixel-wise median
// per order of the reference, leaving out (and recording in b) spectra that
// do not follow the others. used reports which spectra were kept.
func coAdd(spectra []*Spectrum, b *MaskBuild) (coadd [][]float64, used []bool, err error) {
	ref := spectra[0]
	ns := len(spectra)
	stacks := make([][][]float32, len(ref.Orders))
	for oi, ord := range ref.Orders {
		n := len(ord.Wavelength)
		st := make([][]float32, ns)
		sum := make([]float64, n)
		cnt := make([]float64, n)
		for j, s := range spectra {
			clear(sum)
			clear(cnt)
			d := math.Exp(s.baryLog() - ref.baryLog())
			for _, so := range s.Orders {
				if so.Wavelength[len(so.Wavelength)-1]*d < ord.Wavelength[0] || so.Wavelength[0]*d > ord.Wavelength[n-1] {
					continue
				}
				resampleAdd(sum, cnt, ord.Wavelength, so.Wavelength, so.Flux, d)
			}
			row := make([]float32, n)
			var vals []float64
			for i := range row {
				if cnt[i] > 0 {
					row[i] = float32(sum[i] / cnt[i])
					vals = append(vals, sum[i]/cnt[i])
				} else {
					row[i] = float32(math.NaN())
				}
			}
			if len(vals) > 0 {
				med := quickMedian(vals)
				if med > 0 {
					for i := range row {
						row[i] /= float32(med)
					}
				}
			}
			st[j] = row
		}
		stacks[oi] = st
	}
	used = make([]bool, ns)
	for j := range used {
		used[j] = true
	}
	median := func() [][]float64 {
		out := make([][]float64, len(stacks))
		buf := make([]float64, 0, ns)
		for oi, st := range stacks {
			n := len(ref.Orders[oi].Wavelength)
			f := make([]float64, n)
			for i := range f {
				buf = buf[:0]
				for j := range st {
					if used[j] && st[j][i] == st[j][i] {
						buf = append(buf, float64(st[j][i]))
					}
				}
				if len(buf) == 0 {
					f[i] = math.NaN()
					continue
				}
				sort.Float64s(buf)
				k := len(buf) / 2
				if len(buf)%2 == 1 {
					f[i] = buf[k]
				} else {
					f[i] = 0.5 * (buf[k-1] + buf[k])
				}
			}
			out[oi] = f
		}
		return out
	}
	coadd = median()
	if ns < 3 {
		return coadd, used, nil
	}
	// Correlation of each spectrum with the co-add.
	r := make([]float64, ns)
	for j := 0; j < ns; j++ {
		var n, sx, sy, sxx, syy, sxy float64
		for oi, st := range stacks {
			f := coadd[oi]
			for i, x32 := range st[j] {
				x, y := float64(x32), f[i]
				if x != x || y != y {
					continue
				}
				n++
				sx += x
				sy += y
				sxx += x * x
				syy += y * y
				sxy += x * y
			}
		}
		cov := sxy - sx*sy/n
		vx, vy := sxx-sx*sx/n, syy-sy*sy/n
		r[j] = cov / math.Sqrt(vx*vy)
		if !(vx > 1e-12*n) || !(vy > 0) {
			r[j] = math.NaN()
		}
	}
	var good []float64
	for _, x := range r {
		if !math.IsNaN(x) {
			good = append(good, x)
		}
	}
	medR := math.NaN()
	if len(good) > 0 {
		medR = quickMedian(good)
	}
	if !(medR > 0) {
		return nil, nil, fmt.Errorf("%w: the spectra do not share their lines (median correlation with their co-add %.2g); is the star the same in all of them?", ErrNoMaskLines, medR)
	}
	left := false
	for j, s := range spectra {
		switch {
		case math.IsNaN(r[j]):
			used[j] = false
			b.LeftOut = append(b.LeftOut, LeftOut{s.Name, "its flux is constant (no lines)"})
		case r[j] < 0.5*medR:
			used[j] = false
			b.LeftOut = append(b.LeftOut, LeftOut{s.Name, fmt.Sprintf("its flux does not follow the other spectra's lines (correlation %.2f with their co-add, median %.2f)", r[j], medR)})
		default:
			continue
		}
		left = true
	}
	if left {
		coadd = median()
	}
	return coadd, used, nil
}

func quickMedian(x []float64) float64 {
	c := append([]float64(nil), x...)
	sort.Float64s(c)
	return c[len(c)/2]
}

// findLines returns the minima of one order of the co-add f (on the grid
// wl) deeper than minDepth below its envelope, with Gaussian-fitted
// centres, depths and widths.
func findLines(wl, f []float64, minDepth float64) []maskLine {
	n := len(wl)
	var found []maskLine
	cont := envelope(wl, f, 2.0, 0.9)
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
		if depth0 < minDepth {
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
		bad := false
		for j := l; j <= r; j++ {
			if math.IsNaN(f[j]) {
				bad = true
				break
			}
			x = append(x, C*math.Log(wl[j]/wl[i]))
			y = append(y, f[j]/cont[i])
		}
		if bad {
			continue
		}
		sg := C * (wl[r] - wl[l]) / wl[i] / 2.3548
		res, ok := lmFit(x, y, ones(len(x)), []float64{1, depth0, 0, math.Max(sg, 1)}, gaussModel, 100)
		if !ok || math.Abs(res.theta[2]) > x[len(x)-1]-x[0] {
			continue
		}
		lam := wl[i] * math.Exp(LogDopplerFactor(res.theta[2]))
		depth := res.theta[1] / res.theta[0]
		fwhm := 2.3548 * math.Abs(res.theta[3])
		if depth < minDepth || depth >= 1 {
			continue
		}
		found = append(found, maskLine{lam, depth, fwhm})
	}
	return found
}

// identification is the outcome of identifyLines.
type identification struct {
	v, sigma      float64 // velocity of the lines in the co-add's frame, m/s
	n, candidates int
	problem       string
}

// identifyLines matches the found minima against LabLines; see BuildMask.
func identifyLines(found []maskLine, vacuum bool, lo, hi, fwhm float64) identification {
	const vmax = 600e3
	tol := math.Min(5e3, math.Max(1.5e3, 0.25*fwhm))
	lam := make([]float64, len(found))
	for i, l := range found {
		lam[i] = l.lambda
	}
	var lab []float64
	for _, l := range LabLines {
		w := onScale(l.Air, false, vacuum)
		if w*(1+vmax/C) > lo && w*(1-vmax/C) < hi {
			lab = append(lab, w)
		}
	}
	id := identification{candidates: len(lab)}
	if len(lab) == 0 {
		id.problem = fmt.Sprintf("the spectra (%.0f–%.0f Å) hold none of the %d laboratory lines", lo, hi, len(LabLines))
		return id
	}
	// Histogram of pair offsets, bins of tol/4.
	bw := tol / 4
	nb := int(2*vmax/bw) + 1
	hist := make([]float64, nb)
	type pair struct {
		lab int
		u   float64
	}
	var pairs []pair
	for li, w := range lab {
		a := sort.SearchFloat64s(lam, w*(1-(vmax+tol)/C))
		for k := a; k < len(lam) && lam[k] <= w*(1+(vmax+tol)/C); k++ {
			u := Velocity(lam[k] / w)
			pairs = append(pairs, pair{li, u})
			if b := int((u + vmax) / bw); b >= 0 && b < nb {
				hist[b]++
			}
		}
	}
	// Counts in windows of ±tol.
	half := 4
	win := make([]float64, nb)
	var run float64
	for b := 0; b < nb+half; b++ {
		if b < nb {
			run += hist[b]
		}
		if b-2*half-1 >= 0 {
			run -= hist[b-2*half-1]
		}
		if c := b - half; c >= 0 && c < nb {
			win[c] = run
		}
	}
	best := 0
	for b := range win {
		if win[b] > win[best] {
			best = b
		}
	}
	bg := quickMedian(win)
	peak := win[best]
	vpeak := -vmax + (float64(best)+0.5)*bw
	need := math.Max(6, bg+6*math.Sqrt(bg)+3)
	if peak < need {
		id.problem = fmt.Sprintf("no velocity within ±%.0f km/s lines up the co-added spectrum's %d minima with the %d laboratory lines in its range (best: %.0f matches at %+.1f km/s; chance gives about %.1f, %.0f needed)", vmax/1e3, len(found), len(lab), peak, vpeak/1e3, bg, math.Ceil(need))
		return id
	}
	// Refine: per laboratory line, the nearest minimum to the peak.
	bestU := make([]float64, len(lab))
	for i := range bestU {
		bestU[i] = math.NaN()
	}
	for _, p := range pairs {
		if d := math.Abs(p.u - vpeak); d <= 1.5*tol && (math.IsNaN(bestU[p.lab]) || d < math.Abs(bestU[p.lab]-vpeak)) {
			bestU[p.lab] = p.u
		}
	}
	var us []float64
	for _, u := range bestU {
		if !math.IsNaN(u) {
			us = append(us, u)
		}
	}
	for iter := 0; iter < 3 && len(us) >= 3; iter++ {
		med := quickMedian(us)
		dev := make([]float64, len(us))
		for i, u := range us {
			dev[i] = math.Abs(u - med)
		}
		mad := 1.4826 * quickMedian(dev)
		lim := math.Max(3*mad, 200)
		var kept []float64
		for _, u := range us {
			if math.Abs(u-med) <= lim {
				kept = append(kept, u)
			}
		}
		if len(kept) == len(us) {
			break
		}
		us = kept
	}
	var m, s2 float64
	for _, u := range us {
		m += u
	}
	m /= float64(len(us))
	for _, u := range us {
		s2 += (u - m) * (u - m)
	}
	id.n = len(us)
	id.v = m
	if len(us) > 1 {
		id.sigma = math.Sqrt(s2 / float64(len(us)-1) / float64(len(us)))
	} else {
		id.sigma = math.NaN()
	}
	return id
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

// identifyStrong finds the velocity of the broad troughs of Ca II H and K
// and the Balmer lines (of StrongLabLines) in the co-add by a
// cross-correlation of its depth below a wide envelope (the 0.95 quantile
// in 20 Å windows), 1 − f/envelope, with windows of ±100 km/s about each
// line, over ±600 km/s in steps of 2 km/s. Troughs Ångströms wide dominate
// it whatever narrow lines surround them, and an emission core, being
// symmetric, does not move it. The peak must stand 5 robust standard
// deviations (1.4826 × the median absolute deviation) above the median;
// the velocity is the centroid of the peak above its half height, its
// error the scatter of the same centroid line by line over the square root
// of their number. The narrow strong lines (Na I D, Mg I b, Ca I 4227)
// then refine it: when at least two minima within 20 km/s agree within
// 3 km/s, their mean (and scatter) replace it.
func identifyStrong(ref *Spectrum, coadd [][]float64, found []maskLine) identification {
	const vmax, half, step = 600e3, 100e3, 2e3
	type ordDepth struct {
		lnw, cum []float64 // ln λ and the running sum of the depth
	}
	var ods []ordDepth
	for oi, ord := range ref.Orders {
		f := coadd[oi]
		// A wide envelope (20 Å windows), so that the broad troughs of
		// Ca II H and K and the Balmer lines keep their depth.
		cont := envelope(ord.Wavelength, f, 20.0, 0.95)
		od := ordDepth{lnw: make([]float64, len(f)), cum: make([]float64, len(f)+1)}
		for i, w := range ord.Wavelength {
			od.lnw[i] = math.Log(w)
			d := 0.0
			if f[i] == f[i] && cont[i] > 0 {
				d = math.Max(0, 1-f[i]/cont[i])
			}
			od.cum[i+1] = od.cum[i] + d
		}
		ods = append(ods, od)
	}
	// meanDepth is the mean depth over ln λ in [a, b], NaN when no order
	// covers it.
	meanDepth := func(a, b float64) float64 {
		for _, od := range ods {
			n := len(od.lnw)
			if a < od.lnw[0] || b > od.lnw[n-1] {
				continue
			}
			i0 := sort.SearchFloat64s(od.lnw, a)
			i1 := sort.SearchFloat64s(od.lnw, b)
			if i1 <= i0 {
				return math.NaN()
			}
			return (od.cum[i1] - od.cum[i0]) / float64(i1-i0)
		}
		return math.NaN()
	}
	nv := int(2*vmax/step) + 1
	vel := make([]float64, nv)
	for k := range vel {
		vel[k] = -vmax + float64(k)*step
	}
	// Lines covered over the whole search range.
	var lab []float64
	for _, sl := range StrongLabLines {
		if sl.Species != "Ca II" && sl.Species != "H I" {
			continue // the broad troughs only
		}
		ln := math.Log(onScale(sl.Air, false, ref.Vacuum))
		if !math.IsNaN(meanDepth(ln+LogDopplerFactor(-vmax-half), ln+LogDopplerFactor(-vmax+half))) &&
			!math.IsNaN(meanDepth(ln+LogDopplerFactor(vmax-half), ln+LogDopplerFactor(vmax+half))) {
			lab = append(lab, ln)
		}
	}
	id := identification{candidates: len(lab)}
	if len(lab) < 2 {
		id.problem = fmt.Sprintf("nor do the spectra cover enough of the broad troughs (Ca II H and K, Balmer): %d", len(lab))
		return id
	}
	perLine := make([][]float64, len(lab))
	total := make([]float64, nv)
	for li, ln := range lab {
		perLine[li] = make([]float64, nv)
		for k, v := range vel {
			c := ln + LogDopplerFactor(v)
			d := meanDepth(c-half/C, c+half/C)
			perLine[li][k] = d
			total[k] += d
		}
	}
	centroid := func(y []float64, near int) (float64, bool) {
		med := quickMedian(y)
		peak := near
		for k := max(0, near-5); k < min(nv, near+6); k++ {
			if y[k] > y[peak] {
				peak = k
			}
		}
		lim := 0.5 * (y[peak] + med)
		var sw, sv float64
		for k := peak; k >= 0 && y[k] > lim; k-- {
			sw += y[k] - lim
			sv += (y[k] - lim) * vel[k]
		}
		for k := peak + 1; k < nv && y[k] > lim; k++ {
			sw += y[k] - lim
			sv += (y[k] - lim) * vel[k]
		}
		if !(sw > 0) {
			return 0, false
		}
		return sv / sw, true
	}
	best := 0
	for k := range total {
		if total[k] > total[best] {
			best = k
		}
	}
	med := quickMedian(total)
	dev := make([]float64, nv)
	for k, t := range total {
		dev[k] = math.Abs(t - med)
	}
	rsd := 1.4826 * quickMedian(dev)
	if !(total[best]-med > 5*rsd) {
		id.problem = fmt.Sprintf("nor does the depth of the %d broad troughs (Ca II H and K, Balmer) peak clearly at one velocity (best %+.0f km/s, %.1f robust standard deviations)", len(lab), vel[best]/1e3, (total[best]-med)/rsd)
		return id
	}
	v, ok := centroid(total, best)
	if !ok {
		id.problem = "the strong lines' depth has no clear peak"
		return id
	}
	var us []float64
	for _, y := range perLine {
		if u, ok := centroid(y, best); ok && math.Abs(u-v) < half {
			us = append(us, u)
		}
	}
	// Refine with the narrow strong lines (Na I D, Mg I b, Ca I 4227): the
	// minima within 20 km/s of the troughs' velocity; when at least two
	// agree within 3 km/s of their median, their mean is the velocity.
	var narrow []float64
	for _, sl := range StrongLabLines {
		if sl.Species == "Ca II" || sl.Species == "H I" {
			continue
		}
		lab := onScale(sl.Air, false, ref.Vacuum)
		bestU := math.NaN()
		for _, l := range found {
			u := Velocity(l.lambda / lab)
			if math.Abs(u-v) < 20e3 && (math.IsNaN(bestU) || math.Abs(u-v) < math.Abs(bestU-v)) {
				bestU = u
			}
		}
		if !math.IsNaN(bestU) {
			narrow = append(narrow, bestU)
		}
	}
	if len(narrow) >= 2 {
		m := quickMedian(narrow)
		var agree []float64
		for _, u := range narrow {
			if math.Abs(u-m) <= 3e3 {
				agree = append(agree, u)
			}
		}
		if len(agree) >= 2 {
			us = agree
			v = 0
			for _, u := range us {
				v += u
			}
			v /= float64(len(us))
		}
	}
	id.v, id.n = v, len(us)
	id.sigma = math.NaN()
	if len(us) >= 2 {
		var m, s2 float64
		for _, u := range us {
			m += u
		}
		m /= float64(len(us))
		for _, u := range us {
			s2 += (u - m) * (u - m)
		}
		id.sigma = math.Sqrt(s2 / float64(len(us)-1) / float64(len(us)))
	}
	return id
}
