package rvfit

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"reflect"
	"strconv"
	"strings"

	"github.com/astrogo/fitsio"
)

// FITSExtName is the EXTNAME of the binary table spotsift writes; when
// reading, a table of that name is preferred, else the first table HDU.
const FITSExtName = "EPOCHS"

// instrumentWidth is the width in characters of the instrument column
// written to FITS; longer labels are an error rather than cut short.
const instrumentWidth = 24

// ReadFITSTable reads a per-epoch table from a FITS file: the binary (or
// ASCII) table HDU named EPOCHS, or else the first table HDU. Column names
// are matched case-insensitively against the canonical names; units come
// from TUNITn (velocities in km/s are converted to m/s). A NaN in an
// indicator column is a missing value; in time, rv or rv_err it is an
// error. Rows in errors are counted from 1.
func ReadFITSTable(r io.Reader, name string, opts *ReadOptions) (s *Series, warns []string, err error) {
	if opts == nil {
		opts = &ReadOptions{}
	}
	rt, err := scanFITSTable(r, name)
	if err != nil {
		return nil, nil, err
	}
	plan, err := mapRoles(rt, opts)
	if err != nil {
		return nil, nil, err
	}
	for _, c := range rt.cols {
		if c.required && c.bad != nil && !c.text {
			return nil, nil, c.bad
		}
	}
	return rt.build(plan, opts)
}

// scanFITSTable decodes the table HDU of a FITS file into a raw table.
func scanFITSTable(r io.Reader, name string) (rt *rawTable, err error) {
	terr := func(row int, col string, err error) error {
		return &TableError{File: name, Line: row, Column: col, Err: err}
	}
	// The FITS decoder assumes well-formed input; turn its panics on
	// malformed files into errors.
	defer func() {
		if p := recover(); p != nil {
			rt, err = nil, terr(0, "", fmt.Errorf("%w: malformed FITS file: its header does not describe its table (check it with fitsverify)", ErrBadFormat))
		}
	}()
	b, err := io.ReadAll(io.LimitReader(r, maxFITSBytes+1))
	if err != nil {
		return nil, terr(0, "", err)
	}
	if len(b) > maxFITSBytes {
		return nil, terr(0, "", fmt.Errorf("%w: file larger than %d bytes", ErrBadFormat, maxFITSBytes))
	}
	if err := checkFITSLayout(b); err != nil {
		return nil, terr(0, "", fmt.Errorf("%w: %v", ErrBadFormat, err))
	}
	f, err := fitsio.Open(bytes.NewReader(b))
	if err != nil {
		return nil, terr(0, "", fmt.Errorf("%w: %v", ErrBadFormat, err))
	}
	defer f.Close()
	var tbl *fitsio.Table
	for _, hdu := range f.HDUs() {
		t, ok := hdu.(*fitsio.Table)
		if !ok {
			continue
		}
		if tbl == nil || strings.EqualFold(strings.TrimSpace(hdu.Name()), FITSExtName) {
			tbl = t
		}
	}
	if tbl == nil {
		return nil, terr(0, "", fmt.Errorf("%w: no table HDU in the FITS file", ErrBadFormat))
	}
	nrows := tbl.NumRows()
	if nrows < 0 || nrows > 1<<26 {
		return nil, terr(0, "", fmt.Errorf("%w: NAXIS2 = %d rows", ErrBadFormat, nrows))
	}
	cols := tbl.Cols()
	if len(cols) == 0 {
		return nil, terr(0, "", fmt.Errorf("%w: the table HDU has no columns", ErrBadFormat))
	}
	if len(cols) > maxColumns {
		return nil, terr(0, "", fmt.Errorf("%w: %d columns, more than the %d a table may have", ErrBadFormat, len(cols), maxColumns))
	}
	rt = &rawTable{file: name, units: map[string]string{}}
	ptrs := make([]any, len(cols))
	seen := map[string]bool{}
	for j, c := range cols {
		n := strings.TrimSpace(c.Name)
		if lc := strings.ToLower(n); isCanonicalFITSName(lc) {
			n = lc
		}
		if n == "" {
			return nil, terr(0, "", fmt.Errorf("%w: column %d has no TTYPE", ErrMissingColumn, j+1))
		}
		if seen[n] {
			return nil, terr(0, n, ErrDuplicateColumn)
		}
		seen[n] = true
		rc := &rawColumn{name: n, pos: j + 1, unit: strings.TrimSpace(c.Unit), keep: true}
		rt.cols = append(rt.cols, rc)
		typ := c.Type()
		if typ == nil {
			return nil, terr(0, n, fmt.Errorf("%w: unsupported column format %q", ErrBadFormat, clip(c.Format)))
		}
		switch typ.Kind() {
		case reflect.Float64, reflect.Float32, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64,
			reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64, reflect.String:
			ptrs[j] = reflect.New(typ).Interface()
		default:
			return nil, terr(0, n, fmt.Errorf("%w: column format %q (vector or complex columns are not per-epoch values)", ErrBadFormat, clip(c.Format)))
		}
		rc.num = make([]float64, 0, nrows)
		rc.state = make([]cellState, 0, nrows)
		if typ.Kind() == reflect.String {
			rc.text = true
			rc.str = make([]string, 0, nrows)
		}
	}
	rows, err := tbl.Read(0, nrows)
	if err != nil {
		return nil, terr(0, "", fmt.Errorf("%w: %v", ErrBadFormat, err))
	}
	defer rows.Close()
	row := 0
	for rows.Next() {
		row++
		if err := rows.Scan(ptrs...); err != nil {
			return nil, terr(row, "", fmt.Errorf("%w: %v", ErrBadFormat, err))
		}
		for j, rc := range rt.cols {
			v := reflect.ValueOf(ptrs[j]).Elem()
			x, st := math.NaN(), cellOK
			switch v.Kind() {
			case reflect.String:
				// fitsio's own writer puts a NUL before the text.
				t := strings.Trim(v.String(), "\x00 ")
				rc.str = append(rc.str, t)
				if y, err := strconv.ParseFloat(t, 64); err == nil {
					x = y
				} else {
					st = cellBad
					if rc.bad == nil {
						rc.bad = terr(row, rc.name, fmt.Errorf("%w: %q", ErrNotNumber, clip(t)))
					}
				}
			case reflect.Float64, reflect.Float32:
				x = v.Float()
			case reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64:
				x = float64(v.Int())
			default:
				x = float64(v.Uint())
			}
			if st == cellOK && math.IsNaN(x) {
				st = cellNaN
			}
			rc.num = append(rc.num, x)
			rc.state = append(rc.state, st)
		}
		rt.line = append(rt.line, row)
	}
	if err := rows.Err(); err != nil {
		return nil, terr(row+1, "", fmt.Errorf("%w: %v", ErrBadFormat, err))
	}
	return rt, nil
}

// isCanonicalFITSName reports whether a lower-cased column name is one
// spotsift knows (FITS writers often upper-case TTYPE).
func isCanonicalFITSName(lc string) bool {
	switch lc {
	case ColTime, ColRV, ColRVErr, ColInstrument:
		return true
	}
	_, ok := UnitOf(lc)
	return ok
}

// WriteFITSTable writes s as a FITS file: an empty primary HDU and a binary
// table HDU named EPOCHS with one double-precision column per quantity
// (TUNITn giving its unit), the instrument as a character column, NaN for
// a missing indicator value, and CREATOR naming the program and version.
//
// The encoder is spotsift's own (fitsio v0.3.0 writes binary-table headers
// that fitsverify rejects: TSCALn = 0, TBCOLn, THEAP without a heap); the
// result passes fitsverify with no errors or warnings and reads back with
// ReadFITSTable and with astropy.
func WriteFITSTable(w io.Writer, s *Series, opts *WriteOptions) error {
	if err := s.checkWritable(); err != nil {
		return err
	}
	var cols []FITSColumn
	for _, c := range s.columnsOf() {
		if c.v == nil {
			cols = append(cols, FITSColumn{Name: c.name, Text: s.Instrument, Width: instrumentWidth})
		} else {
			cols = append(cols, FITSColumn{Name: c.name, Unit: c.unit, Float: c.v})
		}
	}
	return WriteFITSColumns(w, FITSExtName, "per-epoch time series", cols, [][3]string{
		{"TIMESYS", "TDB", "time scale of the time column"},
		{"TIMEREF", "SOLARSYSTEM", "times are barycentric (BJD_TDB)"},
		{"TIMEUNIT", "d", "unit of the time column"},
	}, opts)
}

// FITSColumn is one column of a FITS binary table written by
// WriteFITSColumns: either Float (written as 'D', NaN allowed) or Text
// (written as 'wA' with w = Width, the longest text if Width is 0).
type FITSColumn struct {
	Name, Unit string
	Float      []float64
	Text       []string
	Width      int
}

// WriteFITSColumns writes a FITS file with an empty primary HDU and one
// binary table HDU named extname of the given columns (all of one length),
// with extra header keywords (key, string value, comment) and CREATOR from
// opts. Text must be printable ASCII and no longer than the column's width;
// names, units and keyword values short printable ASCII. The output passes
// fitsverify.
func WriteFITSColumns(w io.Writer, extname, what string, cols []FITSColumn, keywords [][3]string, opts *WriteOptions) error {
	creator := opts.creator()
	if !isFITSText(creator) || len(creator) > 60 {
		return fmt.Errorf("%w: creator %q is not short printable ASCII", ErrBadFormat, creator)
	}
	nrows := -1
	rowLen := 0
	for j := range cols {
		c := &cols[j]
		if !isFITSText(c.Name) || len(c.Name) > 60 || c.Name == "" || !isFITSText(c.Unit) || len(c.Unit) > 60 {
			return fmt.Errorf("%w: column %q (unit %q) is not short printable ASCII", ErrBadFormat, c.Name, c.Unit)
		}
		n := len(c.Float)
		if c.Float == nil {
			n = len(c.Text)
			width := c.Width
			for i, t := range c.Text {
				if !isFITSText(t) {
					return fmt.Errorf("%w: column %q row %d: %q is not printable ASCII", ErrBadFormat, c.Name, i+1, t)
				}
				if c.Width > 0 && len(t) > c.Width {
					return fmt.Errorf("%w: column %q row %d: %q is longer than %d characters", ErrBadFormat, c.Name, i+1, t, c.Width)
				}
				width = max(width, len(t))
			}
			c.Width = max(width, 1)
			rowLen += c.Width
		} else {
			rowLen += 8
		}
		if nrows >= 0 && n != nrows {
			return fmt.Errorf("%w: column %q has %d rows, others %d", ErrMismatch, c.Name, n, nrows)
		}
		nrows = n
	}
	nrows = max(nrows, 0)
	var hb fitsHeader
	hb.logical("SIMPLE", true, "conforms to the FITS standard")
	hb.integer("BITPIX", 8, "no data in the primary HDU")
	hb.integer("NAXIS", 0, "no data axes")
	hb.logical("EXTEND", true, "extensions follow")
	hb.str("CREATOR", creator, "program that wrote this file")
	if _, err := w.Write(hb.end()); err != nil {
		return err
	}
	hb = fitsHeader{}
	hb.str("XTENSION", "BINTABLE", "binary table extension")
	hb.integer("BITPIX", 8, "8-bit bytes")
	hb.integer("NAXIS", 2, "two-dimensional table")
	hb.integer("NAXIS1", rowLen, "bytes per row")
	hb.integer("NAXIS2", nrows, "rows")
	hb.integer("PCOUNT", 0, "no heap")
	hb.integer("GCOUNT", 1, "one group")
	hb.integer("TFIELDS", len(cols), "columns")
	for j, c := range cols {
		n := j + 1
		hb.str(fmt.Sprintf("TTYPE%d", n), c.Name, "")
		if c.Float == nil {
			hb.str(fmt.Sprintf("TFORM%d", n), fmt.Sprintf("%dA", c.Width), "character string")
		} else {
			hb.str(fmt.Sprintf("TFORM%d", n), "D", "double precision")
		}
		if c.Unit != "" {
			hb.str(fmt.Sprintf("TUNIT%d", n), c.Unit, "")
		}
	}
	hb.str("EXTNAME", extname, what)
	hb.str("CREATOR", creator, "program that wrote this file")
	for _, kw := range keywords {
		if len(kw[0]) > 8 || !isFITSText(kw[1]) || len(kw[1]) > 60 {
			return fmt.Errorf("%w: keyword %s = %q", ErrBadFormat, kw[0], kw[1])
		}
		hb.str(kw[0], kw[1], kw[2])
	}
	if _, err := w.Write(hb.end()); err != nil {
		return err
	}
	row := make([]byte, rowLen)
	for i := 0; i < nrows; i++ {
		off := 0
		for _, c := range cols {
			if c.Float == nil {
				// Left-justified and NUL-padded, as the FITS standard has it.
				clear(row[off : off+c.Width])
				copy(row[off:], c.Text[i])
				off += c.Width
				continue
			}
			binary.BigEndian.PutUint64(row[off:], math.Float64bits(c.Float[i]))
			off += 8
		}
		if _, err := w.Write(row); err != nil {
			return err
		}
	}
	if pad := (fitsBlock - rowLen*nrows%fitsBlock) % fitsBlock; pad > 0 {
		if _, err := w.Write(make([]byte, pad)); err != nil {
			return err
		}
	}
	return nil
}

// fitsBlock is the FITS logical record length in bytes.
const fitsBlock = 2880

// fitsHeader builds a FITS header of 80-character cards.
type fitsHeader struct{ b []byte }

func (h *fitsHeader) card(key, value, comment string) {
	c := fmt.Sprintf("%-8s= %s", key, value)
	if comment != "" {
		c += " / " + comment
	}
	if len(c) > 80 {
		c = c[:80]
	}
	h.b = append(h.b, fmt.Sprintf("%-80s", c)...)
}

func (h *fitsHeader) logical(key string, v bool, comment string) {
	t := "F"
	if v {
		t = "T"
	}
	h.card(key, fmt.Sprintf("%20s", t), comment)
}

func (h *fitsHeader) integer(key string, v int, comment string) {
	h.card(key, fmt.Sprintf("%20d", v), comment)
}

func (h *fitsHeader) str(key, v, comment string) {
	q := "'" + fmt.Sprintf("%-8s", strings.ReplaceAll(v, "'", "''")) + "'"
	h.card(key, fmt.Sprintf("%-20s", q), comment)
}

// end appends the END card and pads the header to whole blocks.
func (h *fitsHeader) end() []byte {
	h.b = append(h.b, fmt.Sprintf("%-80s", "END")...)
	for len(h.b)%fitsBlock != 0 {
		h.b = append(h.b, ' ')
	}
	return h.b
}

// isFITSText reports whether s is printable ASCII, as FITS strings must be.
func isFITSText(s string) bool {
	for i := 0; i < len(s); i++ {
		if s[i] < 0x20 || s[i] > 0x7e {
			return false
		}
	}
	return true
}
