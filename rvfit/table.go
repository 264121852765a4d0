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
	"strconv"
	"strings"
)

// Canonical column names of the per-epoch table. Indicator columns carry
// their own names (fwhm, bis, s_index, ...); a column named X_err holds the
// uncertainties of column X.
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
// table by its layout and column names alone.
type ReadOptions struct {
	// Columns maps spotsift's names onto the file's columns, by name or
	// 1-based position: {"rv": "velocity_kms", "time": "1"}. Keys other than time,
	// rv, rv_err and instrument name indicators (X_err: the uncertainty of
	// indicator X). Roles not mapped are found by name (table_roles.go).
	Columns map[string]string
	// Indicators, when not nil, lists the only columns read as indicators
	// (besides those mapped in Columns), by name or position, each
	// optionally renamed "ours=theirs". Nil: the recognised names.
	Indicators []string
	// RVUnit is the unit of the rv and rv_err columns, "m/s" or "km/s"; it
	// overrides the file. Empty: from the file, else m/s.
	RVUnit string
	// Units gives units of columns by the file's name or spotsift's
	// ("fwhm": "km/s", "CONTRAST_DRS": "%"); they override the file.
	Units map[string]string
	// TimeZero declares what the time column counts from: "jd" (full
	// Julian dates), "mjd" (JD − 2400000.5), "rjd" (JD − 2400000), "btjd"
	// (JD − 2457000) or a number of days added to every time. Empty: from
	// the column's name, else its values.
	TimeZero string
	// Missing lists cell values that mean "no value" (e.g. "-9999999").
	Missing []string
	// RejectIf lists conditions on a column that leave a row out, e.g.
	// "f_RV!=0".
	RejectIf []string
	// Instrument names the instrument of rows of a table without an
	// instrument column ("" for DefaultInstrument); with an instrument
	// column, labels become Instrument/theirs.
	Instrument string
	// Duplicates says what to do with rows of one instrument at the same
	// time: "" (an error naming both lines) or "mean" (one epoch, the
	// inverse-variance weighted mean).
	Duplicates string
	// Format is "csv", "tsv", "text" (blank-separated) or "fits"; empty
	// means by content.
	Format string
	// Progress, when not nil, is called now and then with the bytes read
	// and the input's size (0 when unknown).
	Progress func(done, total int64)
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

// ReadTable reads a per-epoch table from a file: delimited text in any
// common layout, or a FITS table (recognised by content, whatever the
// file's extension). It returns the validated series (sorted by time) and
// notes for the user: which column was taken as what, what was converted,
// what was left out, and anything suspicious.
//
// Only regular files are read (a FIFO or a device is an error, never a
// wait); "-" reads standard input. Errors name the file, the line (or FITS
// row) and the column.
func ReadTable(path string, opts *ReadOptions) (*Series, []string, error) {
	if path == "-" {
		return ReadTableFrom(os.Stdin, "stdin", opts)
	}
	f, size, err := OpenRegular(path)
	if err != nil {
		return nil, nil, err
	}
	defer f.Close()
	return readTableFrom(f, path, opts, size)
}

// OpenRegular opens path for reading if it is a regular file (following
// symbolic links), and returns its size. A FIFO, socket, device or folder
// is an error wrapping ErrNotRegular, found without blocking.
func OpenRegular(path string) (*os.File, int64, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return nil, 0, err
	}
	if !fi.Mode().IsRegular() {
		what := "not a regular file"
		switch {
		case fi.IsDir():
			what = "a folder, not a file"
		case fi.Mode()&os.ModeNamedPipe != 0:
			what = "a named pipe (FIFO), not a file"
		case fi.Mode()&os.ModeDevice != 0:
			what = "a device, not a file"
		case fi.Mode()&os.ModeSocket != 0:
			what = "a socket, not a file"
		}
		return nil, 0, &TableError{File: path, Err: fmt.Errorf("%w: %s", ErrNotRegular, what)}
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, 0, err
	}
	// The file may have been swapped between Stat and Open.
	if fi2, err := f.Stat(); err != nil || !fi2.Mode().IsRegular() {
		f.Close()
		return nil, 0, &TableError{File: path, Err: fmt.Errorf("%w: it changed while being opened", ErrNotRegular)}
	}
	return f, fi.Size(), nil
}

// ReadTableFrom is ReadTable on an open reader; name is used in messages.
func ReadTableFrom(r io.Reader, name string, opts *ReadOptions) (*Series, []string, error) {
	return readTableFrom(r, name, opts, 0)
}

func readTableFrom(r io.Reader, name string, opts *ReadOptions, size int64) (*Series, []string, error) {
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
	case "", "csv", "tsv", "text":
		return readTextTable(br, name, opts, size)
	case "fits":
		return ReadFITSTable(br, name, opts)
	}
	return nil, nil, &TableError{File: name, Err: fmt.Errorf("%w %q: want csv, tsv, text or fits", ErrBadFormat, clip(format))}
}

// readTextTable reads and validates a text table.
func readTextTable(r io.Reader, name string, opts *ReadOptions, size int64) (*Series, []string, error) {
	rt, plan, err := readText(r, name, opts, size)
	if err != nil {
		return nil, nil, err
	}
	return rt.build(plan, opts)
}

// ParseColumnMap parses a mapping of spotsift's column names onto a file's
// own, written "ours=theirs,ours=theirs" (e.g. "rv=RVel,time=1"; theirs is a
// name or a 1-based position). An empty string gives an empty map.
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
			return nil, fmt.Errorf("%w: %q is not of the form ours=theirs", ErrBadMapping, clip(part))
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

// ParseList splits a comma-separated option value into its trimmed,
// non-empty parts.
func ParseList(s string) []string {
	var out []string
	for _, p := range strings.Split(s, ",") {
		if p = strings.TrimSpace(p); p != "" {
			out = append(out, p)
		}
	}
	return out
}

// velocityScale returns the factor that turns a velocity in unit u into
// m/s, and whether u is a velocity unit.
func velocityScale(u string) (float64, bool) {
	switch strings.ToLower(strings.ReplaceAll(strings.TrimSpace(u), " ", "")) {
	case "m/s", "ms-1", "ms^-1", "m.s-1", "m.s**-1", "m/sec", "mps":
		return 1, true
	case "km/s", "kms-1", "kms^-1", "km.s-1", "km.s**-1", "km/sec", "kmps":
		return 1000, true
	case "cm/s", "cms-1", "cm.s-1":
		return 0.01, true
	}
	return 0, false
}

// speedOfLight in m/s bounds any velocity read.
const speedOfLight = 299792458

// Plausible ranges of times: full Julian dates from 1585 to 2680, or days
// counted from some reference epoch within ±100,000 days.
const (
	minJD       = 2300000
	maxJD       = 2700000
	maxRelative = 100000
)

// kmsRVErr is the median RV uncertainty, in the table's unit, below which
// a table that gives no unit is in km/s: 2 cm/s, below the photon noise
// of any spectrograph's single measurement (the most stable reach about
// 10 cm/s; common practice), while in km/s it is 20 m/s, above the
// uncertainties of most RV work.
const kmsRVErr = 0.02

// minRVErr is the smallest RV uncertainty taken as measured: 1 µm/s, far
// below any spectrograph's.
const minRVErr = 1e-6

// build validates a raw table under its role plan and returns the series.
func (rt *rawTable) build(p *rolePlan, opts *ReadOptions) (*Series, []string, error) {
	var warns []string
	notes := append([]string(nil), rt.notes...)
	note := func(format string, a ...any) { warns = append(warns, rt.file+": "+fmt.Sprintf(format, a...)) }
	info := func(format string, a ...any) { notes = append(notes, fmt.Sprintf(format, a...)) }
	terr := func(line int, col string, err error) error {
		return &TableError{File: rt.file, Line: line, Column: col, Err: err}
	}
	info("%s", p.note)
	n := len(rt.line)
	if n == 0 {
		return nil, nil, terr(0, "", fmt.Errorf("%w: the table has a header but no rows", ErrNoObservations))
	}
	keep := make([]bool, n)
	for i := range keep {
		keep[i] = true
	}
	// Rows rejected by a flag.
	for _, rr := range p.rejects {
		cnt := 0
		for i := range keep {
			if keep[i] && rr.rejects(i) {
				keep[i] = false
				cnt++
			}
		}
		note("%d of %d rows left out by --reject-if %s", cnt, n, rr.spec)
	}
	// Required columns: every kept row holds a finite number, or a value
	// declared missing (the row is then left out).
	for _, c := range []*rawColumn{p.time, p.rv, p.rvErr} {
		dropped, first := 0, 0
		for i, st := range c.state {
			if !keep[i] {
				continue
			}
			switch st {
			case cellBad:
				return nil, nil, c.bad
			case cellEmpty:
				return nil, nil, terr(rt.line[i], c.name, fmt.Errorf("%w: empty cell in a required column", ErrNotNumber))
			case cellNaN:
				return nil, nil, terr(rt.line[i], c.name, ErrNotFinite)
			case cellMissing:
				keep[i] = false
				if dropped == 0 {
					first = rt.line[i]
				}
				dropped++
			default:
				if math.IsInf(c.num[i], 0) {
					return nil, nil, terr(rt.line[i], c.name, ErrNotFinite)
				}
			}
		}
		if dropped > 0 {
			note("%d rows left out: column %q holds a value declared missing (first on line %d)", dropped, c.name, first)
		}
	}
	rows := make([]int, 0, n)
	for i, k := range keep {
		if k {
			rows = append(rows, i)
		}
	}
	if len(rows) == 0 {
		return nil, nil, terr(0, "", fmt.Errorf("%w: every row was left out", ErrNoObservations))
	}
	pick := func(v []float64) []float64 {
		if len(rows) == len(v) {
			return v // every row kept: the column itself (it is not used again)
		}
		out := make([]float64, len(rows))
		for k, i := range rows {
			out[k] = v[i]
		}
		return out
	}
	lines := make([]int, len(rows))
	for k, i := range rows {
		lines[k] = rt.line[i]
	}
	s := &Series{Name: rt.file, Time: pick(p.time.num), RV: pick(p.rv.num), RVErr: pick(p.rvErr.num)}

	// Time base.
	off, how, err := timeZero(p.time.name, opts.TimeZero, s.Time)
	if err != nil {
		return nil, nil, terr(0, p.time.name, err)
	}
	if off != 0 {
		for k := range s.Time {
			s.Time[k] += off
		}
	}
	if how != "" {
		if strings.Contains(how, "by its values") {
			note("time column %q %s", p.time.name, how)
		} else {
			info("time column %q %s", p.time.name, how)
		}
	}
	absolute := median(s.Time) > 1e6
	for k, t := range s.Time {
		if absolute && (t < minJD || t > maxJD) || !absolute && math.Abs(t) > maxRelative {
			return nil, nil, terr(lines[k], p.time.name, fmt.Errorf("%w: time %s is neither a Julian date from %d to %d nor days within ±%d of a reference epoch like the other rows", ErrImplausible, formatFloat(t-off), minJD, maxJD, maxRelative))
		}
	}

	// Velocities.
	rvUnitOf := func(c *rawColumn, role string) string {
		if u := firstUnit(opts.Units, c.name, role); u != "" {
			return u
		}
		if opts.RVUnit != "" {
			return opts.RVUnit
		}
		if u := c.unit; u != "" {
			return u
		}
		if u := firstUnit(rt.units, c.name, role); u != "" {
			return u
		}
		return ""
	}
	rvUnit := rvUnitOf(p.rv, ColRV)
	errUnit := rvUnitOf(p.rvErr, ColRVErr)
	if errUnit == "" {
		errUnit = rvUnit // an uncertainty is in its value's unit
	}
	scales := [2]float64{1, 1}
	isRV := p.value == ColRV
	if !isRV {
		rvUnit, errUnit = "", ""
	}
	for j, r := range []struct {
		c *rawColumn
		u string
	}{{p.rv, rvUnit}, {p.rvErr, errUnit}} {
		if r.u == "" {
			continue
		}
		sc, ok := velocityScale(r.u)
		if !ok {
			return nil, nil, terr(0, r.c.name, fmt.Errorf("%w %q for a velocity: want m/s or km/s", ErrBadUnit, clip(r.u)))
		}
		scales[j] = sc
	}
	if isRV && rvUnit == "" && errUnit == "" {
		// No unit anywhere: velocities whose uncertainties are below
		// any spectrograph's reach in m/s are in km/s, as many archive
		// tables are (HARPS's, SOPHIE's).
		if med := median(s.RVErr); med < kmsRVErr {
			scales = [2]float64{1000, 1000}
			note("columns %q and %q: uncertainties near %.2g are below any spectrograph's reach in m/s, so the velocities are taken in km/s (no unit given) and converted to m/s; declare --rv-unit m/s if not", p.rv.name, p.rvErr.name, med)
		}
	}
	for k := range s.RV {
		s.RV[k] *= scales[0]
		s.RVErr[k] *= scales[1]
		if isRV && math.Abs(s.RV[k]) > speedOfLight {
			return nil, nil, terr(lines[k], p.rv.name, fmt.Errorf("%w: %s m/s is faster than light", ErrImplausible, formatFloat(s.RV[k])))
		}
		if e := s.RVErr[k]; e <= 0 {
			return nil, nil, terr(lines[k], p.rvErr.name, fmt.Errorf("%w: %g", ErrBadUncertainty, e/scales[1]))
		} else if isRV && (e < minRVErr || e > speedOfLight) {
			return nil, nil, terr(lines[k], p.rvErr.name, fmt.Errorf("%w: an uncertainty of %g m/s is not a measured one", ErrImplausible, e))
		}
	}
	if err := checkConstant(s.RV, nil); err != nil {
		return nil, nil, terr(0, p.rv.name, err)
	}

	// Instruments.
	s.Instrument = make([]string, len(rows))
	label := opts.Instrument
	if label == "" {
		label = DefaultInstrument
	}
	if c := p.inst; c != nil {
		distinct := map[string]bool{}
		for _, i := range rows {
			if c.str != nil {
				distinct[c.str[i]] = true
			} else {
				distinct[formatFloat(c.num[i])] = true
			}
		}
		for k, i := range rows {
			in := ""
			if c.str != nil {
				in = c.str[i]
			} else if c.state[i] == cellOK {
				in = formatFloat(c.num[i])
			}
			if in == "" {
				return nil, nil, terr(lines[k], c.name, fmt.Errorf("%w: empty instrument label", ErrNotNumber))
			}
			switch {
			case opts.Instrument != "" && len(distinct) == 1:
				in = opts.Instrument // the table's one instrument, by the name the user gave
			case opts.Instrument != "":
				in = opts.Instrument + "/" + in
			}
			s.Instrument[k] = in
		}
	} else {
		for k := range s.Instrument {
			s.Instrument[k] = label
		}
	}

	// Indicators.
	kmsFWHM := false
	for _, ip := range p.inds {
		ind, msgs, infos, err := rt.buildIndicator(ip, rows, lines, opts, &kmsFWHM)
		warns = append(warns, prefixed(rt.file, msgs)...)
		notes = append(notes, infos...)
		if err != nil {
			return nil, nil, err
		}
		if ind != nil {
			s.Indicators = append(s.Indicators, *ind)
		}
	}
	// Duplicate epochs: the same time for the same instrument (found by
	// sorting, not a map, so a large table stays small in memory).
	order := make([]int, len(s.Time))
	for k := range order {
		order[k] = k
	}
	sort.SliceStable(order, func(a, b int) bool {
		ka, kb := order[a], order[b]
		if s.Time[ka] != s.Time[kb] {
			return s.Time[ka] < s.Time[kb]
		}
		return s.Instrument[ka] < s.Instrument[kb]
	})
	var groups [][]int
	for x := 1; x < len(order); x++ {
		j, k := order[x-1], order[x]
		if s.Time[j] != s.Time[k] || s.Instrument[j] != s.Instrument[k] {
			continue
		}
		if j > k {
			j, k = k, j
		}
		if opts.Duplicates != "mean" {
			return nil, nil, terr(lines[k], p.time.name, fmt.Errorf("%w: time %s for instrument %q already on line %d (give --duplicate-epochs mean to average such rows)", ErrDuplicateEpoch, formatFloat(s.Time[k]-off), s.Instrument[k], lines[j]))
		}
		if g := len(groups) - 1; g >= 0 && groups[g][len(groups[g])-1] == order[x-1] {
			groups[g] = append(groups[g], order[x])
		} else {
			groups = append(groups, []int{order[x-1], order[x]})
		}
	}
	for _, g := range groups {
		sort.Ints(g)
	}
	if len(groups) > 0 {
		s.meanDuplicates(groups)
		note("%d epochs share their time with another of the same instrument: averaged, weighted by their uncertainties (first on line %d)", len(groups), lines[groups[0][1]])
	}
	if s.SortByTime() {
		note("epochs were not in time order; sorted")
	}
	s.Notes = notes
	return s, warns, nil
}

// meanDuplicates replaces each group of epochs (indices, the first kept)
// by one: velocities and indicators averaged with weights 1/σ², their
// uncertainties 1/sqrt(Σ 1/σ²); indicators without uncertainties by their
// plain mean. The other epochs of each group are removed.
func (s *Series) meanDuplicates(groups [][]int) {
	drop := map[int]bool{}
	wmean := func(v, e []float64, g []int) (float64, float64) {
		sw, swx, n, sx := 0.0, 0.0, 0, 0.0
		for _, k := range g {
			if math.IsNaN(v[k]) || e != nil && math.IsNaN(e[k]) {
				continue
			}
			n++
			sx += v[k]
			if e != nil {
				w := 1 / (e[k] * e[k])
				sw += w
				swx += w * v[k]
			}
		}
		switch {
		case n == 0:
			return math.NaN(), math.NaN()
		case e == nil:
			return sx / float64(n), math.NaN()
		}
		return swx / sw, 1 / math.Sqrt(sw)
	}
	for _, g := range groups {
		k0 := g[0]
		s.RV[k0], s.RVErr[k0] = wmean(s.RV, s.RVErr, g)
		for i := range s.Indicators {
			ind := &s.Indicators[i]
			v, e := wmean(ind.Value, ind.Err, g)
			ind.Value[k0] = v
			if ind.Err != nil {
				ind.Err[k0] = e
			}
		}
		for _, k := range g[1:] {
			drop[k] = true
		}
	}
	keep := func(v []float64) []float64 {
		out := v[:0]
		for k, x := range v {
			if !drop[k] {
				out = append(out, x)
			}
		}
		return out
	}
	inst := s.Instrument[:0]
	for k, in := range s.Instrument {
		if !drop[k] {
			inst = append(inst, in)
		}
	}
	s.Time, s.RV, s.RVErr, s.Instrument = keep(s.Time), keep(s.RV), keep(s.RVErr), inst
	for i := range s.Indicators {
		s.Indicators[i].Value = keep(s.Indicators[i].Value)
		if s.Indicators[i].Err != nil {
			s.Indicators[i].Err = keep(s.Indicators[i].Err)
		}
	}
}

// prefixed puts "file: " before each message.
func prefixed(file string, msgs []string) []string {
	out := make([]string, len(msgs))
	for i, m := range msgs {
		out[i] = file + ": " + m
	}
	return out
}

// firstUnit returns the unit given for the first of keys found in units.
func firstUnit(units map[string]string, keys ...string) string {
	for _, k := range keys {
		if u, ok := units[k]; ok && u != "" {
			return u
		}
	}
	return ""
}

// positiveQuantities are indicators that cannot be negative: a negative
// value there is a "not measured" mark.
var positiveQuantities = map[string]bool{"s_index": true, "halpha": true, "naid": true, "fwhm": true, "contrast": true, "nad1": true, "nad2": true}

// buildIndicator validates one indicator (and its uncertainties) over the
// kept rows. It returns nil (with a note) for a column that holds no usable
// values and was not named by the user.
func (rt *rawTable) buildIndicator(ip indPlan, rows, lines []int, opts *ReadOptions, kmsFWHM *bool) (*Indicator, []string, []string, error) {
	var msgs, infos []string
	terr := func(line int, col string, err error) error {
		return &TableError{File: rt.file, Line: line, Column: col, Err: err}
	}
	c, ec := ip.col, ip.errCol
	for _, cc := range []*rawColumn{c, ec} {
		if cc != nil && cc.bad != nil {
			if ip.user {
				return nil, nil, nil, cc.bad
			}
			msgs = append(msgs, fmt.Sprintf("column %q left out: it holds text (%v)", cc.name, cc.bad.(*TableError).Err))
			return nil, msgs, infos, nil
		}
	}
	nk := len(rows)
	// The kept rows of a column (the column itself when every row is kept:
	// a column plays one part only, so it is not used again).
	sub := func(c *rawColumn) ([]float64, []cellState) {
		if nk == len(c.num) {
			return c.num, c.state
		}
		v, st := make([]float64, nk), make([]cellState, nk)
		for k, i := range rows {
			v[k], st[k] = c.num[i], c.state[i]
		}
		return v, st
	}
	val, vst := sub(c)
	var errs []float64
	var est []cellState
	if ec != nil {
		errs, est = sub(ec)
	}
	// Sentinels: a repeated value far outside the column's spread, or a
	// negative value of a quantity that cannot be negative.
	for _, x := range detectSentinels(val, vst, positiveQuantities[ip.name] || ip.rhk) {
		cnt, first := 0, 0
		for k := range val {
			if vst[k] == cellOK && val[k] == x.value {
				vst[k] = cellMissing
				if cnt == 0 {
					first = lines[k]
				}
				cnt++
			}
		}
		msgs = append(msgs, fmt.Sprintf("column %q: %s taken as \"not measured\" in %d rows (first on line %d; %s); declare it with --missing to silence this", c.name, formatFloat(x.value), cnt, first, x.why))
	}
	if ec != nil {
		for _, x := range detectSentinels(errs, est, false) {
			cnt := 0
			for k := range errs {
				if est[k] == cellOK && errs[k] == x.value {
					est[k] = cellMissing
					cnt++
				}
			}
			msgs = append(msgs, fmt.Sprintf("column %q: %s taken as \"not measured\" in %d rows (%s)", ec.name, formatFloat(x.value), cnt, x.why))
		}
	}
	// Units.
	unit := firstUnit(opts.Units, c.name, ip.name)
	if unit == "" {
		unit = c.unit
	}
	if unit == "" {
		unit = firstUnit(rt.units, c.name)
	}
	want, known := UnitOf(ip.name)
	if unit == "" && known && want == "m/s" {
		med := medianOK(val, vst)
		switch {
		case ip.name == "fwhm" && med > 0 && med < 100:
			unit, *kmsFWHM = "km/s", true
			msgs = append(msgs, fmt.Sprintf("column %q: values near %.3g are a line width in km/s (no unit given); converted to m/s (declare --units %s=m/s if not)", c.name, med, c.name))
		case *kmsFWHM:
			unit = "km/s"
			msgs = append(msgs, fmt.Sprintf("column %q: taken in km/s like the FWHM of the same table (no unit given; declare --units %s=m/s if not)", c.name, c.name))
		}
	}
	scale, outUnit := unitFor(ip.name, unit)
	if ip.name == "contrast" {
		med := medianOK(val, vst)
		if unit == "%" || unit == "" && med > 1 && med <= 100 {
			scale, outUnit = 0.01, ""
			if unit == "" {
				msgs = append(msgs, fmt.Sprintf("column %q: values near %.3g are a contrast in per cent; divided by 100", c.name, med))
			}
		}
	}
	errScale := scale
	if ec != nil {
		if eu := firstUnit(opts.Units, ec.name); eu != "" || ec.unit != "" {
			if eu == "" {
				eu = ec.unit
			}
			errScale, _ = unitFor(ip.name, eu)
		}
	}
	ind := &Indicator{Name: ip.name, Unit: outUnit, Value: val}
	limit := 1e15
	if outUnit == "m/s" {
		limit = speedOfLight
	}
	for k := range val {
		switch vst[k] {
		case cellOK:
			if math.IsInf(val[k], 0) {
				return nil, nil, nil, terr(lines[k], c.name, fmt.Errorf("%w (leave the cell empty for a missing value)", ErrNotFinite))
			}
			val[k] *= scale
			if math.Abs(val[k]) > limit {
				return nil, nil, nil, terr(lines[k], c.name, fmt.Errorf("%w: %s %s", ErrImplausible, formatFloat(val[k]), outUnit))
			}
		default:
			val[k] = math.NaN()
		}
		if errs == nil {
			continue
		}
		switch {
		case vst[k] == cellEmpty && est[k] == cellOK:
			return nil, nil, nil, terr(lines[k], c.name, fmt.Errorf("%w: empty value with an uncertainty in %q", ErrNotNumber, ec.name))
		case vst[k] == cellOK && est[k] == cellEmpty:
			return nil, nil, nil, terr(lines[k], ec.name, fmt.Errorf("%w: value without its uncertainty", ErrNotNumber))
		case vst[k] != cellOK || est[k] != cellOK:
			val[k], errs[k] = math.NaN(), math.NaN()
		case math.IsInf(errs[k], 0):
			return nil, nil, nil, terr(lines[k], ec.name, ErrNotFinite)
		case errs[k] <= 0:
			return nil, nil, nil, terr(lines[k], ec.name, fmt.Errorf("%w: %g", ErrBadUncertainty, errs[k]))
		default:
			errs[k] *= errScale
			if errs[k] > limit {
				return nil, nil, nil, terr(lines[k], ec.name, fmt.Errorf("%w: %s %s", ErrImplausible, formatFloat(errs[k]), outUnit))
			}
		}
	}
	if errs != nil {
		ind.Err = errs
	}
	if ip.rhk {
		if err := linearToLogRHK(ind); err != nil {
			return nil, nil, nil, terr(0, c.name, err)
		}
		infos = append(infos, fmt.Sprintf("column %q holds linear R'HK: read as log10 R'HK (log_rhk)", c.name))
	} else if ip.name == "log_rhk" && medianOK(ind.Value, vst) > 0 && medianOK(ind.Value, vst) < 1e-2 {
		if err := linearToLogRHK(ind); err != nil {
			return nil, nil, nil, terr(0, c.name, err)
		}
		msgs = append(msgs, fmt.Sprintf("column %q: positive values near 1e-5 are linear R'HK, not its logarithm; converted to log10", c.name))
	}
	if ip.name == "s_index" {
		infos = append(infos, fmt.Sprintf("column %q read as the S-index on the scale the table gives (spotsift does not recalibrate it; Mount Wilson for the Keck, HARPS-N and CLS releases)", c.name))
	}
	if ind.Count() == 0 {
		if ip.user {
			msgs = append(msgs, fmt.Sprintf("column %q has no values", c.name))
			return ind, msgs, infos, nil
		}
		msgs = append(msgs, fmt.Sprintf("column %q left out: it has no values", c.name))
		return nil, msgs, infos, nil
	}
	if err := checkConstant(ind.Value, ind); err != nil {
		// A constant indicator says nothing about activity; it is left out
		// rather than failing the whole table (a survey of archive files
		// meets such columns).
		msgs = append(msgs, fmt.Sprintf("column %q left out: %v", c.name, err))
		return nil, msgs, infos, nil
	}
	return ind, msgs, infos, nil
}

// linearToLogRHK turns linear R'HK values and errors into log10 R'HK.
func linearToLogRHK(ind *Indicator) error {
	for k, x := range ind.Value {
		if math.IsNaN(x) {
			continue
		}
		if x <= 0 {
			ind.Value[k] = math.NaN()
			if ind.Err != nil {
				ind.Err[k] = math.NaN()
			}
			continue
		}
		ind.Value[k] = math.Log10(x)
		if ind.Err != nil && !math.IsNaN(ind.Err[k]) {
			ind.Err[k] = ind.Err[k] / (x * math.Ln10) // error propagation of log10
		}
	}
	ind.Name, ind.Unit = "log_rhk", "dex"
	return nil
}

// timeZero returns the offset to add to a time column and how it was
// decided ("" when nothing was added and nothing is worth saying).
func timeZero(col, declared string, t []float64) (float64, string, error) {
	named := map[string]float64{"jd": 0, "bjd": 0, "hjd": 0, "mjd": 2400000.5, "rjd": 2400000, "btjd": 2457000}
	if d := strings.ToLower(strings.TrimSpace(declared)); d != "" {
		if off, ok := named[d]; ok {
			return off, fmt.Sprintf("declared %s: %s added", d, formatFloat(off)), nil
		}
		off, err := strconv.ParseFloat(d, 64)
		if err != nil || math.IsNaN(off) || math.IsInf(off, 0) || math.Abs(off) > maxJD {
			return 0, "", fmt.Errorf("%w: time zero %q is not jd, mjd, rjd, btjd or a number of days", ErrBadMapping, clip(declared))
		}
		return off, fmt.Sprintf("declared to count from %s: added", formatFloat(off)), nil
	}
	key := nameKey(col)
	if off, ok := named[key]; ok && off != 0 {
		return off, fmt.Sprintf("is %s by its name: %s added", strings.ToUpper(key), formatFloat(off)), nil
	}
	if m := timeOffsetName.FindStringSubmatch(key); m != nil {
		off, _ := strconv.ParseFloat(m[1], 64)
		return off, fmt.Sprintf("counts from %s by its name: added", m[1]), nil
	}
	med := median(t)
	if med >= 30000 && med < 80000 {
		return 2400000, "holds JD − 2400000 by its values (years 1941 to 2078): 2400000 added (declare --time-zero mjd if they are MJD)", nil
	}
	return 0, "", nil
}

// median of the finite values of v (NaN when there are none).
func median(v []float64) float64 {
	w := make([]float64, 0, len(v))
	for _, x := range v {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			w = append(w, x)
		}
	}
	if len(w) == 0 {
		return math.NaN()
	}
	sort.Float64s(w)
	if len(w)%2 == 1 {
		return w[len(w)/2]
	}
	return (w[len(w)/2-1] + w[len(w)/2]) / 2
}

// medianOK is the median of the cells that hold numbers.
func medianOK(v []float64, st []cellState) float64 {
	w := make([]float64, 0, len(v))
	for k, x := range v {
		if st[k] == cellOK {
			w = append(w, x)
		}
	}
	return median(w)
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
