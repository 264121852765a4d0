package indicators

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"time"
)

// Scale declares whether the wavelengths of an input are in air or vacuum.
type Scale int

const (
	// ScaleFromFile takes the scale from the file: CTYPE1 'WAVE…' is vacuum
	// and 'AWAV…' air (FITS WCS Paper III), else the keyword WAVESCAL
	// ('air' or 'vacuum'), else AIRORVAC; an input that says neither is an
	// error wrapping ErrUnknownScale.
	ScaleFromFile Scale = iota
	// ScaleAir declares air wavelengths, whatever the file says.
	ScaleAir
	// ScaleVacuum declares vacuum wavelengths, whatever the file says.
	ScaleVacuum
)

// ReadOptions control how spectra are read. A nil *ReadOptions means the
// zero value, whose fields are documented below.
type ReadOptions struct {
	// Scale declares air or vacuum wavelengths; the zero value,
	// ScaleFromFile, takes it from the file.
	Scale Scale

	// EpochKeyword names a header keyword holding the epoch in days. Values
	// above 2 400 000 are taken as (B)JD, smaller ones as MJD and have
	// 2 400 000.5 added. "" uses, in order, BJD_TDB (as written by
	// WriteFITS), MJD-OBS and DATE-OBS (ISO 8601); note that the last two
	// are normally the UTC start of the exposure, not a barycentric
	// mid-exposure time. A missing epoch leaves Spectrum.BJD at 0, except
	// that a named EpochKeyword that is missing is an error.
	EpochKeyword string

	// BERVKeyword names a header keyword holding the barycentric correction;
	// "" uses BERV if present. A named keyword that is missing is an error.
	BERVKeyword string
	// BERVUnit is the keyword's unit in m/s: 1000 for km/s, 1 for m/s. The
	// zero value means 1000 (km/s).
	BERVUnit float64

	// WavelengthUnit overrides the wavelength unit of the file (CUNIT1 or
	// TUNITn): "Angstrom", "nm", "um" or "m". "" reads it from the file and
	// takes Å when the file does not say.
	WavelengthUnit string

	// HDU names the header-data unit (by EXTNAME) holding the flux; "" takes
	// the primary image if it has data, else the first binary table with
	// wavelength and flux columns, else the first image extension.
	HDU string
	// WaveColumn, FluxColumn and ErrColumn name the binary-table columns
	// (or text columns, 1-based, as decimal strings) to read. "" looks for
	// usual names (WAVE, WAVELENGTH, LAMBDA; FLUX; ERR, ERROR, SIGMA), and
	// for text the columns 1, 2 and, if present, 3.
	WaveColumn, FluxColumn, ErrColumn string

	// AllowNegative reports whether negative flux values are accepted (as
	// after sky subtraction); by default they are an error wrapping
	// ErrNegativeFlux.
	AllowNegative bool
}

// ReadFile reads the spectrum in the file at path: a FITS file when it
// starts with "SIMPLE  =", else a text file (see ReadText).
//
// Only regular files are read (not a FIFO, a device such as /dev/zero or a
// directory: the error wraps ErrNotRegular), and no more than
// MaxFileSize bytes. A text file that is recognisably not a spectrum — a
// line mask, notes, a binary file of another kind — gives an error wrapping
// ErrNotSpectrum that says what it looks like.
func ReadFile(path string, opts *ReadOptions) (*Spectrum, error) {
	data, err := ReadRegularFile(path, MaxFileSize)
	if err != nil {
		return nil, err
	}
	if bytes.HasPrefix(data, []byte("SIMPLE  =")) {
		return readFITSBytes(data, path, opts)
	}
	if why := notSpectrum(data); why != "" {
		return nil, fileErr(path, -1, "", fmt.Errorf("%w: %s", ErrNotSpectrum, why))
	}
	return ReadText(bytes.NewReader(data), path, opts)
}

// MaxFileSize is the largest spectrum or mask file ReadFile and
// ReadMaskFile read, in bytes (2 GiB).
const MaxFileSize = 2 << 30

// ReadRegularFile reads the regular file at path, refusing anything else
// (a FIFO, a device, a directory: an error wrapping ErrNotRegular, found
// without blocking or reading) and files larger than limit bytes (an error
// wrapping ErrTooLarge).
func ReadRegularFile(path string, limit int64) ([]byte, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	if !fi.Mode().IsRegular() {
		return nil, fileErr(path, -1, "", fmt.Errorf("%w (%s)", ErrNotRegular, fileKind(fi.Mode())))
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	// The file may have been replaced between Stat and Open.
	if fi, err = f.Stat(); err != nil {
		return nil, err
	}
	if !fi.Mode().IsRegular() {
		return nil, fileErr(path, -1, "", fmt.Errorf("%w (%s)", ErrNotRegular, fileKind(fi.Mode())))
	}
	if fi.Size() > limit {
		return nil, fileErr(path, -1, "", fmt.Errorf("%w: %d bytes, at most %d", ErrTooLarge, fi.Size(), limit))
	}
	data, err := io.ReadAll(io.LimitReader(f, limit+1))
	if err != nil {
		return nil, fileErr(path, -1, "", err)
	}
	if int64(len(data)) > limit {
		return nil, fileErr(path, -1, "", fmt.Errorf("%w: more than %d bytes", ErrTooLarge, limit))
	}
	return data, nil
}

func fileKind(m os.FileMode) string {
	switch {
	case m.IsDir():
		return "a directory"
	case m&os.ModeNamedPipe != 0:
		return "a FIFO"
	case m&os.ModeDevice != 0 || m&os.ModeCharDevice != 0:
		return "a device"
	case m&os.ModeSocket != 0:
		return "a socket"
	}
	return "not a regular file"
}

// ReadFITS reads a spectrum from the FITS file in r; name is used in error
// messages and as Spectrum.Name.
//
// Layouts understood:
//   - a 1-D image (primary or extension) with a linear wavelength WCS
//     (CTYPE1 WAVE/AWAV/LINEAR/empty; λ = CRVAL1 + Δ·(p − CRPIX1), Δ from
//     CDELT1 or CD1_1), a logarithmic one (CTYPE1 WAVE-LOG/AWAV-LOG, λ =
//     CRVAL1·exp(Δ·(p − CRPIX1)/CRVAL1)), or the IRAF convention DC-FLAG = 1
//     (log10 λ = CRVAL1 + Δ·(p − CRPIX1)); CUNIT1 Å, nm, µm or m;
//   - a 1-D or 2-D (NAXIS1 pixels × NAXIS2 orders) image with the
//     wavelengths in an image extension named WAVE or WAVELENGTH of the same
//     shape (the layout WriteFITS uses when the grid is not uniform);
//   - a binary table with wavelength, flux and (optionally) error columns,
//     either one pixel per row or one order per row (array columns);
//   - flux errors from an image extension named ERR, ERROR or SIGMA.
//
// Header keywords of the primary HDU, and of the flux HDU when it is an
// extension, are kept in Spectrum.Header as strings. The result is
// validated (Spectrum.Validate, with ReadOptions.AllowNegative). Every error
// is a *FileError naming the file and, where it applies, the HDU and
// keyword; a damaged file never panics.
func ReadFITS(r io.Reader, name string, opts *ReadOptions) (*Spectrum, error) {
	data, err := io.ReadAll(io.LimitReader(r, MaxFileSize+1))
	if err != nil {
		return nil, fileErr(name, -1, "", err)
	}
	if len(data) > MaxFileSize {
		return nil, fileErr(name, -1, "", fmt.Errorf("%w: more than %d bytes", ErrTooLarge, MaxFileSize))
	}
	return readFITSBytes(data, name, opts)
}

// hduSpan locates one HDU inside the file bytes.
type hduSpan struct {
	hdrStart           int // first header byte
	dataStart, dataLen int // data array (without padding), bytes
	bitpix             int
	axes               []int
	pcount, gcount     int
	xtension           string // "" for the primary HDU
	cards              map[string]any
	keys               []string // in header order
}

// walkFITS checks the block structure of a FITS file: every header ends,
// every data array (padded to 2880 bytes) is present, and sizes are
// sensible. It returns the spans in file order.
func walkFITS(data []byte, name string) ([]hduSpan, error) {
	const block = 2880
	if !bytes.HasPrefix(data, []byte("SIMPLE  =")) {
		return nil, fileErr(name, -1, "", ErrNotFITS)
	}
	var spans []hduSpan
	pos := 0
	for pos < len(data) {
		h := len(spans)
		if len(data)-pos < block {
			if len(spans) > 0 && allPadding(data[pos:]) {
				break
			}
			return nil, fileErr(name, h, "", fmt.Errorf("%w: header block cut short", ErrTruncated))
		}
		if h > 0 && !bytes.HasPrefix(data[pos:], []byte("XTENSION=")) {
			if allPadding(data[pos:]) {
				break
			}
			// Most often the previous HDU's size keywords are wrong
			// (NAXIS = 0 before a data array): say so.
			prev := spans[h-1]
			return nil, fileErr(name, h, "XTENSION", fmt.Errorf("%w: extension does not start with XTENSION; HDU %d before it declares %s (%d data bytes): is NAXIS, NAXISn or BITPIX wrong?",
				ErrNotFITS, h-1, describeAxes(prev), prev.dataLen))
		}
		sp := hduSpan{gcount: 1, hdrStart: pos, cards: map[string]any{}}
		lastKey := ""
		naxis := -1
		ended := false
		seen := map[string]bool{}
		for !ended {
			if len(data)-pos < block {
				return nil, fileErr(name, h, "END", fmt.Errorf("%w: header has no END card", ErrTruncated))
			}
			for c := 0; c < block/80; c++ {
				line := data[pos+c*80 : pos+c*80+80]
				key := string(bytes.TrimRight(line[:8], " "))
				if key == "END" {
					ended = true
					break
				}
				if key == "HIERARCH" {
					// ESO convention: HIERARCH A B C = value.
					k, v, ok := strings.Cut(string(line[9:]), "=")
					k = strings.TrimSpace(k)
					if !ok || k == "" {
						continue
					}
					if structural(k) {
						return nil, fileErr(name, h, k, fmt.Errorf("%w: structural keyword in HIERARCH form", ErrBadKeyword))
					}
					sp.setCard(k, parseValue(v))
					lastKey = k
					continue
				}
				if key == "CONTINUE" {
					// Long-string convention: append to the previous string.
					if prev, ok := sp.cards[lastKey].(string); ok && strings.HasSuffix(prev, "&") {
						if more, ok := parseValue(string(line[8:])).(string); ok {
							sp.cards[lastKey] = prev[:len(prev)-1] + more
						}
					}
					continue
				}
				if !bytes.Equal(line[8:10], []byte("= ")) {
					continue
				}
				sp.setCard(key, parseValue(string(line[10:])))
				lastKey = key
				if structural(key) {
					// Readers disagree on which of two copies counts.
					if seen[key] {
						return nil, fileErr(name, h, key, fmt.Errorf("%w: keyword given twice", ErrBadKeyword))
					}
					seen[key] = true
				}
				ival := func() (int, error) {
					v := string(line[10:])
					if i := strings.IndexByte(v, '/'); i >= 0 {
						v = v[:i]
					}
					n, err := strconv.Atoi(strings.TrimSpace(v))
					if err != nil || n < 0 && key != "BITPIX" {
						return 0, fileErr(name, h, key, fmt.Errorf("%w: %q is not a valid count", ErrBadKeyword, strings.TrimSpace(v)))
					}
					return n, nil
				}
				var err error
				switch {
				case key == "BITPIX":
					sp.bitpix, err = ival()
				case key == "NAXIS":
					naxis, err = ival()
					if err == nil && naxis > 999 {
						err = fileErr(name, h, key, fmt.Errorf("%w: NAXIS %d", ErrBadKeyword, naxis))
					}
				case strings.HasPrefix(key, "NAXIS"):
					var k, n int
					if k, err = strconv.Atoi(key[5:]); err != nil || !allDigits(key[5:]) {
						err = nil
						continue
					}
					if k < 1 || k > 999 {
						return nil, fileErr(name, h, key, fmt.Errorf("%w: axis keywords run from NAXIS1 to NAXIS999", ErrBadKeyword))
					}
					if n, err = ival(); err == nil {
						for len(sp.axes) < k {
							sp.axes = append(sp.axes, 0)
						}
						sp.axes[k-1] = n
					}
				case key == "PCOUNT":
					sp.pcount, err = ival()
				case key == "GCOUNT":
					sp.gcount, err = ival()
				case key == "TFIELDS" || key == "THEAP":
					// Both size allocations; bound them here.
					var n int
					if n, err = ival(); err == nil && (key == "TFIELDS" && n > 999 || key == "THEAP" && n > len(data)) {
						err = fileErr(name, h, key, fmt.Errorf("%w: %d", ErrBadKeyword, n))
					}
				}
				if err != nil {
					return nil, err
				}
			}
			pos += block
		}
		if h > 0 {
			x, _ := sp.cards["XTENSION"].(string)
			sp.xtension = strings.ToUpper(strings.TrimSpace(x))
		}
		switch sp.bitpix {
		case 8, 16, 32, 64, -32, -64:
		default:
			return nil, fileErr(name, h, "BITPIX", fmt.Errorf("%w: %d", ErrBadKeyword, sp.bitpix))
		}
		if naxis < 0 {
			return nil, fileErr(name, h, "NAXIS", ErrMissingKeyword)
		}
		if len(sp.axes) > naxis {
			sp.axes = sp.axes[:naxis]
		}
		for len(sp.axes) < naxis {
			return nil, fileErr(name, h, fmt.Sprintf("NAXIS%d", len(sp.axes)+1), ErrMissingKeyword)
		}
		// Sizes in float64 first: the integers of a damaged header may
		// overflow int arithmetic.
		fn := 0.0
		if naxis > 0 {
			fn = 1
			for _, a := range sp.axes {
				fn *= float64(a)
			}
		}
		size := abs(sp.bitpix) / 8
		fbytes := float64(size) * float64(sp.gcount) * (float64(sp.pcount) + fn)
		if fbytes > float64(len(data)-pos) {
			return nil, fileErr(name, h, "", fmt.Errorf("%w: %s and BITPIX = %d declare %.0f data bytes, the file holds %d after the header (a wrong NAXISn, or a cut file)",
				ErrTruncated, describeAxes(sp), sp.bitpix, fbytes, len(data)-pos))
		}
		n := 0
		if naxis > 0 {
			n = 1
			for _, a := range sp.axes {
				n *= a
			}
		}
		nbytes := size * sp.gcount * (sp.pcount + n)
		sp.dataStart = pos
		sp.dataLen = nbytes

		pos += (nbytes + block - 1) / block * block
		spans = append(spans, sp)
		if pos > len(data) {
			// The last data block may lack its padding; accept it.
			pos = len(data)
		}
	}
	return spans, nil
}

// describeAxes writes an HDU's axis keywords for a message, e.g.
// "NAXIS = 2, NAXIS1 = 4000, NAXIS2 = 72".
func describeAxes(sp hduSpan) string {
	parts := []string{fmt.Sprintf("NAXIS = %d", len(sp.axes))}
	for i, a := range sp.axes {
		if i == 3 {
			parts = append(parts, "...")
			break
		}
		parts = append(parts, fmt.Sprintf("NAXIS%d = %d", i+1, a))
	}
	return strings.Join(parts, ", ")
}

// structural reports whether k is a keyword that fixes the size or layout
// of an HDU.
func structural(k string) bool {
	switch k {
	case "SIMPLE", "XTENSION", "BITPIX", "NAXIS", "PCOUNT", "GCOUNT", "TFIELDS", "THEAP", "EXTEND":
		return true
	}
	return strings.HasPrefix(k, "NAXIS") || strings.HasPrefix(k, "TFORM")
}

// allDigits reports whether s is a non-empty string of ASCII digits.
func allDigits(s string) bool {
	for i := 0; i < len(s); i++ {
		if s[i] < '0' || s[i] > '9' {
			return false
		}
	}
	return s != ""
}

func allPadding(b []byte) bool {
	for _, c := range b {
		if c != 0 && c != ' ' {
			return false
		}
	}
	return true
}

func abs(i int) int {
	if i < 0 {
		return -i
	}
	return i
}

// setCard records a keyword value; a later copy of a keyword replaces an
// earlier one (structural keywords may not repeat, see walkFITS).
func (sp *hduSpan) setCard(k string, v any) {
	if _, ok := sp.cards[k]; !ok {
		sp.keys = append(sp.keys, k)
	}
	sp.cards[k] = v
}

// parseValue parses the value field of a header card (after "= "): a
// quoted string (with ” for a quote), T or F, an integer or a float (D
// exponents allowed); anything else, or an empty field, is nil. A comment
// after '/' is dropped.
func parseValue(v string) any {
	v = strings.TrimLeft(v, " ")
	if v == "" {
		return nil
	}
	if v[0] == '\'' {
		var b strings.Builder
		for i := 1; i < len(v); i++ {
			if v[i] == '\'' {
				if i+1 < len(v) && v[i+1] == '\'' {
					b.WriteByte('\'')
					i++
					continue
				}
				return strings.TrimRight(b.String(), " ")
			}
			b.WriteByte(v[i])
		}
		return nil // unterminated string
	}
	if i := strings.IndexByte(v, '/'); i >= 0 {
		v = v[:i]
	}
	v = strings.TrimSpace(v)
	switch v {
	case "":
		return nil
	case "T":
		return true
	case "F":
		return false
	}
	if !strings.ContainsAny(v, ".EeDd") {
		if n, err := strconv.ParseInt(v, 10, 64); err == nil {
			return int(n)
		}
	}
	if f, err := strconv.ParseFloat(strings.NewReplacer("D", "E", "d", "e").Replace(v), 64); err == nil {
		return f
	}
	return nil
}

// header is a parsed FITS header with typed look-ups.
type header struct {
	file string
	hdu  int
	sp   *hduSpan
}

func (h header) has(k string) bool { return h.sp.cards[k] != nil }

func (h header) float(k string) (float64, error) {
	val := h.sp.cards[k]
	if val == nil {
		return 0, fileErr(h.file, h.hdu, k, ErrMissingKeyword)
	}
	var v float64
	switch x := val.(type) {
	case float64:
		v = x
	case int:
		v = float64(x)
	case string:
		f, err := strconv.ParseFloat(strings.TrimSpace(x), 64)
		if err != nil {
			return 0, fileErr(h.file, h.hdu, k, fmt.Errorf("%w: %q is not a number", ErrBadKeyword, x))
		}
		v = f
	default:
		return 0, fileErr(h.file, h.hdu, k, fmt.Errorf("%w: %v is not a number", ErrBadKeyword, val))
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fileErr(h.file, h.hdu, k, fmt.Errorf("%w: %v", ErrNotFinite, v))
	}
	return v, nil
}

func (h header) str(k string) string {
	val := h.sp.cards[k]
	if val == nil {
		return ""
	}
	if s, ok := val.(string); ok {
		return strings.TrimSpace(s)
	}
	return fmt.Sprint(val)
}

// strings returns all keyword values as strings, keyed by name.
func (h header) strings(dst map[string]string) {
	for _, k := range h.sp.keys {
		switch x := h.sp.cards[k].(type) {
		case nil:
		case string:
			dst[k] = x
		case float64:
			dst[k] = strconv.FormatFloat(x, 'G', -1, 64)
		case bool:
			dst[k] = map[bool]string{true: "T", false: "F"}[x]
		default:
			dst[k] = fmt.Sprint(x)
		}
	}
}

func readFITSBytes(data []byte, name string, opts *ReadOptions) (*Spectrum, error) {
	if opts == nil {
		opts = &ReadOptions{}
	}
	spans, err := walkFITS(data, name)
	if err != nil {
		return nil, err
	}
	hdus := spans
	hdr := func(i int) header { return header{file: name, hdu: i, sp: &spans[i]} }
	extname := func(i int) string {
		if i == 0 {
			return "PRIMARY"
		}
		return strings.ToUpper(hdr(i).str("EXTNAME"))
	}
	find := func(names ...string) int {
		for i := 1; i < len(hdus); i++ {
			for _, n := range names {
				if extname(i) == n {
					return i
				}
			}
		}
		return -1
	}
	isImage := func(i int) bool { return (i == 0 || spans[i].xtension == "IMAGE") && len(spans[i].axes) > 0 }

	// Choose the HDU holding the flux.
	fluxHDU := -1
	if opts.HDU != "" {
		want := strings.ToUpper(opts.HDU)
		for i := range hdus {
			if extname(i) == want {
				fluxHDU = i
			}
		}
		if fluxHDU < 0 {
			return nil, fileErr(name, -1, "EXTNAME", fmt.Errorf("%w: no HDU named %q", ErrNoSpectrum, opts.HDU))
		}
	} else {
		skip := map[string]bool{"WAVE": true, "WAVELENGTH": true, "ERR": true, "ERROR": true, "SIGMA": true}
		if isImage(0) {
			fluxHDU = 0
		}
		for i := 1; i < len(hdus) && fluxHDU < 0; i++ {
			if spans[i].xtension == "BINTABLE" {
				fluxHDU = i
			}
		}
		for i := 1; i < len(hdus) && fluxHDU < 0; i++ {
			if isImage(i) && !skip[extname(i)] {
				fluxHDU = i
			}
		}
		if fluxHDU < 0 {
			return nil, fileErr(name, -1, "", ErrNoSpectrum)
		}
	}

	prim := hdr(0)
	fh := hdr(fluxHDU)
	s := &Spectrum{Name: name, Header: map[string]string{}}
	prim.strings(s.Header)
	commentary(data, spans[0], s.Header)
	if fluxHDU != 0 {
		fh.strings(s.Header)
	}

	// Look keywords up in the flux HDU first, then the primary header.
	look := func(k string) header {
		if fh.has(k) {
			return fh
		}
		return prim
	}

	var unitSrc string
	kind := spans[fluxHDU].xtension
	if fluxHDU == 0 {
		kind = "IMAGE"
	}
	switch kind {
	case "BINTABLE":
		if unitSrc, err = readTable(s, data, spans[fluxHDU], fh, opts); err != nil {
			return nil, err
		}
	case "IMAGE":
		sp := spans[fluxHDU]
		if len(sp.axes) != 1 && len(sp.axes) != 2 {
			return nil, fileErr(name, fluxHDU, "NAXIS", fmt.Errorf("%w: %d axes, want 1 (one spectrum) or 2 (pixels × orders)", ErrBadRank, len(sp.axes)))
		}
		flux, err := imageRows(data, sp, fh)
		if err != nil {
			return nil, err
		}
		s.Orders = make([]Order, len(flux))
		for o := range flux {
			s.Orders[o].Flux = flux[o]
		}
		if w := find("WAVE", "WAVELENGTH"); w >= 0 {
			wh := hdr(w)
			if !shapeEqual(spans[w].axes, sp.axes) {
				return nil, fileErr(name, w, "NAXIS", fmt.Errorf("%w: wavelength image %v, flux image %v", ErrMismatch, spans[w].axes, sp.axes))
			}
			wl, err := imageRows(data, spans[w], wh)
			if err != nil {
				return nil, err
			}
			for o := range wl {
				s.Orders[o].Wavelength = wl[o]
			}
			if wh.has("BUNIT") {
				unitSrc = wh.str("BUNIT")
			}
		} else {
			if len(sp.axes) == 2 && sp.axes[1] > 1 {
				return nil, fileErr(name, fluxHDU, "WAVE", fmt.Errorf("%w: a 2-D echelle image needs a WAVE image extension", ErrMissingKeyword))
			}
			wl, err := wcsWavelengths(fh, prim, sp.axes[0])
			if err != nil {
				return nil, err
			}
			for o := range s.Orders {
				s.Orders[o].Wavelength = wl
			}
			unitSrc = look("CUNIT1").str("CUNIT1")
		}
		if e := find("ERR", "ERROR", "SIGMA"); e >= 0 {
			eh := hdr(e)
			if !shapeEqual(spans[e].axes, sp.axes) {
				return nil, fileErr(name, e, "NAXIS", fmt.Errorf("%w: error image %v, flux image %v", ErrMismatch, spans[e].axes, sp.axes))
			}
			ev, err := imageRows(data, spans[e], eh)
			if err != nil {
				return nil, err
			}
			for o := range ev {
				s.Orders[o].Err = ev[o]
			}
		}
	default:
		return nil, fileErr(name, fluxHDU, "XTENSION", fmt.Errorf("%w: HDU type %q", ErrNoSpectrum, kind))
	}

	// Wavelength unit.
	unit := opts.WavelengthUnit
	if unit == "" {
		unit = unitSrc
	}
	f, err := unitFactor(unit)
	if err != nil {
		return nil, fileErr(name, fluxHDU, "CUNIT1", err)
	}
	if f != 1 {
		for o := range s.Orders {
			for i := range s.Orders[o].Wavelength {
				s.Orders[o].Wavelength[i] *= f
			}
		}
	}

	// Air or vacuum.
	switch opts.Scale {
	case ScaleAir:
		s.Vacuum = false
	case ScaleVacuum:
		s.Vacuum = true
	default:
		ct := strings.ToUpper(look("CTYPE1").str("CTYPE1"))
		ws := strings.ToLower(look("WAVESCAL").str("WAVESCAL"))
		av := strings.ToLower(look("AIRORVAC").str("AIRORVAC"))
		switch {
		case strings.HasPrefix(ct, "WAVE"):
			s.Vacuum = true
		case strings.HasPrefix(ct, "AWAV"):
			s.Vacuum = false
		case ws == "vacuum" || av == "vac" || av == "vacuum":
			s.Vacuum = true
		case ws == "air" || av == "air":
			s.Vacuum = false
		default:
			return nil, fileErr(name, fluxHDU, "CTYPE1", fmt.Errorf("%w: say so in the header (CTYPE1 = 'AWAV' for air or 'WAVE' for vacuum, or WAVESCAL = 'air' or 'vacuum'), or give the scale of every spectrum (--scale air or --scale vacuum)", ErrUnknownScale))
		}
	}

	if err := readEpoch(s, look, opts); err != nil {
		return nil, err
	}
	if err := s.validate(opts.AllowNegative); err != nil {
		return nil, err
	}
	return s, nil
}

func shapeEqual(a, b []int) bool {
	// A 1-D image equals a 2-D image with one row.
	trim := func(x []int) []int {
		for len(x) > 1 && x[len(x)-1] == 1 {
			x = x[:len(x)-1]
		}
		return x
	}
	a, b = trim(a), trim(b)
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// imageRows decodes an image's data into rows of NAXIS1 values, applying
// BSCALE and BZERO.
func imageRows(data []byte, sp hduSpan, h header) ([][]float64, error) {
	npix := sp.axes[0]
	nrow := 1
	if len(sp.axes) > 1 {
		nrow = sp.axes[1]
	}
	if npix == 0 || nrow == 0 {
		return nil, fileErr(h.file, h.hdu, "NAXIS1", ErrNoData)
	}
	bscale, bzero := 1.0, 0.0
	var err error
	if h.has("BSCALE") {
		if bscale, err = h.float("BSCALE"); err != nil {
			return nil, err
		}
	}
	if h.has("BZERO") {
		if bzero, err = h.float("BZERO"); err != nil {
			return nil, err
		}
	}
	raw := data[sp.dataStart : sp.dataStart+sp.dataLen]
	size := abs(sp.bitpix) / 8
	rows := make([][]float64, nrow)
	all := make([]float64, npix*nrow)
	for r := range rows {
		rows[r] = all[r*npix : (r+1)*npix : (r+1)*npix]
	}
	switch {
	case sp.bitpix == -32 && bscale == 1 && bzero == 0:
		for i := range all {
			all[i] = float64(math.Float32frombits(binary.BigEndian.Uint32(raw[4*i:])))
		}
	case sp.bitpix == -64 && bscale == 1 && bzero == 0:
		for i := range all {
			all[i] = math.Float64frombits(binary.BigEndian.Uint64(raw[8*i:]))
		}
	default:
		for i := range all {
			all[i] = decodeValue(raw[i*size:], sp.bitpix)*bscale + bzero
		}
	}
	return rows, nil
}

func decodeValue(b []byte, bitpix int) float64 {
	switch bitpix {
	case 8:
		return float64(b[0])
	case 16:
		return float64(int16(binary.BigEndian.Uint16(b)))
	case 32:
		return float64(int32(binary.BigEndian.Uint32(b)))
	case 64:
		return float64(int64(binary.BigEndian.Uint64(b)))
	case -32:
		return float64(math.Float32frombits(binary.BigEndian.Uint32(b)))
	default:
		return math.Float64frombits(binary.BigEndian.Uint64(b))
	}
}

// wcsWavelengths computes the pixel wavelengths of a 1-D spectrum from its
// WCS keywords (looked up in the flux HDU, then the primary header), in the
// unit of CUNIT1.
func wcsWavelengths(fh, prim header, n int) ([]float64, error) {
	look := func(k string) header {
		if fh.has(k) {
			return fh
		}
		return prim
	}
	crval, err := look("CRVAL1").float("CRVAL1")
	if err != nil {
		return nil, err
	}
	var delt float64
	switch {
	case look("CDELT1").has("CDELT1"):
		delt, err = look("CDELT1").float("CDELT1")
	case look("CD1_1").has("CD1_1"):
		delt, err = look("CD1_1").float("CD1_1")
	default:
		err = fileErr(fh.file, fh.hdu, "CDELT1", fmt.Errorf("%w: neither CDELT1 nor CD1_1", ErrMissingKeyword))
	}
	if err != nil {
		return nil, err
	}
	crpix := 1.0
	if look("CRPIX1").has("CRPIX1") {
		if crpix, err = look("CRPIX1").float("CRPIX1"); err != nil {
			return nil, err
		}
	}
	ctype := strings.ToUpper(look("CTYPE1").str("CTYPE1"))
	dcflag := 0.0
	if look("DC-FLAG").has("DC-FLAG") {
		dcflag, _ = look("DC-FLAG").float("DC-FLAG")
	}
	if delt == 0 {
		return nil, fileErr(fh.file, fh.hdu, "CDELT1", fmt.Errorf("%w: wavelength step is zero", ErrBadKeyword))
	}
	wl := make([]float64, n)
	switch {
	case strings.HasSuffix(ctype, "-LOG"):
		if crval <= 0 {
			return nil, fileErr(fh.file, fh.hdu, "CRVAL1", fmt.Errorf("%w: logarithmic axis needs CRVAL1 > 0", ErrBadKeyword))
		}
		// exp once per block of 256 pixels, then the constant ratio: the
		// rounding error stays below 256 ulp (1e-13, 0.03 mm/s).
		r := math.Exp(delt / crval)
		for i := range wl {
			if i%256 == 0 {
				wl[i] = crval * math.Exp(delt*(float64(i+1)-crpix)/crval)
			} else {
				wl[i] = wl[i-1] * r
			}
		}
	case dcflag == 1:
		for i := range wl {
			wl[i] = math.Pow(10, crval+delt*(float64(i+1)-crpix))
		}
	case ctype == "" || ctype == "WAVE" || ctype == "AWAV" || ctype == "LINEAR" || ctype == "WAVELENGTH" || ctype == "LAMBDA":
		for i := range wl {
			wl[i] = crval + delt*(float64(i+1)-crpix)
		}
	default:
		return nil, fileErr(fh.file, fh.hdu, "CTYPE1", fmt.Errorf("%w: spectral axis type %q not supported", ErrBadKeyword, ctype))
	}
	// Absurd values (CRVAL1 = 1e308) give infinite wavelengths or a step
	// lost in rounding: blame the keywords, not a pixel.
	for i, w := range wl {
		if math.IsInf(w, 0) || math.IsNaN(w) || i > 0 && w == wl[i-1] {
			return nil, fileErr(fh.file, fh.hdu, "CRVAL1", fmt.Errorf("%w: CRVAL1 = %g, CDELT1 = %g, CRPIX1 = %g give no usable wavelength grid (pixel %d at %g)",
				ErrBadKeyword, crval, delt, crpix, i+1, w))
		}
	}
	return wl, nil
}

// unitFactor returns the factor that turns a wavelength in unit u into Å.
func unitFactor(u string) (float64, error) {
	switch strings.ToLower(strings.TrimSpace(u)) {
	case "", "angstrom", "angstroms", "angstroem", "a", "aa", "å", "0.1 nm", "1e-10 m":
		return 1, nil
	case "nm", "nanometer", "nanometers", "nanometre":
		return 10, nil
	case "um", "micron", "microns", "µm", "micrometer":
		return 1e4, nil
	case "m", "meter", "metre":
		return 1e10, nil
	}
	return 0, fmt.Errorf("%w: %q", ErrBadUnit, u)
}

// readEpoch fills s.BJD and s.BERV from header keywords.
func readEpoch(s *Spectrum, look func(string) header, opts *ReadOptions) error {
	toJD := func(v float64) float64 {
		if v > 2400000 {
			return v
		}
		return v + 2400000.5
	}
	switch {
	case opts.EpochKeyword != "":
		k := strings.ToUpper(opts.EpochKeyword)
		v, err := look(k).float(k)
		if err != nil {
			return err
		}
		s.BJD = toJD(v)
	case look("BJD_TDB").has("BJD_TDB"):
		v, err := look("BJD_TDB").float("BJD_TDB")
		if err != nil {
			return err
		}
		s.BJD = toJD(v)
	case look("MJD-OBS").has("MJD-OBS"):
		v, err := look("MJD-OBS").float("MJD-OBS")
		if err != nil {
			return err
		}
		s.BJD = v + 2400000.5
	case look("DATE-OBS").has("DATE-OBS"):
		h := look("DATE-OBS")
		jd, err := isoToJD(h.str("DATE-OBS"))
		if err != nil {
			return fileErr(h.file, h.hdu, "DATE-OBS", err)
		}
		s.BJD = jd
	}
	bk := strings.ToUpper(opts.BERVKeyword)
	unit := opts.BERVUnit
	if unit == 0 {
		unit = 1000
	}
	if look("BARYZ").has("BARYZ") {
		z, err := look("BARYZ").float("BARYZ")
		if err != nil {
			return err
		}
		if !(z > -0.001 && z < 0.001) {
			h := look("BARYZ")
			return fileErr(h.file, h.hdu, "BARYZ", fmt.Errorf("%w: barycentric redshift %v, want |z| < 0.001", ErrBadKeyword, z))
		}
		s.Bary, s.BaryZ = BaryRedshift, z
	}
	if bk == "" {
		if !look("BERV").has("BERV") {
			return nil
		}
		bk = "BERV"
	}
	v, err := look(bk).float(bk)
	if err != nil {
		return err
	}
	s.BERV = v * unit
	if s.Bary != BaryRedshift {
		s.Bary = bervConvention(look("BERVCONV").str("BERVCONV"))
	}
	return nil
}

// bervConvention maps the BERVCONV keyword onto a convention: 'RADIAL'
// keeps a purely radial BERV (as WriteFITS records for simulated spectra);
// anything else, or no keyword, is BaryVelocity.
func bervConvention(v string) BaryConvention {
	if strings.EqualFold(strings.TrimSpace(v), "RADIAL") {
		return BaryRadial
	}
	return BaryVelocity
}

// isoToJD parses an ISO 8601 date or date-time (as in DATE-OBS) as a Julian
// date, ignoring the time scale.
func isoToJD(v string) (float64, error) {
	v = strings.TrimSuffix(strings.TrimSpace(v), "Z")
	layouts := []string{"2006-01-02T15:04:05.999999999", "2006-01-02T15:04:05", "2006-01-02"}
	for _, l := range layouts {
		t, err := time.Parse(l, v)
		if err == nil {
			return float64(t.Unix())/86400 + float64(t.Nanosecond())/86400e9 + 2440587.5, nil
		}
	}
	return 0, fmt.Errorf("%w: %q is not an ISO 8601 date", ErrBadKeyword, v)
}

// commentary collects the COMMENT and HISTORY cards of an HDU's header into
// dst, one line per card joined by newlines.
func commentary(data []byte, sp hduSpan, dst map[string]string) {
	for p := sp.hdrStart; p+80 <= sp.dataStart; p += 80 {
		key := string(bytes.TrimRight(data[p:p+8], " "))
		if key == "END" {
			return
		}
		if key != "COMMENT" && key != "HISTORY" {
			continue
		}
		text := strings.TrimRight(string(data[p+8:p+80]), " ")
		if dst[key] != "" {
			dst[key] += "\n"
		}
		dst[key] += text
	}
}
