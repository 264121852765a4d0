package rvfit

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
)

// Canonical column names of the per-epoch table. Any other column is an
// indicator; a column named X_err holds the uncertainties of column X.
const (
	ColTime       = "time"
	ColRV         = "rv"
	ColRVErr      = "rv_err"
	ColInstrument = "instrument"
)

// errSuffix marks an uncertainty column.
const errSuffix = "_err"

// CanonicalUnits gives the unit in which spotsift keeps each canonical
// column (and in which it writes them). Indicators not listed keep the unit
// their table gives.
var CanonicalUnits = map[string]string{
	"time":            "d",
	"rv":              "m/s",
	"fwhm":            "m/s",
	"contrast":        "", // fraction of the continuum
	"bis":             "m/s",
	"vspan":           "m/s",
	"delta_v":         "m/s",
	"s_index":         "",
	"log_rhk":         "dex",
	"halpha":          "",
	"naid":            "",
	"chromatic_slope": "m/s",
}

// UnitOf returns the canonical unit of a column (its value column's unit for
// an uncertainty column), and whether the column has one.
func UnitOf(col string) (string, bool) {
	u, ok := CanonicalUnits[strings.TrimSuffix(col, errSuffix)]
	return u, ok
}

// ReadOptions controls how a table is read. A nil *ReadOptions reads a
// table whose columns carry spotsift's own names, with velocities in m/s
// unless a units comment says otherwise.
type ReadOptions struct {
	// Columns maps canonical column names onto the file's own, e.g.
	// {"rv": "vrad", "time": "bjd"}. Columns not named keep their name.
	Columns map[string]string
	// RVUnit is the unit of the rv and rv_err columns, "m/s" or "km/s"; it
	// overrides a units comment in the file. Empty: from the file, else m/s.
	RVUnit string
	// Format is "csv", "tsv" or "fits"; empty means by content.
	Format string
	// Value is the canonical name of the column read into the series' RV
	// field (and Value+"_err" into RVErr), for a table of another quantity
	// read with the same rules, e.g. a light curve's "flux" or "mag".
	// Empty means "rv". A value other than rv keeps the unit its file
	// gives: it is not converted and RVUnit does not apply.
	Value string
	// Label is the canonical name of the column read into the series'
	// Instrument labels (e.g. a light curve's "sector"); empty means
	// "instrument".
	Label string
}

// roles returns the canonical names of the value, its uncertainty and the
// label columns.
func (o *ReadOptions) roles() (value, valueErr, label string) {
	value, label = ColRV, ColInstrument
	if o.Value != "" {
		value = o.Value
	}
	if o.Label != "" {
		label = o.Label
	}
	return value, value + errSuffix, label
}

// ReadTable reads a per-epoch table from a file: CSV or TSV text, or a FITS
// binary table (recognised by content, whatever the file's extension). It
// returns the validated series (sorted by time) and any warnings.
//
// Errors name the file, the line (or FITS row) and the column.
func ReadTable(path string, opts *ReadOptions) (*Series, []string, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, nil, err
	}
	defer f.Close()
	return ReadTableFrom(f, path, opts)
}

// ReadTableFrom is ReadTable on an open reader; name is used in messages.
func ReadTableFrom(r io.Reader, name string, opts *ReadOptions) (*Series, []string, error) {
	if opts == nil {
		opts = &ReadOptions{}
	}
	br := bufio.NewReader(r)
	format := opts.Format
	if format == "" {
		head, _ := br.Peek(9)
		if bytes.Equal(head, []byte("SIMPLE  =")) {
			format = "fits"
		}
	}
	switch format {
	case "", "csv", "tsv":
		return ReadCSV(br, name, opts)
	case "fits":
		return ReadFITSTable(br, name, opts)
	}
	return nil, nil, &TableError{File: name, Err: fmt.Errorf("%w %q: want csv, tsv or fits", ErrBadFormat, format)}
}

// ParseColumnMap parses a mapping of canonical column names onto a file's
// own, written "canonical=theirs,canonical=theirs" (e.g.
// "rv=vrad,time=bjd"). An empty string gives an empty map.
func ParseColumnMap(s string) (map[string]string, error) {
	m := map[string]string{}
	if strings.TrimSpace(s) == "" {
		return m, nil
	}
	used := map[string]string{}
	for _, part := range strings.Split(s, ",") {
		ours, theirs, ok := strings.Cut(part, "=")
		ours, theirs = strings.TrimSpace(ours), strings.TrimSpace(theirs)
		if !ok || ours == "" || theirs == "" {
			return nil, fmt.Errorf("%w: %q is not of the form ours=theirs", ErrBadMapping, part)
		}
		if _, dup := m[ours]; dup {
			return nil, fmt.Errorf("%w: %q is mapped twice", ErrBadMapping, ours)
		}
		if prev, dup := used[theirs]; dup {
			return nil, fmt.Errorf("%w: file column %q is mapped to both %q and %q", ErrBadMapping, theirs, prev, ours)
		}
		m[ours] = theirs
		used[theirs] = ours
	}
	return m, nil
}

// velocityScale returns the factor that turns a velocity in unit u into
// m/s, and whether u is a velocity unit.
func velocityScale(u string) (float64, bool) {
	switch strings.ToLower(strings.ReplaceAll(strings.TrimSpace(u), " ", "")) {
	case "m/s", "ms-1", "ms^-1", "m.s-1", "m.s**-1", "m/sec":
		return 1, true
	case "km/s", "kms-1", "kms^-1", "km.s-1", "km.s**-1", "km/sec":
		return 1000, true
	}
	return 0, false
}

// rawTable is a table as read from a file, before validation: columns by
// file name, cells as parsed, with their positions for error messages.
type rawTable struct {
	file  string
	names []string             // file column names in order
	units map[string]string    // file column name -> unit as written
	num   map[string][]float64 // numeric columns (NaN for empty cells)
	empty map[string][]bool    // which cells were empty (text) or null (FITS)
	str   map[string][]string  // every column's cells as text (nil for FITS numeric columns)
	bad   map[string]error     // why a column is not numeric: its first bad cell
	line  []int                // line (text) or row (FITS) of each record
}

// build turns a raw table into a validated Series.
func (rt *rawTable) build(opts *ReadOptions) (*Series, []string, error) {
	var warns []string
	terr := func(line int, col string, err error) error {
		return &TableError{File: rt.file, Line: line, Column: col, Err: err}
	}
	// Map canonical names onto file names.
	fileOf := func(canon string) string {
		if theirs, ok := opts.Columns[canon]; ok {
			return theirs
		}
		return canon
	}
	present := map[string]bool{}
	for _, n := range rt.names {
		present[n] = true
	}
	for _, canon := range sortedMapKeys(opts.Columns) {
		if !present[opts.Columns[canon]] {
			return nil, nil, terr(0, opts.Columns[canon], fmt.Errorf("%w: --columns maps %q onto it, but the file has no such column (it has %s)", ErrMissingColumn, canon, strings.Join(rt.names, ", ")))
		}
	}
	canonOf := map[string]string{} // file name -> canonical name
	for _, n := range rt.names {
		canonOf[n] = n
	}
	for canon, theirs := range opts.Columns {
		if present[canon] && canon != theirs {
			// The file's own column named like a canonical one is displaced.
			canonOf[canon] = canon + "_file"
		}
		canonOf[theirs] = canon
	}
	n := len(rt.line)
	if n == 0 {
		return nil, nil, terr(0, "", fmt.Errorf("%w: the table has a header but no rows", ErrNoObservations))
	}
	s := &Series{Name: rt.file}

	numCol := func(canon string, required bool) ([]float64, string, error) {
		fn := fileOf(canon)
		if !present[fn] {
			if required {
				return nil, fn, terr(0, fn, fmt.Errorf("%w (the file has %s; map yours with --columns %s=NAME)", ErrMissingColumn, strings.Join(rt.names, ", "), canon))
			}
			return nil, fn, nil
		}
		v, ok := rt.num[fn]
		if !ok {
			return nil, fn, rt.notNumeric(fn)
		}
		return append([]float64(nil), v...), fn, nil
	}
	checkRequired := func(v []float64, fn string) error {
		for i, x := range v {
			if rt.empty[fn][i] {
				return terr(rt.line[i], fn, fmt.Errorf("%w: empty cell in a required column", ErrNotNumber))
			}
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return terr(rt.line[i], fn, ErrNotFinite)
			}
		}
		return nil
	}
	colValue, colValueErr, colLabel := opts.roles()
	rvScale := 1.0
	rvUnitFrom := func(fn string) (float64, error) {
		if colValue != ColRV {
			return 1, nil
		}
		u := opts.RVUnit
		if u == "" {
			u = rt.units[fn]
		}
		if u == "" {
			return 1, nil
		}
		sc, ok := velocityScale(u)
		if !ok {
			return 0, terr(0, fn, fmt.Errorf("%w %q for a velocity: want m/s or km/s", ErrBadUnit, u))
		}
		return sc, nil
	}

	var fn string
	var err error
	if s.Time, fn, err = numCol(ColTime, true); err != nil {
		return nil, nil, err
	}
	if err := checkRequired(s.Time, fn); err != nil {
		return nil, nil, err
	}
	timeFile := fn
	if s.RV, fn, err = numCol(colValue, true); err != nil {
		return nil, nil, err
	}
	if err := checkRequired(s.RV, fn); err != nil {
		return nil, nil, err
	}
	if rvScale, err = rvUnitFrom(fn); err != nil {
		return nil, nil, err
	}
	rvFile := fn
	if s.RVErr, fn, err = numCol(colValueErr, true); err != nil {
		return nil, nil, err
	}
	if err := checkRequired(s.RVErr, fn); err != nil {
		return nil, nil, err
	}
	if rt.units[fn] == "" {
		rt.units[fn] = rt.units[rvFile] // an uncertainty is in its value's unit
	}
	errScale, err := rvUnitFrom(fn)
	if err != nil {
		return nil, nil, err
	}
	for i := range s.RV {
		s.RV[i] *= rvScale
		s.RVErr[i] *= errScale
		if s.RVErr[i] <= 0 {
			return nil, nil, terr(rt.line[i], fn, fmt.Errorf("%w: %g", ErrBadUncertainty, s.RVErr[i]/errScale))
		}
	}
	if err := checkConstant(s.RV, nil); err != nil {
		return nil, nil, terr(0, rvFile, err)
	}

	// Instruments.
	s.Instrument = make([]string, n)
	fn = fileOf(colLabel)
	if present[fn] {
		col, ok := rt.str[fn]
		if !ok {
			col = make([]string, n)
			for i, x := range rt.num[fn] {
				col[i] = formatFloat(x)
			}
		}
		for i, in := range col {
			in = strings.TrimSpace(in)
			if in == "" {
				return nil, nil, terr(rt.line[i], fn, fmt.Errorf("%w: empty instrument label", ErrNotNumber))
			}
			s.Instrument[i] = in
		}
	} else {
		for i := range s.Instrument {
			s.Instrument[i] = DefaultInstrument
		}
	}

	// Duplicate epochs: the same time for the same instrument.
	type key struct {
		t  float64
		in string
	}
	seen := make(map[key]int, n)
	for i, t := range s.Time {
		k := key{t, s.Instrument[i]}
		if j, dup := seen[k]; dup {
			return nil, nil, terr(rt.line[i], timeFile, fmt.Errorf("%w: time %s for instrument %q already on line %d", ErrDuplicateEpoch, formatFloat(t), s.Instrument[i], rt.line[j]))
		}
		seen[k] = i
	}

	// Indicators: every other column, in file order; X_err pairs with X.
	taken := map[string]bool{timeFile: true, rvFile: true, fileOf(colValueErr): true, fileOf(colLabel): true}
	for _, fname := range rt.names {
		if taken[fname] {
			continue
		}
		canon := canonOf[fname]
		if strings.HasSuffix(canon, errSuffix) {
			base := strings.TrimSuffix(canon, errSuffix)
			if present[fileOf(base)] && !taken[fileOf(base)] {
				continue // read with its value column
			}
		}
		taken[fname] = true
		vals, ok := rt.num[fname]
		if !ok {
			return nil, nil, rt.notNumeric(fname)
		}
		ind := Indicator{Name: canon, Value: append([]float64(nil), vals...)}
		scale, u := unitFor(canon, rt.units[fname])
		ind.Unit = u
		var errs []float64
		errFile := fileOf(canon + errSuffix)
		if present[errFile] {
			taken[errFile] = true
			ev, ok := rt.num[errFile]
			if !ok {
				return nil, nil, rt.notNumeric(errFile)
			}
			errs = append([]float64(nil), ev...)
			eu := rt.units[errFile]
			if eu == "" {
				eu = rt.units[fname] // an uncertainty is in its value's unit
			}
			escale, _ := unitFor(canon, eu)
			for i := range errs {
				errs[i] *= escale
			}
		}
		for i := range ind.Value {
			emptyV := rt.empty[fname][i]
			if !emptyV && (math.IsNaN(ind.Value[i]) || math.IsInf(ind.Value[i], 0)) {
				return nil, nil, terr(rt.line[i], fname, fmt.Errorf("%w (leave the cell empty for a missing value)", ErrNotFinite))
			}
			ind.Value[i] *= scale
			if errs == nil {
				continue
			}
			emptyE := rt.empty[errFile][i]
			switch {
			case emptyV && emptyE:
			case emptyV:
				return nil, nil, terr(rt.line[i], fname, fmt.Errorf("%w: empty value with an uncertainty in %q", ErrNotNumber, errFile))
			case emptyE:
				return nil, nil, terr(rt.line[i], errFile, fmt.Errorf("%w: value without its uncertainty", ErrNotNumber))
			case math.IsNaN(errs[i]) || math.IsInf(errs[i], 0):
				return nil, nil, terr(rt.line[i], errFile, ErrNotFinite)
			case errs[i] <= 0:
				return nil, nil, terr(rt.line[i], errFile, fmt.Errorf("%w: %g", ErrBadUncertainty, errs[i]/scale))
			}
		}
		if errs != nil {
			ind.Err = errs
		}
		for i := range ind.Value {
			if rt.empty[fname][i] {
				ind.Value[i] = math.NaN()
				if ind.Err != nil {
					ind.Err[i] = math.NaN()
				}
			}
		}
		if c := ind.Count(); c == 0 {
			warns = append(warns, fmt.Sprintf("%s: column %q has no values", rt.file, fname))
		} else if err := checkConstant(ind.Value, &ind); err != nil {
			return nil, nil, terr(0, fname, err)
		}
		s.Indicators = append(s.Indicators, ind)
	}

	if s.sortByTime() {
		warns = append(warns, fmt.Sprintf("%s: epochs were not in time order; sorted", rt.file))
	}
	return s, warns, nil
}

// notNumeric explains why column col cannot be read as numbers.
func (rt *rawTable) notNumeric(col string) error {
	if err := rt.bad[col]; err != nil {
		return err
	}
	return &TableError{File: rt.file, Column: col, Err: fmt.Errorf("%w: the column holds text", ErrNotNumber)}
}

// unitFor returns the scale to spotsift's unit and the unit kept for an
// indicator column written in unit u.
func unitFor(canon, u string) (float64, string) {
	want, known := UnitOf(canon)
	if sc, isVel := velocityScale(u); isVel && (!known || want == "m/s") {
		return sc, "m/s"
	}
	if u == "" && known {
		return 1, want
	}
	return 1, u
}

// checkConstant returns ErrConstantColumn when every valid value of v is
// the same (and there are at least two).
func checkConstant(v []float64, ind *Indicator) error {
	first, n := math.NaN(), 0
	for i, x := range v {
		if ind != nil && !ind.Valid(i) || math.IsNaN(x) {
			continue
		}
		if n == 0 {
			first = x
		} else if x != first {
			return nil
		}
		n++
	}
	if n >= 2 {
		return fmt.Errorf("%w: every value is %s", ErrConstantColumn, formatFloat(first))
	}
	return nil
}

// sortedMapKeys returns the keys of m in order.
func sortedMapKeys(m map[string]string) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}

// WriteOptions controls how a table is written. A nil *WriteOptions writes
// with Creator "spotsift".
type WriteOptions struct {
	// Creator names the program and version that wrote the table; it goes
	// in a CSV comment line and the FITS CREATOR keyword.
	Creator string
}

func (o *WriteOptions) creator() string {
	if o == nil || o.Creator == "" {
		return "spotsift"
	}
	return o.Creator
}

// WriteTable writes s to path as CSV (any extension but .fits/.fit/.fts)
// or as a FITS binary table. It writes a temporary file in the same folder
// and renames it, so an existing file is replaced whole or not at all.
func WriteTable(path string, s *Series, opts *WriteOptions) error {
	write := WriteCSV
	switch strings.ToLower(filepath.Ext(path)) {
	case ".fits", ".fit", ".fts":
		write = WriteFITSTable
	}
	return WriteFileAtomic(path, func(w io.Writer) error { return write(w, s, opts) })
}

// WriteFileAtomic writes a file through fn into a temporary file beside
// path, then renames it onto path. On any error the temporary file is
// removed and path is left as it was.
func WriteFileAtomic(path string, fn func(w io.Writer) error) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+".tmp*")
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(f.Name())
		}
	}()
	bw := bufio.NewWriter(f)
	if err = fn(bw); err != nil {
		return err
	}
	if err = bw.Flush(); err != nil {
		return err
	}
	if err = f.Close(); err != nil {
		return err
	}
	if err = os.Chmod(f.Name(), 0o644); err != nil {
		return err
	}
	return os.Rename(f.Name(), path)
}

// checkWritable checks that s is internally consistent before writing.
func (s *Series) checkWritable() error {
	n := len(s.Time)
	if n == 0 {
		return ErrNoObservations
	}
	if len(s.RV) != n || len(s.RVErr) != n || len(s.Instrument) != n {
		return fmt.Errorf("%w: %d times, %d rv, %d rv_err, %d instruments", ErrMismatch, n, len(s.RV), len(s.RVErr), len(s.Instrument))
	}
	for _, ind := range s.Indicators {
		if len(ind.Value) != n || (ind.Err != nil && len(ind.Err) != n) {
			return fmt.Errorf("%w: indicator %q", ErrMismatch, ind.Name)
		}
	}
	return nil
}

// columnsOf lists the columns a series is written with, in order: name,
// unit, and the values (nil for the instrument column).
func (s *Series) columnsOf() []outColumn {
	cols := []outColumn{
		{ColTime, "d", s.Time},
		{ColRV, "m/s", s.RV},
		{ColRVErr, "m/s", s.RVErr},
		{ColInstrument, "", nil},
	}
	for _, ind := range s.Indicators {
		cols = append(cols, outColumn{ind.Name, ind.Unit, ind.Value})
		if ind.Err != nil {
			cols = append(cols, outColumn{ind.Name + errSuffix, ind.Unit, ind.Err})
		}
	}
	return cols
}

type outColumn struct {
	name, unit string
	v          []float64
}
