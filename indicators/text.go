package indicators

import (
	"bufio"
	"fmt"
	"io"
	"strconv"
	"strings"
)

// ReadText reads a 1-D spectrum from plain-text columns: wavelength, flux
// and, optionally, flux error, separated by blanks or commas. Lines that are
// empty or start with '#' are skipped; a comment line of the form
//
//	# KEY = value
//
// sets a header keyword, so that "# WAVESCAL = vacuum", "# BJD_TDB = …",
// "# BERV = …" (km/s) and "# CUNIT1 = nm" are understood as in FITS files.
// ReadOptions.WaveColumn, FluxColumn and ErrColumn may give 1-based column
// numbers (defaults 1, 2 and 3 when a third column exists). The first
// non-comment line may be a header of column names, which is skipped. Errors
// are *FileError values giving the line number.
func ReadText(r io.Reader, name string, opts *ReadOptions) (*Spectrum, error) {
	if opts == nil {
		opts = &ReadOptions{}
	}
	colNum := func(v string, def int, key string) (int, error) {
		if v == "" {
			return def, nil
		}
		n, err := strconv.Atoi(v)
		if err != nil || n < 1 {
			return 0, fileErr(name, -1, key, fmt.Errorf("%w: text column %q must be a number from 1", ErrBadParameter, v))
		}
		return n - 1, nil
	}
	wc, err := colNum(opts.WaveColumn, 0, "WaveColumn")
	if err != nil {
		return nil, err
	}
	fc, err := colNum(opts.FluxColumn, 1, "FluxColumn")
	if err != nil {
		return nil, err
	}
	ec, err := colNum(opts.ErrColumn, -1, "ErrColumn")
	if err != nil {
		return nil, err
	}
	explicitErr := opts.ErrColumn != ""

	s := &Spectrum{Name: name, Header: map[string]string{}}
	var o Order
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 64<<10), 1<<20)
	line := 0
	first := true
	for sc.Scan() {
		line++
		t := strings.TrimSpace(sc.Text())
		if t == "" {
			continue
		}
		if t[0] == '#' {
			if k, v, ok := strings.Cut(t[1:], "="); ok {
				k = strings.ToUpper(strings.TrimSpace(k))
				if checkKeyword(k) == nil {
					s.Header[k] = strings.Trim(strings.TrimSpace(v), "'\"")
				}
			}
			continue
		}
		fields := strings.FieldsFunc(t, func(r rune) bool { return r == ' ' || r == '\t' || r == ',' || r == ';' })
		if first && ec < 0 && !explicitErr && len(fields) >= 3 {
			ec = 2
		}
		need := max(wc, fc, ec) + 1
		if len(fields) < need {
			return nil, &FileError{File: name, HDU: -1, Line: line, Order: -1, Pixel: -1, Err: fmt.Errorf("%w: %d fields, need %d", ErrMismatch, len(fields), need)}
		}
		parse := func(c int, what string) (float64, error) {
			v, err := strconv.ParseFloat(fields[c], 64)
			if err != nil {
				return 0, &FileError{File: name, HDU: -1, Line: line, Keyword: what, Order: -1, Pixel: -1, Err: fmt.Errorf("%w: %q", ErrParse, fields[c])}
			}
			return v, nil
		}
		w, err := parse(wc, "wavelength")
		if err != nil {
			if first {
				// A header line of column names.
				first = false
				continue
			}
			return nil, err
		}
		first = false
		f, err := parse(fc, "flux")
		if err != nil {
			return nil, err
		}
		o.Wavelength = append(o.Wavelength, w)
		o.Flux = append(o.Flux, f)
		if ec >= 0 {
			e, err := parse(ec, "error")
			if err != nil {
				return nil, err
			}
			o.Err = append(o.Err, e)
		}
	}
	if err := sc.Err(); err != nil {
		return nil, &FileError{File: name, HDU: -1, Line: line + 1, Order: -1, Pixel: -1, Err: fmt.Errorf("%w: %v", ErrParse, err)}
	}
	if len(o.Wavelength) == 0 {
		return nil, fileErr(name, -1, "", ErrNoData)
	}
	s.Orders = []Order{o}

	unit := opts.WavelengthUnit
	if unit == "" {
		unit = s.Header["CUNIT1"]
	}
	f, err := unitFactor(unit)
	if err != nil {
		return nil, fileErr(name, -1, "CUNIT1", err)
	}
	for i := range o.Wavelength {
		o.Wavelength[i] *= f
	}
	switch opts.Scale {
	case ScaleAir:
		s.Vacuum = false
	case ScaleVacuum:
		s.Vacuum = true
	default:
		switch strings.ToLower(s.Header["WAVESCAL"]) {
		case "vacuum", "vac":
			s.Vacuum = true
		case "air":
			s.Vacuum = false
		default:
			return nil, fileErr(name, -1, "WAVESCAL", fmt.Errorf("%w: add a comment line \"# WAVESCAL = air\" or \"# WAVESCAL = vacuum\" above the columns, or give the scale of every spectrum (--scale air or --scale vacuum)", ErrUnknownScale))
		}
	}
	if err := textEpoch(s, opts); err != nil {
		return nil, err
	}
	if err := s.validate(opts.AllowNegative); err != nil {
		return nil, err
	}
	return s, nil
}

// textEpoch applies the epoch and BERV rules of ReadOptions to the header
// keywords of a text file.
func textEpoch(s *Spectrum, opts *ReadOptions) error {
	get := func(k string) (float64, bool, error) {
		v, ok := s.Header[k]
		if !ok {
			return 0, false, nil
		}
		f, err := strconv.ParseFloat(v, 64)
		if err != nil {
			return 0, true, fileErr(s.Name, -1, k, fmt.Errorf("%w: %q is not a number", ErrBadKeyword, v))
		}
		return f, true, nil
	}
	toJD := func(v float64) float64 {
		if v > 2400000 {
			return v
		}
		return v + 2400000.5
	}
	keys := []string{"BJD_TDB", "MJD-OBS"}
	if opts.EpochKeyword != "" {
		keys = []string{strings.ToUpper(opts.EpochKeyword)}
	}
	found := false
	for _, k := range keys {
		v, ok, err := get(k)
		if err != nil {
			return err
		}
		if ok {
			s.BJD = toJD(v)
			found = true
			break
		}
	}
	if !found && opts.EpochKeyword != "" {
		return fileErr(s.Name, -1, keys[0], ErrMissingKeyword)
	}
	if !found {
		if d, ok := s.Header["DATE-OBS"]; ok {
			jd, err := isoToJD(d)
			if err != nil {
				return fileErr(s.Name, -1, "DATE-OBS", err)
			}
			s.BJD = jd
		}
	}
	bk := strings.ToUpper(opts.BERVKeyword)
	if bk == "" {
		bk = "BERV"
	}
	unit := opts.BERVUnit
	if unit == 0 {
		unit = 1000
	}
	v, ok, err := get(bk)
	if err != nil {
		return err
	}
	if !ok && opts.BERVKeyword != "" {
		return fileErr(s.Name, -1, bk, ErrMissingKeyword)
	}
	s.BERV = v * unit
	if z, ok, err := get("BARYZ"); err != nil {
		return err
	} else if ok {
		if !(z > -0.001 && z < 0.001) {
			return fileErr(s.Name, -1, "BARYZ", fmt.Errorf("%w: barycentric redshift %v, want |z| < 0.001", ErrBadKeyword, z))
		}
		s.Bary, s.BaryZ = BaryRedshift, z
	} else if s.BERV != 0 {
		s.Bary = bervConvention(s.Header["BERVCONV"])
	}
	return nil
}
