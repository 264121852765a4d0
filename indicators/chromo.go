package indicators

import (
	"fmt"
	"math"
)

// Band is a wavelength band for a flux integral.
type Band struct {
	// Name labels the band in error messages.
	Name string
	// Center is the band centre in Å in air, in the stellar rest frame.
	Center float64
	// Width is the full width in Å of a rectangular band, or the FWHM of a
	// triangular one (which then reaches zero at Center ± Width).
	Width float64
	// Triangular reports whether the band is the triangular passband
	// T(λ) = max(0, 1 − |λ − Center|/Width) instead of a rectangle.
	Triangular bool
}

// The Mount Wilson S-index bands (Vaughan, Preston & Wilson 1978, PASP 90,
// 267; Duncan et al. 1991, ApJS 76, 383; centres from memory), in air.
var (
	BandCaK = Band{Name: "Ca II K", Center: 3933.664, Width: 1.09, Triangular: true}
	BandCaH = Band{Name: "Ca II H", Center: 3968.470, Width: 1.09, Triangular: true}
	BandV   = Band{Name: "V continuum", Center: 3901.07, Width: 20}
	BandR   = Band{Name: "R continuum", Center: 4001.07, Width: 20}
)

// H-alpha index bands (Gomes da Silva et al. 2011, A&A 534, A30; Boisse et
// al. 2009, A&A 495, 959; from memory), in air.
var (
	BandHAlpha  = Band{Name: "H-alpha core", Center: 6562.808, Width: 1.6}
	BandHAlphaL = Band{Name: "H-alpha blue reference", Center: 6550.87, Width: 10.75}
	BandHAlphaR = Band{Name: "H-alpha red reference", Center: 6580.31, Width: 8.75}
)

// Na I D index bands (Díaz et al. 2007, MNRAS 378, 1007; core widths Gomes da
// Silva et al. 2011; reference bands from memory), in air.
var (
	BandNaD1  = Band{Name: "Na I D1", Center: 5895.92, Width: 0.5}
	BandNaD2  = Band{Name: "Na I D2", Center: 5889.95, Width: 0.5}
	BandNaDR1 = Band{Name: "Na I D blue reference", Center: 5805.0, Width: 10}
	BandNaDR2 = Band{Name: "Na I D red reference", Center: 6090.0, Width: 20}
)

// bandSum is a band integral and its photon-noise variance.
type bandSum struct{ sum, v float64 }

// integrateBand returns ∫ F(λ) T(λ) dλ over the band, with F constant over
// each pixel (between the midpoints of neighbouring pixel centres) and T the
// band's passband, and its variance Σ σ_x² (∫_pixel T dλ)². The band is
// taken to the spectrum's air or vacuum scale and multiplied by the Doppler
// factor of the star's velocity rv (m/s), so that it is applied in the
// stellar rest frame. The band must lie entirely inside one order, else the
// error wraps ErrOutsideSpectrum.
func integrateBand(s *Spectrum, orders []ccfOrder, b Band, rv float64) (bandSum, error) {
	d := DopplerFactor(rv)
	c := onScale(b.Center, false, s.Vacuum) * d
	half := b.Width / 2
	if b.Triangular {
		half = b.Width
	}
	// The width scales with the Doppler factor and, negligibly, with the
	// air/vacuum ratio.
	half *= c / b.Center
	lo, hi := c-half, c+half
	best := -1
	for i := range orders {
		o := &orders[i]
		if lo >= o.edge(0) && hi <= o.edge(o.n()) {
			// Prefer the order where the band sits most centrally.
			if best < 0 || centrality(orders[i], c) > centrality(orders[best], c) {
				best = i
			}
		}
	}
	if best < 0 {
		return bandSum{}, fmt.Errorf("%w: %s band %.3f–%.3f Å (rest %.3f Å, %s) not covered", ErrOutsideSpectrum, b.Name, lo, hi, b.Center, "air")
	}
	o := &orders[best]
	// First pixel whose upper edge exceeds lo.
	x := o.search(lo)
	var r bandSum
	for ; x < len(o.flux) && o.edge(x) < hi; x++ {
		a, bb := math.Max(o.edge(x), lo), math.Min(o.edge(x+1), hi)
		if bb <= a {
			continue
		}
		var wgt float64
		if b.Triangular {
			wgt = triPrimitive(bb-c, half) - triPrimitive(a-c, half)
		} else {
			wgt = bb - a
		}
		r.sum += o.flux[x] * wgt
		r.v += o.sig2(x) * wgt * wgt
	}
	return r, nil
}

func centrality(o ccfOrder, c float64) float64 {
	return math.Min(c-o.edge(0), o.edge(o.n())-c)
}

// triPrimitive is ∫_{−a}^{u} max(0, 1 − |t|/a) dt.
func triPrimitive(u, a float64) float64 {
	switch {
	case u <= -a:
		return 0
	case u <= 0:
		return (u + a) * (u + a) / (2 * a)
	case u < a:
		return a/2 + u - u*u/(2*a)
	default:
		return a
	}
}

// SIndexCalibration maps an instrumental S-index onto the Mount Wilson scale,
// S_MW = A·S_inst + B. The zero value (A = 0) means A = 1, B as given.
type SIndexCalibration struct {
	A, B float64
}

// SIndex returns the Mount Wilson S-index of s, with its photon-noise error,
// from the spectrograph form
//
//	S_inst = (H + K)/(R + V),   S_MW = a·S_inst + b,
//
// where H and K are flux integrals over triangular passbands of FWHM 1.09 Å
// at the Ca II H and K lines and R and V flux integrals over 20 Å rectangles
// at 4001.07 and 3901.07 Å (Vaughan, Preston & Wilson 1978, PASP 90, 267;
// Duncan et al. 1991, ApJS 76, 383; from memory), with (a, b) the user's
// calibration cal (nil: a = 1, b = 0). The bands are shifted into the
// stellar rest frame by the star's velocity rv (m/s, in the spectrum's
// frame). A flat spectrum gives S_inst = 2·1.09/(2·20) = 0.0545. A band not
// covered by the spectrum is an error wrapping ErrOutsideSpectrum.
func SIndex(s *Spectrum, rv float64, cal *SIndexCalibration) (value, sigma float64, err error) {
	if err := s.validate(true); err != nil {
		return 0, 0, err
	}
	return sIndex(s, prepareOrders(s, 0), rv, cal)
}

func sIndex(s *Spectrum, orders []ccfOrder, rv float64, cal *SIndexCalibration) (float64, float64, error) {
	a, b := 1.0, 0.0
	if cal != nil {
		if cal.A != 0 {
			a = cal.A
		}
		b = cal.B
	}
	var sums [4]bandSum
	for i, band := range []Band{BandCaH, BandCaK, BandR, BandV} {
		r, err := integrateBand(s, orders, band, rv)
		if err != nil {
			return math.NaN(), math.NaN(), fmt.Errorf("S-index: %w", err)
		}
		sums[i] = r
	}
	num := sums[0].sum + sums[1].sum
	den := sums[2].sum + sums[3].sum
	if !(den > 0) {
		return math.NaN(), math.NaN(), fmt.Errorf("S-index: %w: no flux in the R and V bands", ErrBadParameter)
	}
	sInst := num / den
	vNum := sums[0].v + sums[1].v
	vDen := sums[2].v + sums[3].v
	v := (vNum + sInst*sInst*vDen) / (den * den)
	return a*sInst + b, math.Abs(a) * math.Sqrt(v), nil
}

// bandRatio returns (Σ mean flux of num bands)/(Σ mean flux of den bands)
// and its photon-noise error.
func bandRatio(s *Spectrum, orders []ccfOrder, rv float64, num, den []Band, what string) (float64, float64, error) {
	sum := func(bs []Band) (float64, float64, error) {
		var m, v float64
		for _, b := range bs {
			r, err := integrateBand(s, orders, b, rv)
			if err != nil {
				return 0, 0, fmt.Errorf("%s: %w", what, err)
			}
			m += r.sum / b.Width
			v += r.v / (b.Width * b.Width)
		}
		return m, v, nil
	}
	n, vn, err := sum(num)
	if err != nil {
		return math.NaN(), math.NaN(), err
	}
	d, vd, err := sum(den)
	if err != nil {
		return math.NaN(), math.NaN(), err
	}
	if !(d > 0) {
		return math.NaN(), math.NaN(), fmt.Errorf("%s: %w: no flux in the reference bands", what, ErrBadParameter)
	}
	q := n / d
	return q, math.Sqrt(vn+q*q*vd) / d, nil
}

// HAlphaIndex returns the H-alpha index with its photon-noise error,
//
//	I_Hα = F_Hα / (F_L + F_R),
//
// with F the mean fluxes in a core band at 6562.808 Å (air) of full width
// coreWidth in Å (0 means 1.6 Å, Gomes da Silva et al. 2011, A&A 534, A30)
// and in reference bands of 10.75 Å at 6550.87 Å and 8.75 Å at 6580.31 Å
// (Boisse et al. 2009, A&A 495, 959; from memory), shifted into the stellar
// rest frame by rv (m/s).
func HAlphaIndex(s *Spectrum, rv, coreWidth float64) (value, sigma float64, err error) {
	if err := s.validate(true); err != nil {
		return 0, 0, err
	}
	return hAlpha(s, prepareOrders(s, 0), rv, coreWidth)
}

func hAlpha(s *Spectrum, orders []ccfOrder, rv, coreWidth float64) (float64, float64, error) {
	core := BandHAlpha
	if coreWidth < 0 || math.IsNaN(coreWidth) {
		return math.NaN(), math.NaN(), fmt.Errorf("H-alpha: %w: core width %v", ErrBadParameter, coreWidth)
	}
	if coreWidth > 0 {
		core.Width = coreWidth
	}
	return bandRatio(s, orders, rv, []Band{core}, []Band{BandHAlphaL, BandHAlphaR}, "H-alpha")
}

// NaDIndex returns the Na I D index with its photon-noise error,
//
//	I_NaD = (F_D1 + F_D2)/(F_R1 + F_R2),
//
// with F mean fluxes in 0.5 Å bands at 5895.92 and 5889.95 Å (air) and
// reference bands of 10 Å at 5805.0 Å and 20 Å at 6090.0 Å (Díaz et al.
// 2007, MNRAS 378, 1007; Gomes da Silva et al. 2011; from memory), shifted
// into the stellar rest frame by rv (m/s).
func NaDIndex(s *Spectrum, rv float64) (value, sigma float64, err error) {
	if err := s.validate(true); err != nil {
		return 0, 0, err
	}
	return naD(s, prepareOrders(s, 0), rv)
}

func naD(s *Spectrum, orders []ccfOrder, rv float64) (float64, float64, error) {
	return bandRatio(s, orders, rv, []Band{BandNaD1, BandNaD2}, []Band{BandNaDR1, BandNaDR2}, "Na I D")
}

// BolometricCorrection selects the colour correction C_cf(B−V) of log R'HK.
type BolometricCorrection int

const (
	// Middelkoop selects log C_cf = 1.13x³ − 3.91x² + 2.84x − 0.47
	// (Middelkoop 1982, A&A 107, 31) with, for x < 0.63, the correction
	// Δ = 0.135y − 0.814y² + 6.03y³, y = 0.63 − x (Noyes et al. 1984, ApJ
	// 279, 763, appendix); from memory.
	Middelkoop BolometricCorrection = iota
	// RuttenDwarf selects log C_cf = 0.25x³ − 1.33x² + 0.43x + 0.24
	// (Rutten 1984, A&A 130, 353, main sequence, 0.3 ≤ x ≤ 1.6; from memory).
	RuttenDwarf
	// RuttenGiant selects log C_cf = −0.066x³ − 0.25x² − 0.49x + 0.45
	// (Rutten 1984, giants, 0.3 ≤ x ≤ 1.7; from memory).
	RuttenGiant
)

// RHKOptions set the conversion of S to log R'HK.
type RHKOptions struct {
	// BV is the star's B−V colour in magnitudes; it must be given.
	BV float64
	// Correction selects C_cf; the zero value is Middelkoop.
	Correction BolometricCorrection
	// Extrapolate reports whether B−V outside 0.44–1.20, where the
	// photospheric term was fitted (Noyes et al. 1984; from memory), is
	// accepted; by default it is an error wrapping ErrColourRange.
	Extrapolate bool
}

// LogRPrimeHK converts a Mount Wilson S-index (with error sigmaS) into
// log R'HK (Noyes et al. 1984, ApJ 279, 763; from memory):
//
//	R_HK    = 1.340e-4 · C_cf(B−V) · S
//	log R_phot = −4.898 + 1.918x² − 2.893x³,  x = B−V
//	R'_HK   = R_HK − R_phot,    result log10 R'_HK,
//
// with C_cf chosen by opts.Correction. The error is the propagated
// σ_S · 1.340e-4 C_cf /(R'_HK ln 10). S too small for R_HK to exceed R_phot
// is an error wrapping ErrBadParameter; B−V outside 0.44–1.20 one wrapping
// ErrColourRange unless opts.Extrapolate.
func LogRPrimeHK(sIndex, sigmaS float64, opts RHKOptions) (value, sigma float64, err error) {
	x := opts.BV
	if math.IsNaN(x) || math.IsInf(x, 0) || x == 0 {
		return math.NaN(), math.NaN(), fmt.Errorf("log R'HK: %w", ErrNoColour)
	}
	if !opts.Extrapolate && (x < 0.44 || x > 1.20) {
		return math.NaN(), math.NaN(), fmt.Errorf("log R'HK: %w: B-V = %.3f, calibrated for 0.44 to 1.20", ErrColourRange, x)
	}
	var logC float64
	switch opts.Correction {
	case Middelkoop:
		logC = 1.13*x*x*x - 3.91*x*x + 2.84*x - 0.47
		if x < 0.63 {
			y := 0.63 - x
			logC += 0.135*y - 0.814*y*y + 6.03*y*y*y
		}
	case RuttenDwarf:
		logC = 0.25*x*x*x - 1.33*x*x + 0.43*x + 0.24
	case RuttenGiant:
		logC = -0.066*x*x*x - 0.25*x*x - 0.49*x + 0.45
	default:
		return math.NaN(), math.NaN(), fmt.Errorf("log R'HK: %w: correction %d", ErrBadParameter, opts.Correction)
	}
	k := 1.340e-4 * math.Pow(10, logC)
	rphot := math.Pow(10, -4.898+1.918*x*x-2.893*x*x*x)
	r := k*sIndex - rphot
	if !(r > 0) {
		return math.NaN(), math.NaN(), fmt.Errorf("log R'HK: %w: S = %.4g below the photospheric level", ErrBadParameter, sIndex)
	}
	return math.Log10(r), k * sigmaS / (r * math.Ln10), nil
}
