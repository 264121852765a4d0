package indicators

import (
	"fmt"
	"strconv"
	"strings"
)

// tableColumn describes one binary-table column.
type tableColumn struct {
	name   string
	unit   string
	code   byte // TFORM type code
	repeat int
	offset int // byte offset in the row
}

var columnSizes = map[byte]int{'L': 1, 'X': 0, 'B': 1, 'I': 2, 'J': 4, 'K': 8, 'A': 1, 'E': 4, 'D': 8, 'C': 8, 'M': 16, 'P': 8, 'Q': 16}

// readTable reads the orders of s from a binary table: one pixel per row
// (scalar columns) or one order per row (array columns of equal repeat).
// It returns the wavelength column's unit.
func readTable(s *Spectrum, data []byte, sp hduSpan, h header, opts *ReadOptions) (string, error) {
	if len(sp.axes) != 2 {
		return "", fileErr(h.file, h.hdu, "NAXIS", fmt.Errorf("%w: binary table with %d axes", ErrBadRank, len(sp.axes)))
	}
	rowLen, nrows := sp.axes[0], sp.axes[1]
	nf, err := h.float("TFIELDS")
	if err != nil {
		return "", err
	}
	if nf < 1 || nf > 999 {
		return "", fileErr(h.file, h.hdu, "TFIELDS", fmt.Errorf("%w: %v", ErrBadKeyword, nf))
	}
	cols := make([]tableColumn, int(nf))
	off := 0
	for i := range cols {
		key := fmt.Sprintf("TFORM%d", i+1)
		form := strings.ToUpper(h.str(key))
		j := 0
		for j < len(form) && form[j] >= '0' && form[j] <= '9' {
			j++
		}
		if j == len(form) {
			return "", fileErr(h.file, h.hdu, key, fmt.Errorf("%w: TFORM %q", ErrBadKeyword, form))
		}
		rep := 1
		if j > 0 {
			if rep, err = strconv.Atoi(form[:j]); err != nil || rep > 1<<30 {
				return "", fileErr(h.file, h.hdu, key, fmt.Errorf("%w: TFORM %q", ErrBadKeyword, form))
			}
		}
		code := form[j]
		size, ok := columnSizes[code]
		if !ok {
			return "", fileErr(h.file, h.hdu, key, fmt.Errorf("%w: TFORM %q", ErrBadKeyword, form))
		}
		width := size * rep
		if code == 'X' {
			width = (rep + 7) / 8
		}
		if code == 'P' || code == 'Q' {
			width = size // descriptor; repeat is 0 or 1
		}
		cols[i] = tableColumn{
			name:   strings.TrimSpace(h.str(fmt.Sprintf("TTYPE%d", i+1))),
			unit:   strings.TrimSpace(h.str(fmt.Sprintf("TUNIT%d", i+1))),
			code:   code,
			repeat: rep,
			offset: off,
		}
		off += width
	}
	if off != rowLen {
		return "", fileErr(h.file, h.hdu, "NAXIS1", fmt.Errorf("%w: columns take %d bytes, rows have %d", ErrBadKeyword, off, rowLen))
	}
	pick := func(user, what string, names ...string) (int, error) {
		if user != "" {
			for i, c := range cols {
				if strings.EqualFold(c.name, user) {
					return i, nil
				}
			}
			return -1, fileErr(h.file, h.hdu, user, fmt.Errorf("%w: no %s column named %q", ErrMissingColumn, what, user))
		}
		for _, n := range names {
			for i, c := range cols {
				if strings.EqualFold(c.name, n) {
					return i, nil
				}
			}
		}
		return -1, nil
	}
	wi, err := pick(opts.WaveColumn, "wavelength", "WAVE", "WAVELENGTH", "LAMBDA", "LAM", "WAVL")
	if err != nil {
		return "", err
	}
	fi, err := pick(opts.FluxColumn, "flux", "FLUX", "SPEC", "COUNTS", "F")
	if err != nil {
		return "", err
	}
	ei, err := pick(opts.ErrColumn, "error", "ERR", "ERROR", "SIGMA", "FLUX_ERR", "E_FLUX", "UNCERTAINTY")
	if err != nil {
		return "", err
	}
	if wi < 0 {
		return "", fileErr(h.file, h.hdu, "TTYPE", fmt.Errorf("%w: no wavelength column", ErrMissingColumn))
	}
	if fi < 0 {
		return "", fileErr(h.file, h.hdu, "TTYPE", fmt.Errorf("%w: no flux column", ErrMissingColumn))
	}
	use := []int{wi, fi}
	if ei >= 0 {
		use = append(use, ei)
	}
	rep := cols[wi].repeat
	for _, c := range use {
		col := cols[c]
		switch col.code {
		case 'B', 'I', 'J', 'K', 'E', 'D':
		default:
			return "", fileErr(h.file, h.hdu, col.name, fmt.Errorf("%w: column type %c is not numeric", ErrBadKeyword, col.code))
		}
		if col.repeat != rep {
			return "", fileErr(h.file, h.hdu, col.name, fmt.Errorf("%w: column has %d values per row, wavelength %d", ErrMismatch, col.repeat, rep))
		}
	}
	if rep == 0 || nrows == 0 {
		return "", fileErr(h.file, h.hdu, "NAXIS2", ErrNoData)
	}
	bitpixOf := map[byte]int{'B': 8, 'I': 16, 'J': 32, 'K': 64, 'E': -32, 'D': -64}
	read := func(c, row int) ([]float64, error) {
		col := cols[c]
		scale, zero := 1.0, 0.0
		var err error
		if k := fmt.Sprintf("TSCAL%d", c+1); h.has(k) {
			if scale, err = h.float(k); err != nil {
				return nil, err
			}
		}
		if k := fmt.Sprintf("TZERO%d", c+1); h.has(k) {
			if zero, err = h.float(k); err != nil {
				return nil, err
			}
		}
		bp := bitpixOf[col.code]
		size := abs(bp) / 8
		base := sp.dataStart + row*rowLen + col.offset
		out := make([]float64, col.repeat)
		for i := range out {
			out[i] = decodeValue(data[base+i*size:], bp)*scale + zero
		}
		return out, nil
	}
	if rep == 1 {
		// One pixel per row.
		o := Order{Wavelength: make([]float64, nrows), Flux: make([]float64, nrows)}
		if ei >= 0 {
			o.Err = make([]float64, nrows)
		}
		for r := 0; r < nrows; r++ {
			w, err := read(wi, r)
			if err != nil {
				return "", err
			}
			f, _ := read(fi, r)
			o.Wavelength[r], o.Flux[r] = w[0], f[0]
			if ei >= 0 {
				e, _ := read(ei, r)
				o.Err[r] = e[0]
			}
		}
		s.Orders = []Order{o}
	} else {
		s.Orders = make([]Order, nrows)
		for r := 0; r < nrows; r++ {
			var o Order
			if o.Wavelength, err = read(wi, r); err != nil {
				return "", err
			}
			if o.Flux, err = read(fi, r); err != nil {
				return "", err
			}
			if ei >= 0 {
				if o.Err, err = read(ei, r); err != nil {
					return "", err
				}
			}
			s.Orders[r] = o
		}
	}
	return cols[wi].unit, nil
}
