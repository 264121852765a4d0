package main

import (
	"flag"
	"fmt"
	"math"
	"runtime"

	"spotsift/activity"
	"spotsift/rvfit"
)

// defaultSeed is the seed used when --seed is not given; it is recorded in
// every output, so a run can be repeated exactly.
const defaultSeed = 1

// common holds the flags shared by several subcommands.
type common struct {
	data    string
	columns string
	rvUnit  string
	star    string
	seed    uint64
	workers int
	json    bool
	quiet   bool
}

// addData registers --data, --columns and --rv-unit.
func (c *common) addData(fs *flag.FlagSet) {
	fs.StringVar(&c.data, "data", "", "per-epoch `table`: CSV/TSV (header row, # comments) or FITS binary table")
	fs.StringVar(&c.columns, "columns", "", "map the table's own column names onto ours, e.g. `rv=vrad,time=bjd`")
	fs.StringVar(&c.rvUnit, "rv-unit", "", "unit of the table's velocities, m/s or km/s (default: from a '# units:' comment, else m/s)")
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

// loadData reads and validates the --data table, printing the reader's
// warnings (unless --quiet). minEpochs is the fewest epochs the command can
// work with.
func (c *common) loadData(e *env, cmd string, minEpochs int) (*rvfit.Series, error) {
	if c.data == "" {
		return nil, fmt.Errorf("%s: --data is required", cmd)
	}
	cols, err := rvfit.ParseColumnMap(c.columns)
	if err != nil {
		return nil, fmt.Errorf("--columns: %w", err)
	}
	s, warns, err := rvfit.ReadTable(c.data, &rvfit.ReadOptions{Columns: cols, RVUnit: c.rvUnit})
	if err != nil {
		return nil, err
	}
	for _, w := range warns {
		warnf(e, c.quiet, "%s", w)
	}
	if err := s.Require(minEpochs, cmd); err != nil {
		return nil, err
	}
	return s, nil
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
