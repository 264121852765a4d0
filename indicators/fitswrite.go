package indicators

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"
)

// FITS layout written by FITSEncoder (and read back by ReadFITS):
//
//   - A single order on a grid uniform in ln λ is a 1-D primary image with
//     the FITS WCS logarithmic spectral axis (Greisen et al. 2006, A&A 446,
//     747, §5.4):
//
//     CTYPE1 = 'WAVE-LOG' (vacuum) or 'AWAV-LOG' (air)
//     λ(p)   = CRVAL1 · exp(CDELT1 · (p − CRPIX1) / CRVAL1),  p = 1, 2, …
//
//     with CUNIT1 = 'Angstrom'.
//   - A single order on a grid uniform in λ is the same with CTYPE1 = 'WAVE'
//     or 'AWAV' and λ(p) = CRVAL1 + CDELT1 · (p − CRPIX1).
//   - Any other grid, and every multi-order spectrum, is a primary image of
//     flux (NAXIS1 pixels × NAXIS2 orders, NAXIS2 left out for one order)
//     followed by an IMAGE extension EXTNAME = 'WAVE' of the same shape
//     holding the wavelengths in Å (always float64). All orders must then
//     have the same number of pixels.
//   - Flux errors, when the spectrum has them, follow in an IMAGE extension
//     EXTNAME = 'ERR' of the flux's shape.
//
// The primary header carries the epoch three ways, BJD_TDB (days, full
// precision), MJD-OBS = BJD_TDB − 2400000.5 and DATE-OBS (ISO 8601, from the
// same number; these two are barycentric here, not UTC), the barycentric
// correction as BERV in km/s when it is not zero with its convention as
// BERVCONV ('RADIAL', 'VELOCITY' or 'REDSHIFT', see BaryConvention) and
// z_B as BARYZ for the last, WAVESCAL = 'air' or
// 'vacuum', and the keywords of Spectrum.Header.

// FITSEncoder writes spectra as FITS files. Its zero value writes float64
// flux.
type FITSEncoder struct {
	// Float32 reports whether flux and error are written as 32-bit floats
	// (BITPIX = −32) instead of 64-bit (BITPIX = −64). Wavelength images
	// are always 64-bit.
	Float32 bool
}

// WriteFITS writes s to w as a FITS file with 64-bit float flux; see
// FITSEncoder for the layout. s is validated first (Spectrum.Validate).
func WriteFITS(w io.Writer, s *Spectrum) error {
	var e FITSEncoder
	return e.Encode(w, s)
}

// WriteFITSFile writes s to the file path with WriteFITS. It writes to a
// temporary file in the same directory and renames it, so that path is
// either the complete new file or untouched.
func WriteFITSFile(path string, s *Spectrum) error {
	var e FITSEncoder
	return e.EncodeFile(path, s)
}

// EncodeFile is WriteFITSFile with the encoder's settings.
func (e *FITSEncoder) EncodeFile(path string, s *Spectrum) (err error) {
	dir := filepath.Dir(path)
	f, err := os.CreateTemp(dir, "."+filepath.Base(path)+".tmp*")
	if err != nil {
		return err
	}
	tmp := f.Name()
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(tmp)
		}
	}()
	bw := bufio.NewWriterSize(f, 1<<16)
	if err = e.Encode(bw, s); err != nil {
		return err
	}
	if err = bw.Flush(); err != nil {
		return err
	}
	if err = f.Close(); err != nil {
		return err
	}
	return os.Rename(tmp, path)
}

// Reserved keywords that the encoder writes itself; Spectrum.Header entries
// with these names are not copied.
var reservedKeys = map[string]bool{
	"SIMPLE": true, "BITPIX": true, "NAXIS": true, "NAXIS1": true, "NAXIS2": true,
	"EXTEND": true, "XTENSION": true, "PCOUNT": true, "GCOUNT": true, "EXTNAME": true,
	"END": true, "CTYPE1": true, "CRVAL1": true, "CDELT1": true, "CRPIX1": true,
	"CUNIT1": true, "CD1_1": true, "BUNIT": true, "BSCALE": true, "BZERO": true,
	"BJD_TDB": true, "MJD-OBS": true, "DATE-OBS": true, "BERV": true, "WAVESCAL": true, "BERVCONV": true, "BARYZ": true,
	"DC-FLAG": true,
}

// Encode writes s to w as a FITS file; see FITSEncoder for the layout.
func (e *FITSEncoder) Encode(w io.Writer, s *Spectrum) error {
	if err := s.validate(true); err != nil {
		return err
	}
	name := s.Name
	ctype := "AWAV"
	scale := "air"
	if s.Vacuum {
		ctype, scale = "WAVE", "vacuum"
	}
	fluxBitpix := -64
	if e.Float32 {
		fluxBitpix = -32
	}
	norders := len(s.Orders)
	npix := len(s.Orders[0].Wavelength)
	hasErr := s.Orders[0].Err != nil
	for o := range s.Orders {
		if (s.Orders[o].Err != nil) != hasErr {
			return &FileError{File: name, HDU: -1, Order: o, Pixel: -1, Err: fmt.Errorf("%w: some orders have errors and some not", ErrMismatch)}
		}
	}

	var wcs []card
	var waveImage bool
	if norders == 1 {
		wl := s.Orders[0].Wavelength
		if d, ok := logUniform(wl); ok {
			wcs = []card{
				{"CTYPE1", ctype + "-LOG", "wavelength, logarithmic (WCS Paper III)"},
				{"CUNIT1", "Angstrom", ""},
				{"CRPIX1", 1.0, "reference pixel"},
				{"CRVAL1", wl[0], "wavelength at CRPIX1"},
				{"CDELT1", wl[0] * d, "CRVAL1 times the step in ln(wavelength)"},
			}
		} else if d, ok := linUniform(wl); ok {
			wcs = []card{
				{"CTYPE1", ctype, "wavelength, linear"},
				{"CUNIT1", "Angstrom", ""},
				{"CRPIX1", 1.0, "reference pixel"},
				{"CRVAL1", wl[0], "wavelength at CRPIX1"},
				{"CDELT1", d, "wavelength step"},
			}
		} else {
			waveImage = true
		}
	} else {
		waveImage = true
	}
	if waveImage {
		for o := range s.Orders {
			if len(s.Orders[o].Wavelength) != npix {
				return &FileError{File: name, HDU: -1, Order: o, Pixel: -1, Err: fmt.Errorf("%w: orders of %d and %d pixels cannot share one image", ErrMismatch, npix, len(s.Orders[o].Wavelength))}
			}
		}
	}
	axes := []int{npix}
	if norders > 1 {
		axes = append(axes, norders)
	}

	bw := &fitsWriter{w: w}
	prim := []card{
		{"SIMPLE", true, "conforms to FITS standard"},
		{"BITPIX", fluxBitpix, "IEEE floating point"},
		{"NAXIS", len(axes), ""},
	}
	for i, n := range axes {
		prim = append(prim, card{fmt.Sprintf("NAXIS%d", i+1), n, ""})
	}
	prim = append(prim, card{"EXTEND", true, ""})
	prim = append(prim, wcs...)
	prim = append(prim,
		card{"BUNIT", "electron", "flux per pixel"},
		card{"WAVESCAL", scale, "wavelengths in air or vacuum"},
	)
	if s.BJD != 0 {
		mjd := s.BJD - 2400000.5
		prim = append(prim,
			card{"BJD_TDB", s.BJD, "mid-exposure epoch, BJD_TDB [d]"},
			card{"MJD-OBS", mjd, "BJD_TDB - 2400000.5 [d]"},
			card{"DATE-OBS", mjdToISO(mjd), "from BJD_TDB (barycentric, TDB)"},
		)
	}
	if s.BERV != 0 {
		prim = append(prim, card{"BERV", s.BERV / 1000, "barycentric correction to add [km/s]"})
	}
	if s.BERV != 0 || s.Bary == BaryRedshift {
		prim = append(prim, card{"BERVCONV", s.Bary.String(), "how the correction composes (spotsift)"})
	}
	if s.Bary == BaryRedshift {
		prim = append(prim, card{"BARYZ", s.BaryZ, "barycentric redshift z_B"})
	}
	keys := make([]string, 0, len(s.Header))
	for k := range s.Header {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		uk := strings.ToUpper(strings.TrimSpace(k))
		if reservedKeys[uk] || strings.HasPrefix(uk, "NAXIS") {
			continue
		}
		if err := checkKeyword(uk); err != nil {
			return fileErr(name, 0, k, err)
		}
		v := s.Header[k]
		if uk == "COMMENT" || uk == "HISTORY" {
			for _, line := range strings.Split(v, "\n") {
				for _, c := range line {
					if c < 32 || c > 126 {
						return fileErr(name, 0, k, fmt.Errorf("%w: non-printable or non-ASCII character", ErrBadKeyword))
					}
				}
				for len(line) > 72 {
					prim = append(prim, card{uk, nil, line[:72]})
					line = line[72:]
				}
				prim = append(prim, card{uk, nil, line})
			}
			continue
		}
		cv, err := headerValue(v)
		if err != nil {
			return fileErr(name, 0, k, err)
		}
		prim = append(prim, card{uk, cv, ""})
	}
	if err := bw.header(prim); err != nil {
		return fileErr(name, 0, "", err)
	}
	flux := make([][]float64, norders)
	for o := range s.Orders {
		flux[o] = s.Orders[o].Flux
	}
	bw.data(flux, fluxBitpix)

	ext := func(extname string, bitpix int, rows [][]float64, comment string) {
		h := []card{
			{"XTENSION", "IMAGE", "image extension"},
			{"BITPIX", bitpix, ""},
			{"NAXIS", len(axes), ""},
		}
		for i, n := range axes {
			h = append(h, card{fmt.Sprintf("NAXIS%d", i+1), n, ""})
		}
		h = append(h,
			card{"PCOUNT", 0, ""},
			card{"GCOUNT", 1, ""},
			card{"EXTNAME", extname, comment},
		)
		if extname == "ERR" {
			h = append(h, wcs...)
		}
		if err := bw.header(h); err != nil {
			return
		}
		bw.data(rows, bitpix)
	}
	if waveImage {
		rows := make([][]float64, norders)
		for o := range s.Orders {
			rows[o] = s.Orders[o].Wavelength
		}
		ext("WAVE", -64, rows, "wavelength [Angstrom, "+scale+"]")
	}
	if hasErr {
		rows := make([][]float64, norders)
		for o := range s.Orders {
			rows[o] = s.Orders[o].Err
		}
		ext("ERR", fluxBitpix, rows, "one-sigma flux error")
	}
	if bw.err != nil {
		return fileErr(name, -1, "", bw.err)
	}
	return nil
}

// logUniform reports whether wl is uniform in ln λ to 1e-12 relative in λ
// (3e-4 m/s in velocity) and returns the step in ln λ.
func logUniform(wl []float64) (float64, bool) {
	n := len(wl)
	if n < 2 {
		return 0, false
	}
	d := math.Log(wl[n-1]/wl[0]) / float64(n-1)
	for i, w := range wl {
		if math.Abs(wl[0]*math.Exp(d*float64(i))-w) > 1e-12*w {
			return 0, false
		}
	}
	return d, true
}

// linUniform reports whether wl is uniform in λ to 1e-12 relative and
// returns the step.
func linUniform(wl []float64) (float64, bool) {
	n := len(wl)
	if n < 2 {
		return 0, false
	}
	d := (wl[n-1] - wl[0]) / float64(n-1)
	for i, w := range wl {
		if math.Abs(wl[0]+d*float64(i)-w) > 1e-12*w {
			return 0, false
		}
	}
	return d, true
}

// checkKeyword reports whether k is a legal FITS keyword name: at most 8
// characters from A–Z, 0–9, '-' and '_'.
func checkKeyword(k string) error {
	if k == "" || len(k) > 8 {
		return fmt.Errorf("%w: keyword name must have 1 to 8 characters", ErrBadKeyword)
	}
	for _, c := range k {
		if !(c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '-' || c == '_') {
			return fmt.Errorf("%w: character %q not allowed in a keyword name", ErrBadKeyword, c)
		}
	}
	return nil
}

// headerValue turns a Spectrum.Header string into the FITS value written:
// T/F as logical, integers and floats as numbers, anything else as a string.
func headerValue(v string) (any, error) {
	switch v {
	case "T":
		return true, nil
	case "F":
		return false, nil
	}
	if i, err := strconv.ParseInt(v, 10, 64); err == nil {
		return int(i), nil
	}
	if f, err := strconv.ParseFloat(v, 64); err == nil && !math.IsInf(f, 0) && !math.IsNaN(f) {
		return f, nil
	}
	if len(v) > 68 {
		return nil, fmt.Errorf("%w: string longer than 68 characters", ErrBadKeyword)
	}
	for _, c := range v {
		if c < 32 || c > 126 {
			return nil, fmt.Errorf("%w: string holds a non-printable or non-ASCII character", ErrBadKeyword)
		}
	}
	return v, nil
}

// mjdToISO formats an MJD as an ISO 8601 date-time with millisecond digits.
func mjdToISO(mjd float64) string {
	// MJD 40587 is 1970-01-01T00:00:00.
	ms := math.Round((mjd - 40587) * 86400e3)
	t := time.UnixMilli(int64(ms)).UTC()
	return t.Format("2006-01-02T15:04:05.000")
}

type card struct {
	key     string
	value   any // nil for COMMENT/HISTORY
	comment string
}

// fitsWriter writes FITS headers and data arrays in 2880-byte blocks,
// remembering the first error.
type fitsWriter struct {
	w   io.Writer
	err error
}

func (fw *fitsWriter) write(p []byte) {
	if fw.err != nil {
		return
	}
	_, fw.err = fw.w.Write(p)
}

func (fw *fitsWriter) header(cards []card) error {
	var b []byte
	for _, c := range cards {
		line, err := formatCard(c)
		if err != nil {
			fw.err = err
			return err
		}
		b = append(b, line...)
	}
	b = append(b, fmt.Sprintf("%-80s", "END")...)
	for len(b)%2880 != 0 {
		b = append(b, ' ')
	}
	fw.write(b)
	return fw.err
}

func (fw *fitsWriter) data(rows [][]float64, bitpix int) {
	size := 8
	if bitpix == -32 {
		size = 4
	}
	var n int
	for _, r := range rows {
		n += len(r)
	}
	buf := make([]byte, 0, n*size+2880)
	for _, r := range rows {
		for _, v := range r {
			if size == 8 {
				buf = binary.BigEndian.AppendUint64(buf, math.Float64bits(v))
			} else {
				buf = binary.BigEndian.AppendUint32(buf, math.Float32bits(float32(v)))
			}
		}
	}
	for len(buf)%2880 != 0 {
		buf = append(buf, 0)
	}
	fw.write(buf)
}

// formatCard formats one 80-character header card. Floats are written in
// the shortest form that reads back to the same float64 (free format when
// longer than the 20 fixed-format columns).
func formatCard(c card) ([]byte, error) {
	if c.value == nil {
		s := fmt.Sprintf("%-8s%s", c.key, c.comment)
		if len(s) > 80 {
			s = s[:80]
		}
		return []byte(fmt.Sprintf("%-80s", s)), nil
	}
	var v string
	switch x := c.value.(type) {
	case bool:
		v = fmt.Sprintf("%20s", map[bool]string{true: "T", false: "F"}[x])
	case int:
		v = fmt.Sprintf("%20d", x)
	case float64:
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return nil, fmt.Errorf("%w: keyword %s", ErrNotFinite, c.key)
		}
		f := strconv.FormatFloat(x, 'G', -1, 64)
		if !strings.ContainsAny(f, ".E") {
			f += ".0"
		}
		v = fmt.Sprintf("%20s", f)
	case string:
		q := "'" + strings.ReplaceAll(x, "'", "''")
		for len(q) < 9 {
			q += " "
		}
		q += "'"
		v = fmt.Sprintf("%-20s", q)
	default:
		return nil, fmt.Errorf("%w: keyword %s has type %T", ErrBadKeyword, c.key, c.value)
	}
	s := fmt.Sprintf("%-8s= %s", c.key, v)
	if c.comment != "" && len(s)+3 < 80 {
		s += " / " + c.comment
	}
	if len(s) > 80 {
		if len(fmt.Sprintf("%-8s= %s", c.key, v)) > 80 {
			return nil, fmt.Errorf("%w: value of %s does not fit on a card", ErrBadKeyword, c.key)
		}
		s = s[:80]
	}
	return []byte(fmt.Sprintf("%-80s", s)), nil
}
