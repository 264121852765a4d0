package rvfit

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// ReadCSV reads a per-epoch table as delimited text: comma-, tab- or
// blank-separated (detected from the first row, or set by opts.Format),
// with a header row or none (then columns are named by position), a units
// row and a row of dashes under the header, quoted fields, an unnamed
// row-index column, '#' comment lines anywhere, or a VizieR fixed-width
// table with its column-description block. A comment of the form
//
//	# units: rv=km/s, rv_err=km/s, fwhm=km/s
//
// gives the units of columns by their names in the file.
//
// Columns take their roles by name (see mapRoles) or by opts.Columns;
// errors are *TableError values naming the file, line and column.
func ReadCSV(r io.Reader, name string, opts *ReadOptions) (*Series, []string, error) {
	if opts == nil {
		opts = &ReadOptions{}
	}
	return readTextTable(r, name, opts, 0)
}

// formatFloat writes x in the shortest form that reads back bit for bit,
// without an exponent for magnitudes from 1e-4 to 1e21 (so epochs read as
// 2460100.6066378187, not 2.4601006066378187e+06).
func formatFloat(x float64) string {
	if a := math.Abs(x); a == 0 || (a >= 1e-4 && a < 1e21) {
		return strconv.FormatFloat(x, 'f', -1, 64)
	}
	return strconv.FormatFloat(x, 'g', -1, 64)
}

// WriteCSV writes s as CSV: a comment naming the creator, a units comment,
// the header row and one row per epoch. Values are written in the shortest
// form that reads back bit for bit; a missing indicator value is an empty
// cell.
func WriteCSV(w io.Writer, s *Series, opts *WriteOptions) error {
	if err := s.checkWritable(); err != nil {
		return err
	}
	cols := s.columnsOf()
	var units []string
	for _, c := range cols {
		if c.unit != "" {
			units = append(units, c.name+"="+c.unit)
		}
	}
	if _, err := fmt.Fprintf(w, "# per-epoch table written by %s\n# units: %s\n", opts.creator(), strings.Join(units, ", ")); err != nil {
		return err
	}
	cw := csv.NewWriter(w)
	rec := make([]string, len(cols))
	for j, c := range cols {
		rec[j] = c.name
	}
	if err := cw.Write(rec); err != nil {
		return err
	}
	for i := range s.Time {
		for j, c := range cols {
			switch {
			case c.v == nil:
				rec[j] = s.Instrument[i]
			case math.IsNaN(c.v[i]):
				rec[j] = ""
			default:
				rec[j] = formatFloat(c.v[i])
			}
		}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}
