package main

import (
	"flag"
	"fmt"
	"math"
	"runtime"
	"strings"

	"spotsift/activity"
	"spotsift/activity/survey"
	"spotsift/rvfit"
)

// defaultSeed is the seed used when --seed is not given; it is recorded in
// every output, so a run can be repeated exactly.
const defaultSeed = 1

// common holds the flags shared by several subcommands.
type common struct {
	data       string // the first --data (for labels and provenance)
	datas      listFlag
	columns    string
	rvUnit     string
	indicators string
	units      string
	timeZero   string
	missing    string
	rejectIf   listFlag
	duplicates string
	splits     listFlag
	star       string
	seed       uint64
	workers    int
	json       bool
	quiet      bool
}

// listFlag is a flag that may be given more than once.
type listFlag []string

func (l *listFlag) String() string     { return strings.Join(*l, " ") }
func (l *listFlag) Set(v string) error { *l = append(*l, v); return nil }

// addData registers --data and the options of reading tables.
func (c *common) addData(fs *flag.FlagSet) {
	fs.Var(&c.datas, "data", "per-epoch `table` (text in any common layout, or a FITS table), LABEL=table to name its instrument, or a data-set .toml file; repeat for one table per instrument")
	c.addTableFlags(fs)
}

// addTableFlags registers the options of reading tables (for survey, the
// defaults of the manifest's stars).
func (c *common) addTableFlags(fs *flag.FlagSet) {
	fs.StringVar(&c.columns, "columns", "", "say which column is what, by name or position, e.g. `time=1,rv=2,rv_err=3` or rv=RVel,s_index=SVal (default: recognised names)")
	fs.StringVar(&c.rvUnit, "rv-unit", "", "unit of the table's velocities, m/s or km/s (default: from the table, else m/s)")
	fs.StringVar(&c.indicators, "indicators", "", "the only columns read as activity indicators, `list` of names or positions (ours=theirs renames); none for no indicators (default: recognised names)")
	fs.StringVar(&c.units, "units", "", "units of columns, e.g. `fwhm=km/s,CONTRAST_DRS=%` (override the table)")
	fs.StringVar(&c.timeZero, "time-zero", "", "what the time column counts from: jd, mjd, rjd (JD-2400000), btjd (JD-2457000) or a number of days (default: from its name, else its values)")
	fs.StringVar(&c.missing, "missing", "", "cell values meaning 'not measured', comma-separated, e.g. `-9999999,-1`")
	fs.Var(&c.rejectIf, "reject-if", "leave out rows whose flag column compares true, e.g. `f_RV!=0` (repeatable)")
	fs.StringVar(&c.duplicates, "duplicate-epochs", "error", "rows of one instrument at the same time: error, or mean (weighted by their uncertainties)")
	fs.Var(&c.splits, "split", "give an instrument a new zero point from a date on, `LABEL@JD` (or JD with one instrument; repeatable)")
}

// readOptions builds the table-reading options from the flags.
func (c *common) readOptions() (*rvfit.ReadOptions, error) {
	cols, err := rvfit.ParseColumnMap(c.columns)
	if err != nil {
		return nil, fmt.Errorf("--columns: %w", err)
	}
	units, err := rvfit.ParseColumnMap(c.units)
	if err != nil {
		return nil, fmt.Errorf("--units: %w", err)
	}
	o := &rvfit.ReadOptions{Columns: cols, RVUnit: c.rvUnit, Units: units, TimeZero: c.timeZero,
		Missing: rvfit.ParseList(c.missing), RejectIf: c.rejectIf, Duplicates: c.duplicates}
	if c.indicators != "" {
		o.Indicators = []string{}
		if c.indicators != "none" {
			o.Indicators = rvfit.ParseList(c.indicators)
		}
	}
	if o.Duplicates == "error" {
		o.Duplicates = ""
	}
	if err := o.Check(); err != nil {
		return nil, err
	}
	return o, nil
}

// manifestDefaults gives every star of a manifest the table-reading flags
// for the options it does not set itself, and checks the result.
func (c *common) manifestDefaults(m *survey.Manifest) error {
	o, err := c.readOptions()
	if err != nil {
		return err
	}
	for i := range m.Stars {
		e := &m.Stars[i]
		if len(e.Columns) == 0 {
			e.Columns = o.Columns
		}
		if e.RVUnit == "" {
			e.RVUnit = o.RVUnit
		}
		r := &e.Read
		if r.Indicators == nil {
			r.Indicators = o.Indicators
		}
		if len(r.Units) == 0 {
			r.Units = o.Units
		}
		if r.TimeZero == "" {
			r.TimeZero = o.TimeZero
		}
		if r.Missing == nil {
			r.Missing = o.Missing
		}
		if r.RejectIf == nil {
			r.RejectIf = o.RejectIf
		}
		if r.Duplicates == "" {
			r.Duplicates = o.Duplicates
		}
		if r.Split == nil {
			r.Split = c.splits
		}
	}
	return m.Check()
}

// progressMinBytes is the size from which reading a table shows progress.
const progressMinBytes = 16 << 20

// loadData reads and validates the --data tables, printing how they were
// read and the reader's warnings (unless --quiet). minEpochs is the fewest
// epochs the command can work with.
func (c *common) loadData(e *env, cmd string, minEpochs int) (*rvfit.Series, error) {
	if len(c.datas) == 0 {
		return nil, fmt.Errorf("%s: --data is required", cmd)
	}
	_, c.data = rvfit.ParseTableArg(c.datas[0])
	opts, err := c.readOptions()
	if err != nil {
		return nil, err
	}
	tables, err := dataTables(c.datas, opts)
	if err != nil {
		return nil, err
	}
	// Big tables show how far reading has come (on a terminal only).
	var bar *progress
	var barTotal int64
	for i := range tables {
		tables[i].Options.Progress = func(done, total int64) {
			if total < progressMinBytes {
				return
			}
			if bar == nil || total != barTotal {
				bar.Done()
				bar, barTotal = newProgress(e.stderr, int(total>>10), "reading (KiB)", c.quiet), total
			}
			bar.Set(int(done>>10), int(total>>10))
		}
	}
	s, warns, err := rvfit.ReadTables(tables)
	bar.Done()
	if err != nil {
		return nil, err
	}
	for _, sp := range c.splits {
		label, at, err := rvfit.ParseSplit(sp)
		if err != nil {
			return nil, err
		}
		if err := s.SplitAt(label, at); err != nil {
			return nil, fmt.Errorf("--split: %w", err)
		}
	}
	if !c.quiet {
		for _, n := range s.Notes {
			fmt.Fprintf(e.stderr, "spotsift: %s\n", n)
		}
	}
	for _, w := range warns {
		warnf(e, c.quiet, "%s", w)
	}
	for _, st := range rvfit.FindSteps(s) {
		warnf(e, c.quiet, "%s", st)
	}
	if err := s.Require(minEpochs, cmd); err != nil {
		return nil, err
	}
	return s, nil
}

// dataTables turns --data values into tables to read: a data-set file
// gives its own tables (the flags are not applied to them); a table, or
// LABEL=table, is read with the flags' options. With several tables, each
// gets a label (its file name when none is given).
func dataTables(args []string, opts *rvfit.ReadOptions) ([]rvfit.DataTable, error) {
	var out []rvfit.DataTable
	for _, a := range args {
		label, path := rvfit.ParseTableArg(a)
		if rvfit.IsDataSetFile(path) {
			ts, err := rvfit.ReadDataSetFile(path)
			if err != nil {
				return nil, err
			}
			out = append(out, ts...)
			continue
		}
		o := *opts
		o.Instrument = label
		out = append(out, rvfit.DataTable{Path: path, Options: o})
	}
	if len(out) > 1 {
		for i := range out {
			if out[i].Options.Instrument == "" {
				out[i].Options.Instrument = rvfit.TableLabel(out[i].Path)
			}
		}
	}
	return out, nil
}

// addStar registers --star.
func (c *common) addStar(fs *flag.FlagSet) {
	fs.StringVar(&c.star, "star", "", "stellar parameters, a TOML `file` (name, B-V, mass, Teff, v sin i, rotation period, S-index calibration, air/vacuum)")
}

// addRun registers --seed, --workers, --json and --quiet.
func (c *common) addRun(fs *flag.FlagSet) {
	fs.Uint64Var(&c.seed, "seed", defaultSeed, "seed of every random draw; the same seed gives the same output")
	fs.IntVar(&c.workers, "workers", runtime.NumCPU(), "number of parallel workers")
	fs.BoolVar(&c.json, "json", false, "write machine-readable JSON to stdout")
	fs.BoolVar(&c.quiet, "quiet", false, "no progress or warnings on stderr")
}

// loadStar reads the --star file, or returns nil when none was given.
func (c *common) loadStar() (*activity.Star, error) {
	if c.star == "" {
		return nil, nil
	}
	return activity.ReadStar(c.star)
}

// workersOK checks --workers.
func (c *common) workersOK() error {
	if c.workers < 1 {
		return fmt.Errorf("--workers must be at least 1, got %d", c.workers)
	}
	return nil
}

// periodRangeOK checks --pmin and --pmax: each 0 (the default) or a
// positive finite number of days, and pmin below pmax when both are given.
func periodRangeOK(pmin, pmax float64) error {
	for _, f := range []struct {
		name string
		v    float64
		what string
	}{{"--pmin", pmin, "shortest"}, {"--pmax", pmax, "longest"}} {
		if math.IsNaN(f.v) || math.IsInf(f.v, 0) || f.v < 0 {
			return fmt.Errorf("%s %g: the %s period searched must be a positive number of days (leave it out for the default)", f.name, f.v, f.what)
		}
	}
	if pmin > 0 && pmax > 0 && pmin >= pmax {
		return fmt.Errorf("--pmin %g is not shorter than --pmax %g: give the shortest period first", pmin, pmax)
	}
	return nil
}

// countOK checks a flag that counts something: 0 means the default,
// negative numbers are refused.
func countOK(name string, n int, def string) error {
	if n < 0 {
		return fmt.Errorf("%s %d: give 1 or more (leave it out for the default, %s)", name, n, def)
	}
	return nil
}
