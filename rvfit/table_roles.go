package rvfit

import (
	"fmt"
	"regexp"
	"sort"
	"strconv"
	"strings"
)

// Column roles. A table's columns are matched to what spotsift needs by
// name, case and punctuation aside ("BJD", "e_RVel", "FWHM_DRS"); a
// --columns map (ReadOptions.Columns) overrides any of them, naming the
// file's column or its 1-based position. The names recognised are listed
// in README.md ("Reading real tables"); keep the two lists in step.

// timeNames, rvNames, rvErrNames and instrumentNames are the recognised
// names of the time, RV, RV-error and instrument columns, lower case
// without punctuation.
var (
	timeNames       = words("time t jd bjd hjd mjd rjd bjdtdb jdutc bjdutc hjdutc jdb date epoch obstime btjd")
	rvNames         = words("rv vrad radvel rvel mnvel vr radialvelocity velocity vel")
	rvErrNames      = words("rverr erv sigrv svrad errvel err error sigma sigmarv rverror ervel unc uncertainty drv srv rvunc evrad sigvrad vraderr")
	instrumentNames = words("instrument inst instr tel telescope spectrograph insname instrumentname")
)

// indicatorNames maps recognised indicator names (lower case without
// punctuation) onto spotsift's name for the quantity. rhk (linear R'HK)
// is read as log_rhk.
var indicatorNames = map[string]string{
	"fwhm": "fwhm", "fwhmdrs": "fwhm", "fwhmccf": "fwhm",
	"contrast": "contrast", "contrastdrs": "contrast", "contrastccf": "contrast",
	"bis": "bis", "bisspan": "bis", "bisdrs": "bis", "bisccf": "bis", "bisector": "bis", "bisspanccf": "bis",
	"vspan": "vspan", "deltav": "delta_v",
	"sindex": "s_index", "sval": "s_index", "svalue": "s_index", "smw": "s_index", "shk": "s_index", "mwsindex": "s_index",
	"logrhk": "log_rhk", "logrhkp": "log_rhk", "lrhk": "log_rhk", "logrphk": "log_rhk",
	"rhk": "rhk", "rhkp": "rhk", "rphk": "rhk", "rhkprime": "rhk",
	"halpha": "halpha", "halphaindex": "halpha", "haindex": "halpha", "ihalpha": "halpha",
	"naid": "naid", "nad": "naid", "naidindex": "naid",
	"chromaticslope": "chromatic_slope",
	"crx":            "crx", "dlw": "dlw", "nad1": "nad1", "nad2": "nad2",
}

func words(s string) map[string]bool {
	m := map[string]bool{}
	for _, w := range strings.Fields(s) {
		m[w] = true
	}
	return m
}

// nameKey is a column name lower case without punctuation.
func nameKey(s string) string {
	var b strings.Builder
	for _, r := range strings.ToLower(s) {
		if r >= 'a' && r <= 'z' || r >= '0' && r <= '9' {
			b.WriteRune(r)
		}
	}
	return b.String()
}

// timeOffsetName matches a time column whose name carries its offset:
// "BJD-2450000", "JD - 2400000", "HJD_2450000".
var timeOffsetName = regexp.MustCompile(`^[bh]?jd(\d{4,7})$`)

// errorPatterns are the ways an uncertainty column is named after its
// value column X (compared lower case): X_err, X_error, Xerr, e_X, eX,
// err_X, sig_X, sigX, sigma_X, dX, d_X, sX, s_X, X_sig, X_unc.
func errorNames(x string) []string {
	x = strings.ToLower(x)
	return []string{x + "_err", x + "_error", x + "err", "e_" + x, "e" + x, "err_" + x, "sig_" + x, "sig" + x,
		"sigma_" + x, "d" + x, "d_" + x, "s" + x, "s_" + x, x + "_sig", x + "_unc"}
}

// indPlan is one indicator to read.
type indPlan struct {
	name   string     // spotsift's name for it
	col    *rawColumn // its values
	errCol *rawColumn // its uncertainties, or nil
	user   bool       // named by the user (a bad cell is an error, not a note)
	rhk    bool       // linear R'HK, read as log R'HK
}

// rolePlan says which column plays which part.
type rolePlan struct {
	time, rv, rvErr, inst *rawColumn
	inds                  []indPlan
	rejects               []rejectRule
	ignored               []string
	value                 string // canonical name of the value column (rv, or e.g. flux)
	note                  string // "taken as: ..." for the user
}

// mapRoles decides the roles of a table's columns from its header (names,
// positions, units) and the options, and marks the columns to keep.
func mapRoles(rt *rawTable, opts *ReadOptions) (*rolePlan, error) {
	terr := func(col string, err error) error { return &TableError{File: rt.file, Column: col, Err: err} }
	byName := map[string]*rawColumn{}
	byLower := map[string][]*rawColumn{}
	for _, c := range rt.cols {
		byName[c.name] = c
		byLower[strings.ToLower(c.name)] = append(byLower[strings.ToLower(c.name)], c)
	}
	have := strings.Join(clipList(rt.names(), 30), ", ")
	// resolve finds a column by name (exact, else the only one equal
	// ignoring case) or by 1-based position.
	resolve := func(ref string) *rawColumn {
		if c, ok := byName[ref]; ok {
			return c
		}
		if cs := byLower[strings.ToLower(ref)]; len(cs) == 1 {
			return cs[0]
		}
		if n, err := strconv.Atoi(ref); err == nil && n >= 1 && n <= len(rt.cols) {
			return rt.cols[n-1]
		}
		return nil
	}
	value, valueErr, labelCol := opts.roles()
	p := &rolePlan{value: value}
	used := map[*rawColumn]string{}
	take := func(c *rawColumn, role string) {
		used[c] = role
		c.keep = true
	}
	userInd := map[string]*rawColumn{}
	userErr := map[string]*rawColumn{}
	for _, canon := range sortedMapKeys(opts.Columns) {
		ref := opts.Columns[canon]
		c := resolve(ref)
		if c == nil {
			return nil, terr(ref, fmt.Errorf("%w: --columns maps %q onto it, but the file has no such column (it has %s)", ErrMissingColumn, canon, have))
		}
		if prev, dup := used[c]; dup {
			return nil, terr(c.name, fmt.Errorf("%w: column taken as both %s and %s", ErrBadMapping, prev, canon))
		}
		switch {
		case canon == ColTime:
			p.time = c
		case canon == value:
			p.rv = c
		case canon == valueErr:
			p.rvErr = c
		case canon == labelCol:
			p.inst = c
		case strings.HasSuffix(canon, errSuffix):
			userErr[strings.TrimSuffix(canon, errSuffix)] = c
		default:
			userInd[canon] = c
		}
		take(c, canon)
	}
	free := func(c *rawColumn) bool { _, u := used[c]; return !u && c.name != rowIndexName }
	find := func(names map[string]bool) *rawColumn {
		for _, c := range rt.cols {
			if free(c) && names[nameKey(c.name)] {
				return c
			}
		}
		return nil
	}
	findErr := func(of *rawColumn, extra ...string) *rawColumn {
		for _, x := range append([]string{of.name}, extra...) {
			for _, n := range errorNames(x) {
				for _, c := range byLower[n] {
					if free(c) {
						return c
					}
				}
			}
		}
		return nil
	}
	positional := func(pos int) *rawColumn {
		if rt.headerless && pos <= len(rt.cols) && free(rt.cols[pos-1]) {
			return rt.cols[pos-1]
		}
		return nil
	}
	if p.time == nil {
		if p.time = positional(1); p.time == nil {
			p.time = find(timeNames)
			if p.time == nil {
				for _, c := range rt.cols {
					if free(c) && timeOffsetName.MatchString(nameKey(c.name)) {
						p.time = c
						break
					}
				}
			}
		}
		if p.time != nil {
			take(p.time, ColTime)
		}
	}
	if p.rv == nil {
		if p.rv = positional(2); p.rv == nil && value != ColRV {
			p.rv = find(map[string]bool{nameKey(value): true})
		} else if p.rv == nil {
			if p.rv = find(rvNames); p.rv == nil {
				// Pipeline variants: RV_mlc_nzp, rv_drs, vrad_ccf: the first.
				for _, c := range rt.cols {
					l := strings.ToLower(c.name)
					isErr := rvErrNames[nameKey(c.name)] || strings.Contains(l, "err")
					if free(c) && !isErr && (strings.HasPrefix(l, "rv_") || strings.HasPrefix(l, "vrad_") || strings.HasPrefix(l, "rv-")) {
						p.rv = c
						break
					}
				}
			}
		}
		if p.rv != nil {
			take(p.rv, value)
		}
	}
	if p.rvErr == nil {
		if p.rvErr = positional(3); p.rvErr == nil && p.rv != nil {
			p.rvErr = findErr(p.rv, value)
		}
		if p.rvErr == nil && value == ColRV {
			p.rvErr = find(rvErrNames)
		}
		if p.rvErr != nil {
			take(p.rvErr, valueErr)
		}
	}
	for _, r := range []struct {
		c     *rawColumn
		canon string
	}{{p.time, ColTime}, {p.rv, value}, {p.rvErr, valueErr}} {
		if r.c == nil {
			return nil, terr(r.canon, fmt.Errorf("%w (the file has %s; map yours with --columns %s=NAME or a column number)", ErrMissingColumn, have, r.canon))
		}
		r.c.required = true
	}
	if p.inst == nil {
		names := instrumentNames
		if labelCol != ColInstrument {
			names = map[string]bool{nameKey(labelCol): true}
		}
		if p.inst = find(names); p.inst != nil {
			take(p.inst, labelCol)
		}
	}
	if p.inst != nil {
		p.inst.text = true
	}

	// Indicators: named by the user, else recognised by name.
	addInd := func(name string, c *rawColumn, user bool) {
		ip := indPlan{name: name, col: c, user: user}
		if name == "rhk" {
			ip.name, ip.rhk = "log_rhk", true
		}
		if e := userErr[name]; e != nil {
			ip.errCol = e
		} else if e := findErr(c, name); e != nil {
			ip.errCol = e
			take(e, name+errSuffix)
		}
		if ip.errCol != nil {
			ip.errCol.required = user
		}
		c.required = user
		p.inds = append(p.inds, ip)
	}
	for _, name := range sortedMapKeysC(userInd) {
		addInd(name, userInd[name], true)
	}
	for _, ref := range opts.Indicators {
		name, r, ok := strings.Cut(ref, "=")
		if !ok {
			r = name
			name = ""
		}
		name, r = strings.TrimSpace(name), strings.TrimSpace(r)
		c := resolve(r)
		if c == nil {
			return nil, terr(r, fmt.Errorf("%w: --indicators names it, but the file has no such column (it has %s)", ErrMissingColumn, have))
		}
		if !free(c) {
			return nil, terr(c.name, fmt.Errorf("%w: --indicators names a column already taken as %s", ErrBadMapping, used[c]))
		}
		if name == "" {
			name = c.name
			if canon, ok := indicatorNames[nameKey(c.name)]; ok {
				name = canon
			}
		}
		take(c, name)
		addInd(name, c, true)
	}
	if opts.Indicators == nil {
		taken := map[string]bool{}
		for _, ip := range p.inds {
			taken[ip.name] = true
		}
		for _, c := range rt.cols {
			canon, ok := indicatorNames[nameKey(c.name)]
			if !ok || !free(c) || rt.headerless {
				continue
			}
			if taken[canon] || (canon == "rhk" && taken["log_rhk"]) {
				canon = strings.ToLower(c.name) // a second column of the same quantity keeps its name
			}
			taken[canon] = true
			take(c, canon)
			addInd(canon, c, false)
		}
	}
	// Rows rejected by a flag column.
	for _, spec := range opts.RejectIf {
		rr, err := parseReject(spec)
		if err != nil {
			return nil, terr("", err)
		}
		c := resolve(rr.col)
		if c == nil {
			return nil, terr(rr.col, fmt.Errorf("%w: --reject-if %q names it, but the file has no such column (it has %s)", ErrMissingColumn, spec, have))
		}
		rr.c = c
		c.keep, c.text = true, true
		p.rejects = append(p.rejects, rr)
	}

	var taken []string
	for _, r := range []struct {
		c    *rawColumn
		role string
	}{{p.time, ColTime}, {p.rv, value}, {p.rvErr, valueErr}, {p.inst, labelCol}} {
		if r.c != nil {
			taken = append(taken, r.role+"="+r.c.name)
		}
	}
	for _, ip := range p.inds {
		s := ip.name + "=" + ip.col.name
		if ip.errCol != nil {
			s += " (±" + ip.errCol.name + ")"
		}
		taken = append(taken, s)
	}
	for _, c := range rt.cols {
		if _, u := used[c]; !u {
			p.ignored = append(p.ignored, c.name)
		}
	}
	p.note = "columns taken as " + strings.Join(taken, ", ")
	if len(p.ignored) > 0 {
		p.note += fmt.Sprintf("; ignored: %s (name one with --indicators to use it)", strings.Join(clipList(p.ignored, 40), ", "))
	}
	return p, nil
}

// clipList shortens a long list of names for a message.
func clipList(names []string, n int) []string {
	if len(names) <= n {
		return names
	}
	return append(append([]string(nil), names[:n]...), fmt.Sprintf("and %d more", len(names)-n))
}

func sortedMapKeysC(m map[string]*rawColumn) []string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	return keys
}

// rejectRule is one --reject-if condition: rows whose column compares
// true are left out.
type rejectRule struct {
	spec, col, op, val string
	num                float64
	isNum              bool
	c                  *rawColumn
}

// parseReject parses "COLUMN OP VALUE" with OP one of != == = < <= > >=.
func parseReject(spec string) (rejectRule, error) {
	bad := fmt.Errorf("%w: --reject-if %q is not of the form COLUMN!=VALUE (or ==, <, <=, >, >=)", ErrBadMapping, clip(spec))
	i := strings.IndexAny(spec, "!=<>")
	if i <= 0 {
		return rejectRule{}, bad
	}
	rest := spec[i:]
	for _, op := range []string{"!=", "==", "<=", ">=", "=", "<", ">"} {
		if !strings.HasPrefix(rest, op) {
			continue
		}
		rr := rejectRule{spec: spec, col: strings.TrimSpace(spec[:i]), op: op, val: strings.TrimSpace(rest[len(op):])}
		if rr.op == "=" {
			rr.op = "=="
		}
		if rr.col == "" || rr.val == "" {
			return rejectRule{}, bad
		}
		if x, err := strconv.ParseFloat(rr.val, 64); err == nil {
			rr.num, rr.isNum = x, true
		} else if rr.op != "==" && rr.op != "!=" {
			return rr, fmt.Errorf("%w: --reject-if %q compares with %q, which is not a number", ErrBadMapping, clip(spec), clip(rr.val))
		}
		return rr, nil
	}
	return rejectRule{}, bad
}

// rejects reports whether row i is rejected by the rule.
func (rr *rejectRule) rejects(i int) bool {
	c := rr.c
	if rr.isNum && c.state[i] == cellOK {
		x := c.num[i]
		switch rr.op {
		case "!=":
			return x != rr.num
		case "==":
			return x == rr.num
		case "<":
			return x < rr.num
		case "<=":
			return x <= rr.num
		case ">":
			return x > rr.num
		case ">=":
			return x >= rr.num
		}
	}
	s := ""
	if c.str != nil {
		s = c.str[i]
	} else if c.state[i] == cellOK {
		s = formatFloat(c.num[i])
	}
	switch rr.op {
	case "!=":
		return s != rr.val
	case "==":
		return s == rr.val
	}
	return false
}
