package survey

import (
	"bufio"
	"bytes"
	"crypto/sha256"
	"encoding/csv"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/BurntSushi/toml"

	"spotsift/activity"
	"spotsift/rvfit"
)

// Entry is one star of a manifest.
type Entry struct {
	// Name identifies the star in every output; it must be unique in the
	// manifest. It also names the star's output folder (see Folder).
	Name string
	// Data is the star's data: a per-epoch table (CSV, TSV or FITS, read
	// with rvfit.ReadTable) or a folder of spectra (measured with
	// activity.Measure). A relative path is taken from Manifest.Dir.
	Data string
	// Series, when not nil, is the star's data held in memory; Data is then
	// only a label. Run does not modify it.
	Series *rvfit.Series
	// StarFile is the star's parameter file (TOML, activity.ReadStar), ""
	// for none. A relative path is taken from Manifest.Dir.
	StarFile string
	// Star holds parameters given in the manifest itself; its non-zero
	// fields override those of StarFile. Nil means none.
	Star *activity.Star
	// Periods are the candidate periods to judge, in days; nil means the
	// significant periodogram peaks.
	Periods []float64
	// Columns maps the table's own column names onto spotsift's (see
	// rvfit.ParseColumnMap); RVUnit is the unit of its velocities ("" for
	// the table's own statement, else m/s).
	Columns map[string]string
	RVUnit  string
	// Read holds the other options of reading the star's table, as the
	// command-line flags of the same names: indicators (nil: recognised
	// names), units, time_zero, missing, reject_if, duplicate_epochs and
	// split (zero-point splits, LABEL@JD). Data may also name a data-set
	// file (.toml, rvfit.ReadDataSetFile) of several tables.
	Read TableOptions
	// Photometry is the star's light curve (a table read with
	// photometry.Read), "" for none. A relative path is taken from
	// Manifest.Dir.
	Photometry string
	// Line is the entry's line in the manifest file, 0 when unknown.
	Line int
}

// Manifest is a stellar sample.
type Manifest struct {
	// File names the manifest in messages ("" for one built in memory).
	File string
	// Dir is the folder relative paths are taken from ("" is the current
	// folder).
	Dir string
	// Stars are the entries, in the manifest's order.
	Stars []Entry
}

// TableOptions are the per-star options of reading a table beyond Columns
// and RVUnit.
type TableOptions struct {
	Indicators []string
	Units      map[string]string
	TimeZero   string
	Missing    []string
	RejectIf   []string
	Duplicates string
	Split      []string
}

// empty reports whether no option is set.
func (o *TableOptions) empty() bool {
	return o.Indicators == nil && len(o.Units) == 0 && o.TimeZero == "" && len(o.Missing) == 0 &&
		len(o.RejectIf) == 0 && o.Duplicates == "" && len(o.Split) == 0
}

// key is a canonical text of the options, for the input hash ("" when
// none is set, so that older states stay valid).
func (o *TableOptions) key() string {
	if o.empty() {
		return ""
	}
	units := make([]string, 0, len(o.Units))
	for _, k := range sortedKeys(o.Units) {
		units = append(units, k+"="+o.Units[k])
	}
	ind := "(recognised)"
	if o.Indicators != nil {
		ind = strings.Join(o.Indicators, ",")
	}
	return fmt.Sprintf("indicators=%q units=%q time_zero=%q missing=%q reject_if=%q duplicates=%q split=%q",
		ind, strings.Join(units, ","), o.TimeZero, strings.Join(o.Missing, ","), strings.Join(o.RejectIf, ";"), o.Duplicates, strings.Join(o.Split, ","))
}

func sortedKeys(m map[string]string) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}

// readOptions are the rvfit options that read the entry's table.
func (e *Entry) readOptions() *rvfit.ReadOptions {
	d := e.Read.Duplicates
	if d == "error" {
		d = ""
	}
	return &rvfit.ReadOptions{Columns: e.Columns, RVUnit: e.RVUnit, Indicators: e.Read.Indicators, Units: e.Read.Units,
		TimeZero: e.Read.TimeZero, Missing: e.Read.Missing, RejectIf: e.Read.RejectIf, Duplicates: d}
}

// semicolonList splits a manifest cell of values separated by ';'.
func semicolonList(s string) []string {
	var out []string
	for _, p := range strings.Split(s, ";") {
		if p = strings.TrimSpace(p); p != "" {
			out = append(out, p)
		}
	}
	return out
}

// csvColumns are the columns a CSV manifest may have; name and data are
// required.
var csvColumns = []string{"name", "data", "star_file", "periods", "columns", "rv_unit", "photometry",
	"indicators", "units", "time_zero", "missing", "reject_if", "duplicate_epochs", "split",
	"b_v", "mass", "teff", "vsini", "rotation_period", "rotation_period_err"}

// inlineKeys are the star parameters a manifest may give inline, with
// the field of activity.Star each sets.
var inlineKeys = []string{"b_v", "mass", "teff", "vsini", "rotation_period", "rotation_period_err"}

// ReadManifest reads a manifest: TOML when the file name ends in .toml,
// else CSV. Errors name the file and the line, with the column (CSV) or
// key (TOML); they wrap ErrManifest.
//
// A CSV manifest has a header row and one star per row ('#' starts a
// comment line):
//
//	name,data,star_file,periods,teff,rotation_period
//	Tessaly-7,data/tessaly7.csv,stars/tessaly7.toml,12.1;33.4,,
//	Corvane-3,data/corvane3.fits,,,5150,8.6
//
// The columns are name and data (required), star_file, periods (days,
// separated by ';' or blanks), columns (a column map such as
// "rv=velocity_kms;time=obs_jd"), rv_unit (m/s or km/s), photometry (the star's
// light curve, a table of time, flux or mag and its error) and the inline star
// parameters b_v, mass, teff, vsini, rotation_period and
// rotation_period_err (units as in a star file; empty means not given).
//
// A TOML manifest has one [[star]] table per star with the same keys,
// periods as an array of numbers:
//
//	[[star]]
//	name = "Tessaly-7"
//	data = "data/tessaly7.csv"
//	star_file = "stars/tessaly7.toml"
//	periods = [12.1, 33.4]
//
// Relative paths are taken from the manifest's folder. Names must be
// unique, and so must the output folders they map onto (see Folder).
func ReadManifest(path string) (*Manifest, error) {
	b, err := readManifestFile(path)
	if err != nil {
		return nil, err
	}
	var m *Manifest
	if strings.EqualFold(filepath.Ext(path), ".toml") {
		m, err = ParseManifestTOML(b, path)
	} else {
		m, err = ParseManifestCSV(bytes.NewReader(b), path)
	}
	if err != nil {
		return nil, err
	}
	m.Dir = filepath.Dir(path)
	return m, nil
}

// MaxManifestSize is the largest manifest ReadManifest reads, in bytes.
const MaxManifestSize = 1 << 30

// readManifestFile reads a manifest file: a regular file only (a named
// pipe or a device is refused without being opened for reading), at most
// MaxManifestSize bytes.
func readManifestFile(path string) ([]byte, error) {
	if err := regularFile(path, "manifest"); err != nil {
		if errors.Is(err, ErrNotRegular) {
			return nil, &ManifestError{File: path, Msg: "not a regular file: give the path of a CSV or TOML manifest"}
		}
		return nil, fmt.Errorf("%w: %v", ErrManifest, err)
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("%w: %v", ErrManifest, err)
	}
	defer f.Close()
	b, err := io.ReadAll(io.LimitReader(f, MaxManifestSize+1))
	if err != nil {
		return nil, fmt.Errorf("%w: %v", ErrManifest, err)
	}
	if len(b) > MaxManifestSize {
		return nil, &ManifestError{File: path, Msg: fmt.Sprintf("more than %d bytes: is this the manifest?", MaxManifestSize)}
	}
	return b, nil
}

// ParseManifestCSV parses a CSV manifest (see ReadManifest); name is used
// in messages. Relative paths are left as they are (Manifest.Dir is "").
func ParseManifestCSV(r io.Reader, name string) (*Manifest, error) {
	// A spreadsheet may start the file with a UTF-8 byte-order mark.
	br := bufio.NewReader(r)
	if bom, err := br.Peek(3); err == nil && string(bom) == "\ufeff" {
		br.Discard(3)
	}
	cr := csv.NewReader(br)
	cr.Comment = '#'
	cr.FieldsPerRecord = -1
	cr.TrimLeadingSpace = true
	header, err := cr.Read()
	if err == io.EOF {
		return nil, &ManifestError{File: name, Msg: "empty: no header row"}
	}
	if err != nil {
		return nil, csvError(name, err)
	}
	known := map[string]bool{}
	for _, c := range csvColumns {
		known[c] = true
	}
	col := map[string]int{}
	hline, _ := cr.FieldPos(0)
	for j, h := range header {
		h = strings.ToLower(strings.TrimSpace(h))
		if !known[h] {
			return nil, &ManifestError{File: name, Line: hline, Column: h, Msg: fmt.Sprintf("unknown column (known: %s)", strings.Join(csvColumns, ", "))}
		}
		if _, dup := col[h]; dup {
			return nil, &ManifestError{File: name, Line: hline, Column: h, Msg: "column given twice"}
		}
		col[h] = j
	}
	for _, req := range []string{"name", "data"} {
		if _, ok := col[req]; !ok {
			return nil, &ManifestError{File: name, Line: hline, Column: req, Msg: "required column missing"}
		}
	}
	m := &Manifest{File: name}
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, csvError(name, err)
		}
		line, _ := cr.FieldPos(0)
		if len(rec) != len(header) {
			return nil, &ManifestError{File: name, Line: line, Msg: fmt.Sprintf("%d fields, the header has %d", len(rec), len(header))}
		}
		get := func(c string) string {
			if j, ok := col[c]; ok {
				return strings.TrimSpace(rec[j])
			}
			return ""
		}
		e := Entry{Name: get("name"), Data: get("data"), StarFile: get("star_file"), RVUnit: get("rv_unit"), Photometry: get("photometry"), Line: line}
		bad := func(c, msg string) error { return &ManifestError{File: name, Line: line, Column: c, Msg: msg} }
		if p := get("periods"); p != "" {
			for _, f := range strings.FieldsFunc(p, func(r rune) bool { return r == ';' || r == ' ' || r == '\t' }) {
				v, err := strconv.ParseFloat(f, 64)
				if err != nil {
					return nil, bad("periods", fmt.Sprintf("%q is not a number of days", f))
				}
				e.Periods = append(e.Periods, v)
			}
		}
		if c := get("columns"); c != "" {
			cm, err := rvfit.ParseColumnMap(strings.ReplaceAll(c, ";", ","))
			if err != nil {
				return nil, bad("columns", err.Error())
			}
			e.Columns = cm
		}
		if c := get("indicators"); c != "" {
			e.Read.Indicators = []string{}
			if c != "none" {
				e.Read.Indicators = semicolonList(c)
			}
		}
		if c := get("units"); c != "" {
			u, err := rvfit.ParseColumnMap(strings.ReplaceAll(c, ";", ","))
			if err != nil {
				return nil, bad("units", err.Error())
			}
			e.Read.Units = u
		}
		e.Read.TimeZero = get("time_zero")
		e.Read.Missing = semicolonList(get("missing"))
		e.Read.RejectIf = semicolonList(get("reject_if"))
		e.Read.Duplicates = get("duplicate_epochs")
		e.Read.Split = semicolonList(get("split"))
		inline := map[string]float64{}
		for _, k := range inlineKeys {
			v := get(k)
			if v == "" {
				continue
			}
			x, err := strconv.ParseFloat(v, 64)
			if err != nil {
				return nil, bad(k, fmt.Sprintf("%q is not a number", v))
			}
			inline[k] = x
		}
		if err := e.setInline(inline, name, line, ""); err != nil {
			return nil, err
		}
		m.Stars = append(m.Stars, e)
	}
	if err := m.Check(); err != nil {
		return nil, err
	}
	return m, nil
}

func csvError(name string, err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return &ManifestError{File: name, Line: pe.Line, Msg: pe.Err.Error()}
	}
	return &ManifestError{File: name, Msg: err.Error()}
}

// tomlEntry is one [[star]] table of a TOML manifest.
type tomlEntry struct {
	Name              string    `toml:"name"`
	Data              string    `toml:"data"`
	StarFile          string    `toml:"star_file"`
	Periods           []float64 `toml:"periods"`
	Columns           string    `toml:"columns"`
	RVUnit            string    `toml:"rv_unit"`
	Photometry        string    `toml:"photometry"`
	Indicators        []string  `toml:"indicators"`
	Units             string    `toml:"units"`
	TimeZero          string    `toml:"time_zero"`
	Missing           []string  `toml:"missing"`
	RejectIf          []string  `toml:"reject_if"`
	DuplicateEpochs   string    `toml:"duplicate_epochs"`
	Split             []string  `toml:"split"`
	BV                *float64  `toml:"b_v"`
	Mass              *float64  `toml:"mass"`
	Teff              *float64  `toml:"teff"`
	VSinI             *float64  `toml:"vsini"`
	RotationPeriod    *float64  `toml:"rotation_period"`
	RotationPeriodErr *float64  `toml:"rotation_period_err"`
}

// ParseManifestTOML parses a TOML manifest (see ReadManifest); name is
// used in messages. Relative paths are left as they are.
func ParseManifestTOML(b []byte, name string) (*Manifest, error) {
	var doc struct {
		Star []tomlEntry `toml:"star"`
	}
	md, err := toml.NewDecoder(bytes.NewReader(b)).Decode(&doc)
	if err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, &ManifestError{File: name, Line: pe.Position.Line, Msg: pe.Message}
		}
		return nil, &ManifestError{File: name, Msg: err.Error()}
	}
	if und := md.Undecoded(); len(und) > 0 {
		return nil, &ManifestError{File: name, Line: keyLine(b, und[0][len(und[0])-1]), Key: und[0].String(), Msg: "unknown key"}
	}
	m := &Manifest{File: name}
	for i, t := range doc.Star {
		line := starLine(b, i+1)
		e := Entry{Name: strings.TrimSpace(t.Name), Data: t.Data, StarFile: t.StarFile, Periods: t.Periods, RVUnit: t.RVUnit, Photometry: t.Photometry, Line: line}
		if t.Columns != "" {
			cm, err := rvfit.ParseColumnMap(t.Columns)
			if err != nil {
				return nil, &ManifestError{File: name, Line: line, Key: fmt.Sprintf("star[%d].columns", i+1), Msg: err.Error()}
			}
			e.Columns = cm
		}
		if t.Units != "" {
			u, err := rvfit.ParseColumnMap(t.Units)
			if err != nil {
				return nil, &ManifestError{File: name, Line: line, Key: fmt.Sprintf("star[%d].units", i+1), Msg: err.Error()}
			}
			e.Read.Units = u
		}
		e.Read.Indicators, e.Read.TimeZero, e.Read.Missing = t.Indicators, t.TimeZero, t.Missing
		e.Read.RejectIf, e.Read.Duplicates, e.Read.Split = t.RejectIf, t.DuplicateEpochs, t.Split
		inline := map[string]float64{}
		for k, p := range map[string]*float64{"b_v": t.BV, "mass": t.Mass, "teff": t.Teff, "vsini": t.VSinI,
			"rotation_period": t.RotationPeriod, "rotation_period_err": t.RotationPeriodErr} {
			if p != nil {
				inline[k] = *p
			}
		}
		if err := e.setInline(inline, name, line, fmt.Sprintf("star[%d].", i+1)); err != nil {
			return nil, err
		}
		m.Stars = append(m.Stars, e)
	}
	if err := m.Check(); err != nil {
		return nil, err
	}
	return m, nil
}

// starLine returns the line of the k-th (1-based) "[[star]]" header, or 0.
func starLine(b []byte, k int) int {
	n := 0
	for i, line := range strings.Split(string(b), "\n") {
		if strings.HasPrefix(strings.TrimSpace(line), "[[star]]") {
			n++
			if n == k {
				return i + 1
			}
		}
	}
	return 0
}

// keyLine returns the first line that assigns key or opens a table of
// that name, or 0.
func keyLine(b []byte, key string) int {
	for i, line := range strings.Split(string(b), "\n") {
		f := strings.TrimSpace(line)
		if strings.Trim(f, "[] ") == key {
			return i + 1
		}
		if rest, ok := strings.CutPrefix(f, key); ok && strings.HasPrefix(strings.TrimSpace(rest), "=") {
			return i + 1
		}
	}
	return 0
}

// setInline checks inline star parameters with the rules of a star file
// (activity.ParseStar) and stores them in e.Star.
func (e *Entry) setInline(inline map[string]float64, file string, line int, keyPrefix string) error {
	merr := func(k, msg string) error {
		if keyPrefix != "" {
			return &ManifestError{File: file, Line: line, Key: keyPrefix + k, Msg: msg}
		}
		return &ManifestError{File: file, Line: line, Column: k, Msg: msg}
	}
	if len(inline) == 0 {
		return nil
	}
	var sb strings.Builder
	fmt.Fprintf(&sb, "name = %q\n", nameOr(e.Name))
	keys := make([]string, 0, len(inline))
	for k := range inline {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		v := inline[k]
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return merr(k, fmt.Sprintf("%g is not a finite number", v))
		}
		fmt.Fprintf(&sb, "%s = %s\n", k, strconv.FormatFloat(v, 'e', -1, 64))
	}
	st, err := activity.ParseStar([]byte(sb.String()), file)
	if err != nil {
		var se *activity.StarError
		if errors.As(err, &se) {
			return merr(se.Key, se.Msg)
		}
		return &ManifestError{File: file, Line: line, Msg: err.Error()}
	}
	st.Name = e.Name
	e.Star = st
	return nil
}

func nameOr(s string) string {
	if s == "" {
		return "unnamed"
	}
	return s
}

// Check checks a manifest: every star has a name and data, names are
// unique and so are their output folders, periods are positive.
func (m *Manifest) Check() error {
	if m == nil || len(m.Stars) == 0 {
		return &ManifestError{File: m.file(), Msg: "no stars"}
	}
	names := map[string]int{}
	folders := map[string]string{}
	for i := range m.Stars {
		e := &m.Stars[i]
		bad := func(c, msg string) error {
			if strings.EqualFold(filepath.Ext(m.File), ".toml") {
				return &ManifestError{File: m.file(), Line: e.Line, Key: fmt.Sprintf("star[%d].%s", i+1, c), Msg: msg}
			}
			return &ManifestError{File: m.file(), Line: e.Line, Column: c, Msg: msg}
		}
		if strings.TrimSpace(e.Name) == "" {
			return bad("name", fmt.Sprintf("star %d has no name", i+1))
		}
		if len(e.Name) > maxNameBytes {
			return bad("name", fmt.Sprintf("star %d: a name of %d bytes; names are at most %d bytes (they name folders)", i+1, len(e.Name), maxNameBytes))
		}
		if msg := badNameChars(e.Name); msg != "" {
			return bad("name", fmt.Sprintf("star %d: the name %s", i+1, msg))
		}
		if e.Data == "" && e.Series == nil {
			return bad("data", fmt.Sprintf("star %q has no data", e.Name))
		}
		if j, dup := names[e.Name]; dup {
			return bad("name", fmt.Sprintf("star %q is also star %d", e.Name, j+1))
		}
		names[e.Name] = i
		f := Folder(e.Name)
		if other, dup := folders[f]; dup {
			return bad("name", fmt.Sprintf("stars %q and %q would share the output folder %q", other, e.Name, f))
		}
		folders[f] = e.Name
		for _, p := range e.Periods {
			if !(p > 0) || math.IsInf(p, 0) {
				return bad("periods", fmt.Sprintf("star %q: %g is not a period in days", e.Name, p))
			}
		}
		switch strings.ToLower(e.RVUnit) {
		case "", "m/s", "km/s":
		default:
			return bad("rv_unit", fmt.Sprintf("star %q: unit %q is neither m/s nor km/s", e.Name, e.RVUnit))
		}
		if err := e.readOptions().Check(); err != nil {
			return bad("reading options", fmt.Sprintf("star %q: %v", e.Name, err))
		}
		for _, sp := range e.Read.Split {
			if _, _, err := rvfit.ParseSplit(sp); err != nil {
				return bad("split", fmt.Sprintf("star %q: %v", e.Name, err))
			}
		}
	}
	return nil
}

// maxNameBytes bounds a star's name: it names a folder, and file systems
// allow 255 bytes.
const maxNameBytes = 255

// badNameChars says what is wrong with the characters of a star name, or
// "" when nothing is: it must be UTF-8 without control or bidirectional
// formatting characters.
func badNameChars(name string) string {
	if !utf8.ValidString(name) {
		return "is not UTF-8 text"
	}
	for _, r := range name {
		if r < 0x20 || r == 0x7f || (r >= 0x80 && r < 0xa0) {
			return fmt.Sprintf("holds the control character %U", r)
		}
		if r >= 0x202A && r <= 0x202E || r >= 0x2066 && r <= 0x2069 || r == 0x200E || r == 0x200F {
			return fmt.Sprintf("holds the bidirectional formatting character %U", r)
		}
	}
	return ""
}

func (m *Manifest) file() string {
	if m == nil || m.File == "" {
		return "manifest"
	}
	return m.File
}

// Folder returns the output folder name of a star: its name with every
// character other than ASCII letters, digits, '-', '_' and '.' replaced by
// '_', and a leading '.' replaced too (so no folder is hidden). A name
// longer than MaxFolder bytes is cut, and the first 16 hex digits of the
// SHA-256 of the whole name appended, so that every folder name (and the
// temporary names made beside it) fits a file system's 255-byte limit.
func Folder(name string) string {
	b := []byte(strings.TrimSpace(name))
	for i, c := range b {
		ok := c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '-' || c == '_' || c == '.'
		if !ok || (i == 0 && c == '.') {
			b[i] = '_'
		}
	}
	if len(b) > MaxFolder {
		sum := sha256.Sum256([]byte(name))
		b = append(b[:MaxFolder-17], '-')
		b = append(b, hex.EncodeToString(sum[:8])...)
	}
	return string(b)
}

// MaxFolder is the longest folder name Folder returns, in bytes.
const MaxFolder = 200

// path resolves p against the manifest's folder.
func (m *Manifest) path(p string) string {
	if p == "" || filepath.IsAbs(p) || m.Dir == "" {
		return p
	}
	return filepath.Join(m.Dir, p)
}
