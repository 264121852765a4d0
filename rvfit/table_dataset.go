package rvfit

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"github.com/BurntSushi/toml"
)

// A data set is one star's RVs from several tables, one per instrument (or
// per release), each read with its own options and given its own label,
// combined into one Series whose instrument labels give each table its own
// zero point. It is written as a small TOML file:
//
//	# eps Eri from two instruments
//	[[table]]
//	path = "22049_RVBank_HARPS.csv"      # relative to this file's folder
//	label = "HARPS"
//	reject_if = ["f_RV!=0"]
//	split_at = [2457161.5]               # a fibre change: a second zero point
//
//	[[table]]
//	path = "22049_EBPS_HIRES.vels"
//	label = "HIRES"
//	columns = "s_index=4, halpha=5"
//
// Keys of a [[table]]: path (required), label, columns, indicators (a
// list), rv_unit, units, time_zero, missing (a list), reject_if (a list),
// duplicate_epochs, format and split_at (full Julian dates); each has the
// meaning of the command-line option of the same name.

// DataTable is one table of a data set.
type DataTable struct {
	// Path is the table's file.
	Path string
	// Options reads it; Options.Instrument labels its epochs.
	Options ReadOptions
	// SplitAt are times (full JD, or the table's time base after its time
	// zero) from which the table's epochs get a zero point of their own.
	SplitAt []float64
	// Line is the table's line in the data-set file (0 when not from one).
	Line int
}

// dataSetFile is the TOML shape of a data-set file.
type dataSetFile struct {
	Table []struct {
		Path            string    `toml:"path"`
		Label           string    `toml:"label"`
		Columns         string    `toml:"columns"`
		Indicators      []string  `toml:"indicators"`
		RVUnit          string    `toml:"rv_unit"`
		Units           string    `toml:"units"`
		TimeZero        string    `toml:"time_zero"`
		Missing         []string  `toml:"missing"`
		RejectIf        []string  `toml:"reject_if"`
		DuplicateEpochs string    `toml:"duplicate_epochs"`
		Format          string    `toml:"format"`
		SplitAt         []float64 `toml:"split_at"`
	} `toml:"table"`
}

// IsDataSetFile reports whether path names a data-set file (by its .toml
// extension).
func IsDataSetFile(path string) bool {
	return strings.EqualFold(filepath.Ext(path), ".toml")
}

// ReadDataSetFile reads a data-set file. Relative table paths are taken
// from the file's folder. Errors name the file, the line and the key.
func ReadDataSetFile(path string) ([]DataTable, error) {
	f, _, err := OpenRegular(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	b, err := io.ReadAll(io.LimitReader(f, 1<<20+1))
	if err != nil {
		return nil, err
	}
	if len(b) > 1<<20 {
		return nil, &TableError{File: path, Err: fmt.Errorf("%w: a data-set file larger than 1 MiB", ErrBadFormat)}
	}
	return ParseDataSet(b, path, filepath.Dir(path))
}

// ParseDataSet parses a data-set file held in b; name is used in messages,
// dir resolves relative paths.
func ParseDataSet(b []byte, name, dir string) ([]DataTable, error) {
	var doc dataSetFile
	md, err := toml.NewDecoder(bytes.NewReader(b)).Decode(&doc)
	if err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, &TableError{File: name, Line: pe.Position.Line, Err: fmt.Errorf("%w: %s", ErrBadFormat, pe.Message)}
		}
		return nil, &TableError{File: name, Err: fmt.Errorf("%w: %v", ErrBadFormat, err)}
	}
	if und := md.Undecoded(); len(und) > 0 {
		return nil, &TableError{File: name, Line: tomlKeyLine(b, und[0][len(und[0])-1]), Column: und[0].String(), Err: fmt.Errorf("%w: unknown key (known: path, label, columns, indicators, rv_unit, units, time_zero, missing, reject_if, duplicate_epochs, format, split_at)", ErrBadMapping)}
	}
	if len(doc.Table) == 0 {
		return nil, &TableError{File: name, Err: fmt.Errorf("%w: no [[table]] in the data-set file", ErrNoObservations)}
	}
	var out []DataTable
	labels := map[string]int{}
	for i, t := range doc.Table {
		line := tomlTableLine(b, i+1)
		bad := func(key string, err error) error {
			return &TableError{File: name, Line: line, Column: fmt.Sprintf("table[%d].%s", i+1, key), Err: err}
		}
		if strings.TrimSpace(t.Path) == "" {
			return nil, bad("path", fmt.Errorf("%w: a table without a path", ErrMissingColumn))
		}
		p := t.Path
		if !filepath.IsAbs(p) && dir != "" {
			p = filepath.Join(dir, p)
		}
		label := strings.TrimSpace(t.Label)
		if label == "" {
			label = TableLabel(t.Path)
		}
		if err := checkLabel(label); err != nil {
			return nil, bad("label", err)
		}
		if j, dup := labels[label]; dup {
			return nil, bad("label", fmt.Errorf("%w: label %q is also table %d's", ErrBadMapping, label, j))
		}
		labels[label] = i + 1
		cols, err := ParseColumnMap(t.Columns)
		if err != nil {
			return nil, bad("columns", err)
		}
		units, err := ParseColumnMap(t.Units)
		if err != nil {
			return nil, bad("units", err)
		}
		for _, x := range t.SplitAt {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return nil, bad("split_at", fmt.Errorf("%w: %g is not a time", ErrBadMapping, x))
			}
		}
		dt := DataTable{Path: p, Line: line, SplitAt: t.SplitAt, Options: ReadOptions{
			Columns: cols, Indicators: t.Indicators, RVUnit: t.RVUnit, Units: units, TimeZero: t.TimeZero,
			Missing: t.Missing, RejectIf: t.RejectIf, Duplicates: t.DuplicateEpochs, Format: t.Format, Instrument: label,
		}}
		if err := dt.Options.Check(); err != nil {
			return nil, bad("", err)
		}
		out = append(out, dt)
	}
	return out, nil
}

// Check checks the options that do not depend on a table.
func (o *ReadOptions) Check() error {
	switch strings.ToLower(o.RVUnit) {
	case "", "m/s", "km/s":
	default:
		return fmt.Errorf("%w %q for a velocity: want m/s or km/s", ErrBadUnit, clip(o.RVUnit))
	}
	switch o.Duplicates {
	case "", "error", "mean":
	default:
		return fmt.Errorf("%w: duplicate epochs %q: want error or mean", ErrBadMapping, clip(o.Duplicates))
	}
	switch o.Format {
	case "", "csv", "tsv", "text", "fits":
	default:
		return fmt.Errorf("%w %q: want csv, tsv, text or fits", ErrBadFormat, clip(o.Format))
	}
	for _, r := range o.RejectIf {
		if _, err := parseReject(r); err != nil {
			return err
		}
	}
	if o.TimeZero != "" {
		if _, _, err := timeZero("", o.TimeZero, nil); err != nil {
			return err
		}
	}
	return checkLabel(o.Instrument)
}

// checkLabel checks an instrument label: printable, no control characters,
// at most 64 bytes.
func checkLabel(l string) error {
	if len(l) > 64 {
		return fmt.Errorf("%w: label %q is longer than 64 bytes", ErrBadMapping, clip(l))
	}
	for _, r := range l {
		if r < 0x20 || r == 0x7f || r == '\uFFFD' || (r >= 0x202A && r <= 0x202E) || (r >= 0x2066 && r <= 0x2069) {
			return fmt.Errorf("%w: label %q holds a control character", ErrBadMapping, clip(l))
		}
	}
	return nil
}

// TableLabel is the label of a table given without one: its file name
// without folder and extension.
func TableLabel(path string) string {
	b := filepath.Base(path)
	b = strings.TrimSuffix(b, filepath.Ext(b))
	if len(b) > 64 {
		b = b[:64]
	}
	return strings.ToValidUTF8(b, "_")
}

func tomlTableLine(b []byte, k int) int {
	n := 0
	for i, line := range strings.Split(string(b), "\n") {
		if strings.HasPrefix(strings.TrimSpace(line), "[[table]]") {
			if n++; n == k {
				return i + 1
			}
		}
	}
	return 0
}

func tomlKeyLine(b []byte, key string) int {
	for i, line := range strings.Split(string(b), "\n") {
		if k, _, ok := strings.Cut(line, "="); ok && strings.TrimSpace(k) == key {
			return i + 1
		}
	}
	return 0
}

// ParseTableArg parses a --data value: "LABEL=PATH" gives the table a
// label; a plain path (or one whose part before '=' is not a plain label)
// is the path itself.
func ParseTableArg(arg string) (label, path string) {
	if l, p, ok := strings.Cut(arg, "="); ok && l != "" && p != "" && !strings.ContainsAny(l, `/\.`) {
		return l, p
	}
	return "", arg
}

// ReadTables reads several tables and combines them into one series (see
// Combine), applying each table's SplitAt. With one table and no label the
// result is that table's series.
func ReadTables(tables []DataTable) (*Series, []string, error) {
	var parts []*Series
	var warns []string
	for _, dt := range tables {
		opts := dt.Options
		s, w, err := ReadTable(dt.Path, &opts)
		if err != nil {
			return nil, nil, err
		}
		warns = append(warns, w...)
		for _, at := range dt.SplitAt {
			label := opts.Instrument
			if label == "" {
				label = DefaultInstrument
			}
			if err := s.SplitAt(label, at); err != nil {
				return nil, nil, &TableError{File: dt.Path, Err: err}
			}
			s.Notes = append(s.Notes, fmt.Sprintf("epochs of %s from %s on have a zero point of their own (%s)", label, formatFloat(at), splitLabel(label, at)))
		}
		parts = append(parts, s)
	}
	if len(parts) == 1 {
		return parts[0], warns, nil
	}
	s, w, err := Combine(parts)
	return s, append(warns, w...), err
}

// Combine joins series of one star (one per instrument or table) into one,
// sorted by time. Instrument labels must not repeat across parts.
// Indicators of the same name are joined (NaN where a part lacks one);
// when only some parts give uncertainties for an indicator, or parts give
// it in different units, the parts keep separate columns named name@label.
func Combine(parts []*Series) (*Series, []string, error) {
	var warns []string
	out := &Series{Name: "data set"}
	owner := map[string]int{}
	for pi, p := range parts {
		for _, in := range uniqueStrings(p.Instrument) {
			if j, dup := owner[in]; dup && j != pi {
				return nil, nil, fmt.Errorf("%w: instrument label %q is in both %s and %s; label the tables (LABEL=PATH)", ErrBadMapping, in, parts[j].Name, p.Name)
			}
			owner[in] = pi
		}
	}
	indUnit := map[string]string{}
	indHasErr := map[string]int{}
	indCount := map[string]int{}
	for _, p := range parts {
		for _, ind := range p.Indicators {
			indCount[ind.Name]++
			if ind.Err != nil {
				indHasErr[ind.Name]++
			}
			if u, ok := indUnit[ind.Name]; ok && u != ind.Unit {
				indUnit[ind.Name] = "\x00mixed"
			} else if !ok {
				indUnit[ind.Name] = ind.Unit
			}
		}
	}
	nameIn := func(ind Indicator, p *Series) string {
		if indUnit[ind.Name] == "\x00mixed" || indHasErr[ind.Name] != 0 && indHasErr[ind.Name] != indCount[ind.Name] {
			return ind.Name + "@" + p.Instrument[0]
		}
		return ind.Name
	}
	total := 0
	for _, p := range parts {
		total += p.Len()
	}
	idx := map[string]int{}
	for _, p := range parts {
		for _, ind := range p.Indicators {
			n := nameIn(ind, p)
			if _, ok := idx[n]; ok {
				continue
			}
			idx[n] = len(out.Indicators)
			ni := Indicator{Name: n, Unit: ind.Unit, Value: nanSlice(total)}
			if ind.Err != nil {
				ni.Err = nanSlice(total)
			}
			out.Indicators = append(out.Indicators, ni)
			if n != ind.Name {
				warns = append(warns, fmt.Sprintf("indicator %q differs between tables (units or uncertainties): kept per table as %q", ind.Name, n))
			}
		}
	}
	off := 0
	for _, p := range parts {
		out.Time = append(out.Time, p.Time...)
		out.RV = append(out.RV, p.RV...)
		out.RVErr = append(out.RVErr, p.RVErr...)
		out.Instrument = append(out.Instrument, p.Instrument...)
		for _, ind := range p.Indicators {
			dst := &out.Indicators[idx[nameIn(ind, p)]]
			copy(dst.Value[off:], ind.Value)
			if ind.Err != nil && dst.Err != nil {
				copy(dst.Err[off:], ind.Err)
			}
		}
		for _, n := range p.Notes {
			out.Notes = append(out.Notes, p.Name+": "+n)
		}
		off += p.Len()
	}
	out.SortByTime()
	labels := uniqueStrings(out.Instrument)
	out.Notes = append(out.Notes, fmt.Sprintf("%d tables combined: %d epochs, %d instrument zero points (%s)", len(parts), out.Len(), len(labels), strings.Join(labels, ", ")))
	return out, warns, nil
}

func nanSlice(n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = math.NaN()
	}
	return v
}

func uniqueStrings(v []string) []string {
	seen := map[string]bool{}
	var out []string
	for _, x := range v {
		if !seen[x] {
			seen[x] = true
			out = append(out, x)
		}
	}
	sort.Strings(out)
	return out
}

// ParseSplit parses a --split value "LABEL@TIME" (or a bare TIME when the
// series has one instrument).
func ParseSplit(arg string) (label string, at float64, err error) {
	l, t := "", arg
	if i := strings.LastIndex(arg, "@"); i >= 0 {
		l, t = arg[:i], arg[i+1:]
	}
	at, err = strconv.ParseFloat(strings.TrimSpace(t), 64)
	if err != nil || math.IsNaN(at) || math.IsInf(at, 0) {
		return "", 0, fmt.Errorf("%w: --split %q is not of the form LABEL@TIME (TIME a Julian date)", ErrBadMapping, clip(arg))
	}
	return strings.TrimSpace(l), at, nil
}

// splitLabel names the epochs of label from time at on.
func splitLabel(label string, at float64) string {
	return label + "@" + formatFloat(at)
}

// SplitAt gives the epochs of instrument label from time at on a zero point
// of their own: their label becomes label@at. label "" means the only
// instrument of the series. Both sides must keep at least one epoch.
func (s *Series) SplitAt(label string, at float64) error {
	labels := uniqueStrings(s.Instrument)
	if label == "" {
		if len(labels) != 1 {
			return fmt.Errorf("%w: --split needs LABEL@TIME: the series has %d instruments (%s)", ErrBadMapping, len(labels), strings.Join(labels, ", "))
		}
		label = labels[0]
	}
	before, after := 0, 0
	minT, maxT := math.Inf(1), math.Inf(-1)
	for i, in := range s.Instrument {
		if in != label {
			continue
		}
		minT, maxT = math.Min(minT, s.Time[i]), math.Max(maxT, s.Time[i])
		if s.Time[i] >= at {
			after++
		} else {
			before++
		}
	}
	if before+after == 0 {
		return fmt.Errorf("%w: --split names instrument %q, but the series has %s", ErrBadMapping, label, strings.Join(labels, ", "))
	}
	if before == 0 || after == 0 {
		return fmt.Errorf("%w: --split %s@%s leaves no epoch on one side (the instrument's epochs run from %s to %s)", ErrBadMapping, label, formatFloat(at), formatFloat(minT), formatFloat(maxT))
	}
	nl := splitLabel(label, at)
	for i, in := range s.Instrument {
		if in == label && s.Time[i] >= at {
			s.Instrument[i] = nl
		}
	}
	return nil
}
