package rvfit

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"regexp"
	"strconv"
	"strings"
	"unicode/utf8"
)

// Reading a text table happens in three steps, each in its own file:
//
//   - read (this file): lines, comments, the layout (delimiter, header or
//     none, units row, dashes row, VizieR column descriptions), and the
//     cells of the columns that step two keeps, as numbers or text;
//   - map (table_roles.go): which column is the time, the RV, its error,
//     the instrument, each indicator and its error, which are ignored;
//   - validate (table.go): units, time base, missing values and sentinels,
//     rejected rows, and the checks that give precise errors.
//
// Roles are decided from the header alone, before the rows are read, so
// only the columns used are kept in memory and a bad cell in a used column
// stops the read at once.

// cellState says what a cell held.
type cellState uint8

const (
	cellOK      cellState = iota // a number (possibly ±Inf)
	cellEmpty                    // an empty cell
	cellNaN                      // NaN, NA, null, None or --
	cellMissing                  // a value declared missing (ReadOptions.Missing)
	cellBad                      // text that is not a number
)

// rawColumn is one column of a table as read.
type rawColumn struct {
	name string // the file's name, or its 1-based position for a table without header
	pos  int    // 1-based position
	unit string // unit as written in the file ("" when not given)

	keep     bool // cells are stored (a role uses the column)
	text     bool // text is stored too (instrument and flag columns)
	required bool // a bad cell is an error at once (time, rv, rv_err, named indicators)

	num   []float64
	state []cellState
	str   []string
	bad   error // the first cell that is not a number
}

// rawTable is a table as read, before roles are validated.
type rawTable struct {
	file       string
	cols       []*rawColumn
	headerless bool
	line       []int    // line (text) or row (FITS) of each record
	notes      []string // what the reader noticed about the layout
	units      map[string]string
}

func (rt *rawTable) names() []string {
	out := make([]string, len(rt.cols))
	for i, c := range rt.cols {
		out[i] = c.name
	}
	return out
}

// missingSet holds the cell values declared missing.
type missingSet struct {
	strs map[string]bool
	nums []float64
}

func newMissingSet(vals []string) *missingSet {
	m := &missingSet{strs: map[string]bool{}}
	for _, v := range vals {
		v = strings.TrimSpace(v)
		if v == "" {
			continue
		}
		m.strs[v] = true
		if x, err := strconv.ParseFloat(v, 64); err == nil && !math.IsNaN(x) {
			m.nums = append(m.nums, x)
		}
	}
	return m
}

// nanWords are cells that mean "no value" in common table writers.
var nanWords = map[string]bool{"NA": true, "N/A": true, "n/a": true, "null": true, "NULL": true, "None": true, "--": true,
	"NaN": true, "nan": true, "NAN": true}

// add appends one cell to a kept column.
func (c *rawColumn) add(cell string, line int, file string, miss *missingSet) error {
	cell = strings.TrimSpace(cell)
	if c.text {
		c.str = append(c.str, cell)
	}
	st, x := cellOK, math.NaN()
	switch {
	case cell == "":
		st = cellEmpty
	case miss.strs[cell]:
		st = cellMissing
	case nanWords[cell] || nanWords[strings.TrimLeft(cell, "+-")]:
		st = cellNaN
	default:
		v, err := strconv.ParseFloat(cell, 64)
		switch {
		case err != nil:
			st = cellBad
			if c.bad == nil {
				var ne *strconv.NumError
				if errors.As(err, &ne) && errors.Is(ne.Err, strconv.ErrRange) {
					c.bad = &TableError{File: file, Line: line, Column: c.name, Err: fmt.Errorf("%w: %q is out of range", ErrNotFinite, clip(cell))}
				} else {
					c.bad = &TableError{File: file, Line: line, Column: c.name, Err: fmt.Errorf("%w: %q", ErrNotNumber, clip(cell))}
				}
			}
		case math.IsNaN(v):
			st = cellNaN
		default:
			x = v
			for _, m := range miss.nums {
				if v == m {
					st, x = cellMissing, math.NaN()
					break
				}
			}
		}
	}
	c.num = append(c.num, x)
	c.state = append(c.state, st)
	if st == cellBad && c.required && !c.text {
		return c.bad
	}
	return nil
}

// vizierDesc matches a line of a VizieR column-description block:
// "    RJD (d)      (F12.6) [58710/59167] Reduced Julian Date".
var vizierDesc = regexp.MustCompile(`^\s+(\S+)\s+(?:\(([^)]*)\)\s+)?\(([AIFEDaifed]\d+(?:\.\d+)?)\)`)

// headerUnit matches a header cell with a unit: "RV [km/s]", "rv (m/s)".
var headerUnit = regexp.MustCompile(`^(.*?\S)\s*[\[(]([^\])]*)[\])]$`)

// isRule reports whether a line is a dashed rule ("---- ----- --").
func isRule(s string) bool {
	t := strings.TrimSpace(s)
	if t == "" {
		return false
	}
	for _, r := range t {
		if r != '-' && r != '=' && r != ' ' && r != '\t' && r != '+' {
			return false
		}
	}
	return strings.ContainsAny(t, "-=")
}

// isDashCells reports whether every cell of a row is dashes (an .rdb or
// VizieR TSV row under the header).
func isDashCells(cells []string) bool {
	for _, c := range cells {
		c = strings.TrimSpace(c)
		if c == "" || strings.Trim(c, "-=") != "" {
			return false
		}
	}
	return len(cells) > 0
}

func isNumber(s string) bool {
	_, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	return err == nil
}

// layout is how the rows of a text table are split.
type layout struct {
	delim   byte     // ',', '\t' or ' ' (runs of blanks)
	extents [][2]int // fixed-width columns (VizieR), else nil
}

func (l *layout) String() string {
	switch {
	case l.extents != nil:
		return "fixed-width columns"
	case l.delim == ',':
		return "comma-separated"
	case l.delim == '\t':
		return "tab-separated"
	}
	return "blank-separated"
}

// split splits one line into cells.
func (l *layout) split(line string) ([]string, error) {
	if l.extents != nil {
		cells := make([]string, len(l.extents))
		for i, e := range l.extents {
			a, b := min(e[0], len(line)), min(e[1], len(line))
			if i == len(l.extents)-1 {
				b = len(line)
			}
			cells[i] = strings.TrimSpace(line[a:b])
		}
		return cells, nil
	}
	if l.delim == ' ' {
		if !strings.Contains(line, `"`) {
			return strings.Fields(line), nil
		}
		return splitQuotedBlanks(line)
	}
	if !strings.Contains(line, `"`) {
		cells := strings.Split(line, string(l.delim))
		if l.delim == ',' {
			for i := range cells {
				cells[i] = strings.TrimLeft(cells[i], " ")
			}
		}
		return cells, nil
	}
	return splitRecord(line, rune(l.delim))
}

// splitQuotedBlanks splits a line on runs of blanks, honouring double
// quotes ("" inside quotes is a quote).
func splitQuotedBlanks(line string) ([]string, error) {
	var cells []string
	i := 0
	for {
		for i < len(line) && (line[i] == ' ' || line[i] == '\t') {
			i++
		}
		if i >= len(line) {
			return cells, nil
		}
		if line[i] != '"' {
			j := i
			for j < len(line) && line[j] != ' ' && line[j] != '\t' {
				j++
			}
			cells = append(cells, line[i:j])
			i = j
			continue
		}
		var b strings.Builder
		j := i + 1
		for {
			if j >= len(line) {
				return nil, fmt.Errorf("%w: a quoted field is not closed", ErrBadFormat)
			}
			if line[j] == '"' {
				if j+1 < len(line) && line[j+1] == '"' {
					b.WriteByte('"')
					j += 2
					continue
				}
				j++
				break
			}
			b.WriteByte(line[j])
			j++
		}
		cells = append(cells, b.String())
		i = j
	}
}

// splitRecord splits one line of delimited text, honouring double quotes.
func splitRecord(line string, comma rune) ([]string, error) {
	cr := csv.NewReader(strings.NewReader(line))
	cr.Comma = comma
	cr.FieldsPerRecord = -1
	cr.TrimLeadingSpace = comma != '\t'
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

// rowIndexName names an unnamed first column (a row index).
const rowIndexName = "(row index)"

// readText reads a text table, deciding the column roles from its header
// (mapRoles) before storing the rows of the columns used.
func readText(r io.Reader, name string, opts *ReadOptions, size int64) (*rawTable, *rolePlan, error) {
	terr := func(line int, col string, err error) error {
		return &TableError{File: name, Line: line, Column: col, Err: err}
	}
	lr := newLineReader(r, size, opts.Progress)
	rt := &rawTable{file: name, units: map[string]string{}}
	if lr.note != "" {
		rt.notes = append(rt.notes, lr.note)
	}
	miss := newMissingSet(opts.Missing)
	var lay *layout
	var plan *rolePlan
	var desc []*rawColumn // VizieR column descriptions
	headerSeen := false   // header read (or decided absent)
	afterHeader := false  // between the header and the first data row
	unitsSeen := false
	skipToRule := false // VizieR: header lines until the next rule
	skipped := 0

	setNames := func(cells []string, line int) error {
		if len(cells) > maxColumns {
			return terr(line, "", fmt.Errorf("%w: the header has %d columns, more than the %d a table may have", ErrBadFormat, len(cells), maxColumns))
		}
		seen := map[string]bool{}
		for i, h := range cells {
			h = strings.TrimSpace(h)
			unit := ""
			if m := headerUnit.FindStringSubmatch(h); m != nil && !rt.headerless {
				h, unit = strings.TrimSpace(m[1]), strings.TrimSpace(m[2])
			}
			if h == "" {
				if i != 0 {
					return terr(line, "", fmt.Errorf("%w: header column %d has no name", ErrMissingColumn, i+1))
				}
				h = rowIndexName
			}
			if seen[h] {
				return terr(line, h, ErrDuplicateColumn)
			}
			seen[h] = true
			rt.cols = append(rt.cols, &rawColumn{name: h, pos: i + 1, unit: unit})
		}
		return nil
	}
	startRows := func(first []string, line int) error {
		// A header one cell short of the rows: the rows start with an
		// unnamed row index (as R writes tables).
		if !rt.headerless && len(first) == len(rt.cols)+1 && rt.cols[0].name != rowIndexName {
			for _, c := range rt.cols {
				c.pos++
			}
			rt.cols = append([]*rawColumn{{name: rowIndexName, pos: 1}}, rt.cols...)
			rt.notes = append(rt.notes, "the rows have one cell more than the header: the first is taken as a row index")
		}
		var err error
		plan, err = mapRoles(rt, opts)
		return err
	}
	addRow := func(cells []string, line int) error {
		if len(cells) != len(rt.cols) {
			return terr(line, "", fmt.Errorf("%w: %d fields, the header has %d", ErrFieldCount, len(cells), len(rt.cols)))
		}
		for j, c := range rt.cols {
			if !c.keep {
				continue
			}
			if err := c.add(cells[j], line, name, miss); err != nil {
				return err
			}
		}
		rt.line = append(rt.line, line)
		return nil
	}

	for {
		raw, err := lr.next(name)
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, nil, err
		}
		line := lr.line
		trim := strings.TrimSpace(raw)
		if trim == "" {
			continue
		}
		if strings.HasPrefix(trim, "#") {
			if err := parseUnitsComment(trim, rt.units); err != nil {
				return nil, nil, terr(line, "", err)
			}
			continue
		}
		if !headerSeen {
			// VizieR: an indented column-description block, a rule, a
			// header (possibly wrapped), a rule, the rows.
			if skipToRule {
				if isRule(raw) {
					skipToRule, headerSeen, afterHeader = false, true, false
					if err := startRows(nil, line); err != nil {
						return nil, nil, err
					}
				} else if skipped++; skipped > 5 {
					return nil, nil, terr(line, "", fmt.Errorf("%w: no dashed rule under the header of the VizieR table", ErrBadFormat))
				}
				continue
			}
			if m := vizierDesc.FindStringSubmatch(raw); m != nil && opts.Format == "" {
				desc = append(desc, &rawColumn{name: m[1], pos: len(desc) + 1, unit: vizierUnit(m[2])})
				continue
			}
			if len(desc) > 0 {
				if !isRule(raw) {
					return nil, nil, terr(line, "", fmt.Errorf("%w: a VizieR column-description block must be followed by a dashed rule", ErrBadFormat))
				}
				lay = &layout{extents: ruleExtents(raw)}
				if len(lay.extents) != len(desc) {
					return nil, nil, terr(line, "", fmt.Errorf("%w: the dashed rule marks %d columns, the description block names %d", ErrBadFormat, len(lay.extents), len(desc)))
				}
				rt.cols = desc
				rt.notes = append(rt.notes, "VizieR fixed-width table: column names and units from its description block")
				skipToRule = true
				continue
			}
			lay = detectLayout(raw, opts.Format)
			cells, err := lay.split(raw)
			if err != nil {
				return nil, nil, terr(line, "", err)
			}
			headerSeen, afterHeader = true, true
			allNum := len(cells) > 0
			for _, c := range cells {
				if !isNumber(c) {
					allNum = false
					break
				}
			}
			if allNum {
				rt.headerless = true
				pos := make([]string, len(cells))
				for i := range pos {
					pos[i] = strconv.Itoa(i + 1)
				}
				if err := setNames(pos, line); err != nil {
					return nil, nil, err
				}
				rt.notes = append(rt.notes, fmt.Sprintf("%s, no header row: columns are named by position 1 to %d", lay, len(cells)))
			} else {
				if err := setNames(cells, line); err != nil {
					return nil, nil, err
				}
				continue
			}
		}
		if plan == nil && lay.extents == nil && isRule(raw) && lay.delim != ',' && lay.delim != '\t' {
			continue // a rule under a blank-separated header
		}
		if lay.extents != nil && isRule(raw) {
			continue
		}
		cells, err := lay.split(raw)
		if err != nil {
			return nil, nil, terr(line, "", err)
		}
		if afterHeader && !rt.headerless {
			if isDashCells(cells) {
				continue
			}
			if !unitsSeen && len(cells) == len(rt.cols) && !anyNumber(cells) {
				unitsSeen = true
				for j, u := range cells {
					if u = vizierUnit(u); u != "" && rt.cols[j].unit == "" {
						rt.cols[j].unit = u
					}
				}
				rt.notes = append(rt.notes, "a units row under the header")
				continue
			}
		}
		if plan == nil {
			afterHeader = false
			if err := startRows(cells, line); err != nil {
				return nil, nil, err
			}
		}
		if err := addRow(cells, line); err != nil {
			return nil, nil, err
		}
	}
	if !headerSeen {
		return nil, nil, terr(0, "", fmt.Errorf("%w: the file is empty (no header row)", ErrNoObservations))
	}
	if plan == nil {
		var err error
		if plan, err = mapRoles(rt, opts); err != nil {
			return nil, nil, err
		}
	}
	if lay != nil && !rt.headerless && lay.extents == nil {
		rt.notes = append([]string{lay.String() + " with a header row"}, rt.notes...)
	}
	return rt, plan, nil
}

func anyNumber(cells []string) bool {
	for _, c := range cells {
		if isNumber(c) {
			return true
		}
	}
	return false
}

// vizierUnit turns a unit as VizieR writes it into one spotsift reads:
// "---" and "-" mean none.
func vizierUnit(u string) string {
	u = strings.TrimSpace(u)
	if strings.Trim(u, "-") == "" {
		return ""
	}
	return u
}

// ruleExtents returns the byte ranges of the dash runs of a rule line.
func ruleExtents(rule string) [][2]int {
	var out [][2]int
	start := -1
	for i := 0; i <= len(rule); i++ {
		dash := i < len(rule) && (rule[i] == '-' || rule[i] == '=')
		if dash && start < 0 {
			start = i
		}
		if !dash && start >= 0 {
			out = append(out, [2]int{start, i})
			start = -1
		}
	}
	return out
}

// detectLayout decides the delimiter from the first row: a tab makes a
// tab-separated table, else a comma a comma-separated one, else blanks.
// format ("csv", "tsv", "text") overrides.
func detectLayout(first, format string) *layout {
	switch format {
	case "csv":
		return &layout{delim: ','}
	case "tsv":
		return &layout{delim: '\t'}
	case "text":
		return &layout{delim: ' '}
	}
	switch {
	case strings.Contains(first, "\t"):
		return &layout{delim: '\t'}
	case strings.Contains(first, ","):
		return &layout{delim: ','}
	}
	return &layout{delim: ' '}
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
			return fmt.Errorf("%w: %q in a units comment is not of the form column=unit", ErrBadUnit, clip(f))
		}
		units[col] = u
	}
	return nil
}

// clip shortens a cell for an error message; %q then escapes anything
// that is not printable.
func clip(s string) string {
	if len(s) > 40 {
		s = s[:37]
		for len(s) > 0 && !utf8.ValidString(s) {
			s = s[:len(s)-1]
		}
		return s + "..."
	}
	return s
}
