package rvfit

import (
	"bufio"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// ReadCSV reads a per-epoch table as delimited text: comma-separated, or
// tab-separated when the header row holds tabs and no commas (or when
// opts.Format is "tsv").
//
// Lines starting with '#' are comments, anywhere in the file; blank lines
// are skipped. A comment of the form
//
//	# units: rv=km/s, rv_err=km/s, fwhm=km/s
//
// gives the units of columns by their names in the file; velocities in km/s
// are converted to m/s. The first other line is the header row.
//
// An empty cell in an indicator column is a missing value; every other cell
// must be a finite number (the instrument column excepted). Errors are
// *TableError values naming the file, line and column.
func ReadCSV(r io.Reader, name string, opts *ReadOptions) (*Series, []string, error) {
	if opts == nil {
		opts = &ReadOptions{}
	}
	rt, err := scanDelimited(r, name, opts.Format == "tsv")
	if err != nil {
		return nil, nil, err
	}
	return rt.build(opts)
}

// scanDelimited reads delimited text into a raw table.
func scanDelimited(r io.Reader, name string, tsv bool) (*rawTable, error) {
	terr := func(line int, col string, err error) error {
		return &TableError{File: name, Line: line, Column: col, Err: err}
	}
	rt := &rawTable{file: name, units: map[string]string{}, num: map[string][]float64{}, empty: map[string][]bool{}, str: map[string][]string{}, bad: map[string]error{}}
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 64*1024), 16*1024*1024)
	lineNo := 0
	var comma rune
	var cells [][]string
	var lines []int
	for sc.Scan() {
		lineNo++
		raw := sc.Text()
		if lineNo == 1 {
			raw = strings.TrimPrefix(raw, "\ufeff")
		}
		trim := strings.TrimSpace(raw)
		if trim == "" {
			continue
		}
		if strings.HasPrefix(trim, "#") {
			if err := parseUnitsComment(trim, rt.units); err != nil {
				return nil, terr(lineNo, "", err)
			}
			continue
		}
		if !strings.ContainsRune(raw, 0) && !isValidUTF8(raw) {
			return nil, terr(lineNo, "", fmt.Errorf("%w: line is not UTF-8 text", ErrBadFormat))
		}
		if rt.names == nil {
			comma = ','
			if tsv || (strings.Contains(raw, "\t") && !strings.Contains(raw, ",")) {
				comma = '\t'
			}
			rec, err := splitRecord(raw, comma)
			if err != nil {
				return nil, terr(lineNo, "", err)
			}
			seen := map[string]bool{}
			for i, h := range rec {
				h = strings.TrimSpace(h)
				if h == "" {
					return nil, terr(lineNo, "", fmt.Errorf("%w: header column %d has no name", ErrMissingColumn, i+1))
				}
				if seen[h] {
					return nil, terr(lineNo, h, ErrDuplicateColumn)
				}
				seen[h] = true
				rt.names = append(rt.names, h)
			}
			continue
		}
		rec, err := splitRecord(raw, comma)
		if err != nil {
			return nil, terr(lineNo, "", err)
		}
		if len(rec) != len(rt.names) {
			return nil, terr(lineNo, "", fmt.Errorf("%w: %d fields, the header has %d", ErrFieldCount, len(rec), len(rt.names)))
		}
		cells = append(cells, rec)
		lines = append(lines, lineNo)
	}
	if err := sc.Err(); err != nil {
		if errors.Is(err, bufio.ErrTooLong) {
			return nil, terr(lineNo+1, "", fmt.Errorf("%w: line longer than 16 MiB", ErrBadFormat))
		}
		return nil, terr(0, "", err)
	}
	if rt.names == nil {
		return nil, terr(0, "", fmt.Errorf("%w: the file is empty (no header row)", ErrNoObservations))
	}
	rt.line = lines
	// Every column keeps its text (for the instrument column); a column all
	// of whose cells parse as numbers (or are empty) is numeric too. The
	// first cell that does not parse is kept for build's error message.
	for j, h := range rt.names {
		vals := make([]float64, len(cells))
		empty := make([]bool, len(cells))
		strs := make([]string, len(cells))
		var bad error
		for i, rec := range cells {
			c := strings.TrimSpace(rec[j])
			strs[i] = c
			if bad != nil {
				continue
			}
			if c == "" {
				empty[i] = true
				vals[i] = math.NaN()
				continue
			}
			x, err := strconv.ParseFloat(c, 64)
			if err != nil {
				var ne *strconv.NumError
				if errors.As(err, &ne) && errors.Is(ne.Err, strconv.ErrRange) {
					bad = terr(lines[i], h, fmt.Errorf("%w: %q is out of range", ErrNotFinite, clip(c)))
				} else {
					bad = terr(lines[i], h, fmt.Errorf("%w: %q", ErrNotNumber, clip(c)))
				}
				continue
			}
			vals[i] = x
		}
		rt.str[h] = strs
		if bad != nil {
			rt.bad[h] = bad
			continue
		}
		rt.num[h] = vals
		rt.empty[h] = empty
	}
	return rt, nil
}

// splitRecord splits one line of delimited text, honouring double quotes.
func splitRecord(line string, comma rune) ([]string, error) {
	cr := csv.NewReader(strings.NewReader(line))
	cr.Comma = comma
	cr.FieldsPerRecord = -1
	cr.TrimLeadingSpace = comma != '\t'
	cr.LazyQuotes = false
	rec, err := cr.Read()
	if err != nil {
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			return nil, fmt.Errorf("%w: %v", ErrBadFormat, pe.Err)
		}
		if err == io.EOF {
			return []string{""}, nil
		}
		return nil, fmt.Errorf("%w: %v", ErrBadFormat, err)
	}
	return rec, nil
}

// parseUnitsComment reads a "# units: a=u, b=v" comment into units; other
// comments are ignored.
func parseUnitsComment(line string, units map[string]string) error {
	body := strings.TrimSpace(strings.TrimPrefix(line, "#"))
	rest, ok := strings.CutPrefix(body, "units:")
	if !ok {
		return nil
	}
	for _, f := range strings.FieldsFunc(rest, func(r rune) bool { return r == ',' || r == ' ' || r == '\t' }) {
		col, u, ok := strings.Cut(f, "=")
		if !ok || col == "" {
			return fmt.Errorf("%w: %q in a units comment is not of the form column=unit", ErrBadUnit, f)
		}
		units[col] = u
	}
	return nil
}

func isValidUTF8(s string) bool { return strings.ToValidUTF8(s, "\uFFFD") == s }

// clip shortens a cell for an error message.
func clip(s string) string {
	if len(s) > 40 {
		return s[:37] + "..."
	}
	return s
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
