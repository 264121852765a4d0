package photometry

import (
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"

	"spotsift/rvfit"
)

// Canonical column names of a light-curve table.
const (
	ColFlux    = "flux"
	ColFluxErr = "flux_err"
	ColMag     = "mag"
	ColMagErr  = "mag_err"
	ColSector  = "sector"
)

// DefaultSector labels the points of a table without a sector column.
const DefaultSector = "all"

// MinPoints is the fewest points a light curve may have.
const MinPoints = 10

// LightCurve is a time series of relative flux: in every sector (or
// season, or instrument) the flux is divided by its median, so each
// sector carries its own offset and the light curve is about 1.
type LightCurve struct {
	// Name is where the light curve came from (a file name), for messages.
	Name string
	// Time is in days (BJD_TDB, like the RV table), increasing.
	Time []float64
	// Flux is the relative flux and Err its one-sigma uncertainty.
	Flux, Err []float64
	// Sector labels each point; every sector is normalised on its own.
	Sector []string
	// FromMagnitude records that the file gave magnitudes.
	FromMagnitude bool
}

// Len returns the number of points.
func (lc *LightCurve) Len() int { return len(lc.Time) }

// Validate checks lengths, finiteness, positive uncertainties and time
// order.
func (lc *LightCurve) Validate() error {
	n := len(lc.Time)
	if len(lc.Flux) != n || len(lc.Err) != n || (lc.Sector != nil && len(lc.Sector) != n) {
		return fmt.Errorf("%w: %s: %d times, %d fluxes, %d errors, %d sector labels", ErrBadLightCurve, lc.Name, n, len(lc.Flux), len(lc.Err), len(lc.Sector))
	}
	if n < MinPoints {
		return fmt.Errorf("%w: %s: %d points, need at least %d", ErrBadLightCurve, lc.Name, n, MinPoints)
	}
	for i := 0; i < n; i++ {
		if !finite(lc.Time[i]) || !finite(lc.Flux[i]) || !(lc.Err[i] > 0) || math.IsInf(lc.Err[i], 0) {
			return fmt.Errorf("%w: %s: point %d (time %g, flux %g, error %g): values must be finite and errors positive", ErrBadLightCurve, lc.Name, i+1, lc.Time[i], lc.Flux[i], lc.Err[i])
		}
		if i > 0 && lc.Time[i] < lc.Time[i-1] {
			return fmt.Errorf("%w: %s: times are not in increasing order at point %d", ErrBadLightCurve, lc.Name, i+1)
		}
	}
	return nil
}

// sectors returns the sector index of every point and the number of
// sectors (labels in order of first appearance).
func (lc *LightCurve) sectors() ([]int, int) {
	idx := make([]int, lc.Len())
	if lc.Sector == nil {
		return idx, 1
	}
	seen := map[string]int{}
	for i, s := range lc.Sector {
		k, ok := seen[s]
		if !ok {
			k = len(seen)
			seen[s] = k
		}
		idx[i] = k
	}
	return idx, len(seen)
}

// Normalize divides the flux (and its errors) of every sector by the
// sector's median, so each sector has its own offset. It fails when a
// sector's median is not positive (a flux must be positive: give the flux
// itself, not flux minus one).
func (lc *LightCurve) Normalize() error {
	idx, ns := lc.sectors()
	for k := 0; k < ns; k++ {
		var v []float64
		for i, s := range idx {
			if s == k {
				v = append(v, lc.Flux[i])
			}
		}
		m := median(v)
		if !(m > 0) {
			lab := DefaultSector
			if lc.Sector != nil {
				for i, s := range idx {
					if s == k {
						lab = lc.Sector[i]
						break
					}
				}
			}
			return fmt.Errorf("%w: %s: sector %q has median flux %g; a flux must be positive (give the flux, not flux minus one, or magnitudes in a mag column)", ErrBadLightCurve, lc.Name, lab, m)
		}
		for i, s := range idx {
			if s == k {
				lc.Flux[i] /= m
				lc.Err[i] /= m
			}
		}
	}
	return nil
}

// ReadOptions controls how a light curve is read. A nil *ReadOptions reads
// a table with spotsift's own column names.
type ReadOptions struct {
	// Columns maps canonical names (time, flux, flux_err, mag, mag_err,
	// sector) onto the file's own, as rvfit.ReadOptions.Columns.
	Columns map[string]string
	// Quantity is "flux" or "mag"; empty means flux if the table has a flux
	// column (or one mapped onto it), else mag.
	Quantity string
	// Format is "csv", "tsv" or "fits"; empty means by content.
	Format string
}

// Read reads a light curve from a file with rvfit's table readers and
// normalises each sector (see LightCurve). Errors name the file, line or
// row and column; warnings are returned as rvfit's are.
func Read(path string, opts *ReadOptions) (*LightCurve, []string, error) {
	if opts == nil {
		opts = &ReadOptions{}
	}
	q := opts.Quantity
	switch q {
	case "", ColFlux, ColMag:
	default:
		return nil, nil, fmt.Errorf("%w: %s: quantity %q: want flux or mag", ErrBadLightCurve, path, q)
	}
	read := func(value string) (*rvfit.Series, []string, error) {
		return rvfit.ReadTable(path, &rvfit.ReadOptions{Columns: opts.Columns, Format: opts.Format, Value: value, Label: ColSector})
	}
	if q == "" {
		q = ColFlux
		if _, mapped := opts.Columns[ColMag]; mapped {
			q = ColMag
		}
	}
	s, warns, err := read(q)
	var te *rvfit.TableError
	if err != nil && opts.Quantity == "" && q == ColFlux && errors.Is(err, rvfit.ErrMissingColumn) && errors.As(err, &te) && te.Column == ColFlux {
		// No flux column: try magnitudes; report the flux error if neither.
		if s2, w2, err2 := read(ColMag); err2 == nil || !isMissing(err2, ColMag) {
			s, warns, err, q = s2, w2, err2, ColMag
		}
	}
	if err != nil {
		return nil, nil, err
	}
	lc, err := fromSeries(s, q == ColMag)
	if err != nil {
		return nil, nil, err
	}
	return lc, warns, nil
}

func isMissing(err error, col string) bool {
	var te *rvfit.TableError
	return errors.Is(err, rvfit.ErrMissingColumn) && errors.As(err, &te) && te.Column == col
}

// fromSeries turns a series read with a flux (or magnitude) value column
// into a normalised light curve.
func fromSeries(s *rvfit.Series, mag bool) (*LightCurve, error) {
	lc := &LightCurve{Name: s.Name, Time: s.Time, Flux: s.RV, Err: s.RVErr, FromMagnitude: mag}
	lc.Sector = s.Instrument
	allDefault := true
	for _, in := range lc.Sector {
		if in != rvfit.DefaultInstrument {
			allDefault = false
			break
		}
	}
	if allDefault {
		lc.Sector = nil
	}
	// rvfit keeps one point per (time, label) but sorts by time only;
	// points of different sectors may share a time, which is fine.
	if mag {
		// Flux relative to the sector's median magnitude: the offset cancels
		// in the normalisation below, so only differences matter.
		for i, m := range lc.Flux {
			f := math.Pow(10, -0.4*m)
			lc.Err[i] = 0.4 * math.Ln10 * f * lc.Err[i]
			lc.Flux[i] = f
		}
		// Rescale to avoid underflow with large magnitudes.
		m0 := median(lc.Flux)
		for i := range lc.Flux {
			lc.Flux[i] /= m0
			lc.Err[i] /= m0
		}
	}
	if err := lc.Normalize(); err != nil {
		return nil, err
	}
	if err := lc.Validate(); err != nil {
		return nil, err
	}
	return lc, nil
}

// Write writes lc as a CSV table (time, flux, flux_err, sector) that Read
// reads back, replacing path whole or not at all.
func Write(path string, lc *LightCurve, creator string) error {
	if err := lc.Validate(); err != nil {
		return err
	}
	if creator == "" {
		creator = "spotsift"
	}
	for i, sec := range lc.Sector {
		if strings.ContainsAny(sec, ",\"\n\r") || strings.TrimSpace(sec) == "" {
			return fmt.Errorf("%w: %s: sector label %q of point %d cannot be written to a CSV cell (empty, or with a comma, quote or line break)", ErrBadLightCurve, path, sec, i+1)
		}
	}
	return rvfit.WriteFileAtomic(path, func(w io.Writer) error {
		if _, err := fmt.Fprintf(w, "# light curve written by %s: relative flux\n# units: time=d\ntime,flux,flux_err,sector\n", creator); err != nil {
			return err
		}
		for i := range lc.Time {
			sec := DefaultSector
			if lc.Sector != nil {
				sec = lc.Sector[i]
			}
			if _, err := fmt.Fprintf(w, "%s,%s,%s,%s\n", strconv.FormatFloat(lc.Time[i], 'f', -1, 64), fmtF(lc.Flux[i]), fmtF(lc.Err[i]), sec); err != nil {
				return err
			}
		}
		return nil
	})
}

func fmtF(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }

func finite(x float64) bool { return !math.IsNaN(x) && !math.IsInf(x, 0) }

// median returns the median of v (NaN for none); v is not modified.
func median(v []float64) float64 {
	if len(v) == 0 {
		return math.NaN()
	}
	c := append([]float64(nil), v...)
	sort.Float64s(c)
	n := len(c)
	if n%2 == 1 {
		return c[n/2]
	}
	return 0.5 * (c[n/2-1] + c[n/2])
}
