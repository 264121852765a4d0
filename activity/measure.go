package activity

import (
	"bufio"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"sync"

	"spotsift/indicators"
	"spotsift/rvfit"

	"spotsift/internal/worker"
)

// MeasureOptions set how Measure turns spectra into a per-epoch series. A
// nil *MeasureOptions means the zero value, whose fields are documented
// below.
type MeasureOptions struct {
	// Read sets how files are read (air/vacuum, epoch and BERV keywords);
	// nil means the indicators.ReadOptions defaults.
	Read *indicators.ReadOptions
	// Mask is the line mask. nil builds one from the spectra themselves
	// (indicators.BuildMask with MaskOptions, on the first MaskSpectra
	// files that can be read).
	Mask *indicators.Mask
	// MaskOptions set the mask builder; nil means its defaults.
	MaskOptions *indicators.MaskOptions
	// MaskSpectra is how many spectra are co-added to build a mask; zero
	// means 20.
	MaskSpectra int
	// Indicators sets the measurement of each spectrum; nil means the
	// indicators.Options defaults. Its SCalibration and RHK, when nil, are
	// taken from Star.
	Indicators *indicators.Options
	// Star, when not nil, supplies B−V (for log R'HK) and the S-index
	// calibration.
	Star *Star
	// Instrument labels every epoch; "" uses each file's INSTRUME keyword,
	// or rvfit.DefaultInstrument.
	Instrument string
	// Workers bounds the number of spectra measured at once; zero means
	// runtime.GOMAXPROCS(0).
	Workers int
	// Progress, when not nil, is called after each spectrum with the
	// number done and the total (from the worker goroutines, one call at a
	// time, in completion order).
	Progress func(done, total int)
	// Results, when not nil, receives the full indicators.Result of every
	// spectrum kept in the series, in the series' (time) order.
	Results *[]*indicators.Result
	// Side, when not nil, overrides the epoch and barycentric correction of
	// the spectra it lists (see ReadSideTable); spectra it does not list
	// keep the values from their headers.
	Side map[string]SideEntry
	// Report, when not nil, receives what Measure noticed besides the
	// failures: the mask used, files skipped as not spectra, warnings on
	// kept spectra and the barycentric conventions met.
	Report *MeasureReport
}

// MeasureReport is what Measure noticed besides the failures.
type MeasureReport struct {
	// Mask is the mask used; for a mask built from the spectra, Mask.Build
	// names the spectra used and left out and gives the systemic velocity,
	// and Mask.Relative says when no rest frame was found.
	Mask *indicators.Mask
	// Skipped names the files that are not spectra (masks, notes), with
	// what they look like; they are not failures.
	Skipped []MeasureFailure
	// Warnings names spectra kept whole but with something to check, such
	// as an index band that does not sit on its line.
	Warnings []MeasureFailure
	// Conventions describes, once each, how the barycentric corrections
	// of the spectra were composed (indicators.BaryConvention.Describe).
	Conventions []string
}

// SideEntry is one row of a side table: what a file's header lacks or gets
// wrong. Zero values leave the header's value in place.
type SideEntry struct {
	// BJD is the mid-exposure epoch, BJD_TDB in days.
	BJD float64
	// BERV is the barycentric correction in m/s, to be added to measured
	// velocities: the radial component of the observer's barycentric
	// velocity (indicators.BaryVelocity, transverse term included).
	BERV float64
}

// ErrSideTable is wrapped by every error in a side table.
var ErrSideTable = errors.New("activity: bad side table")

// ReadSideTable reads a side table of epochs and barycentric corrections:
// text with a header line naming the columns "file" and at least one of
// "bjd" (BJD_TDB, days) and "berv" (m/s), separated by commas or blanks;
// '#' starts a comment line. Files are matched by their base name. Errors
// name the table and the line.
func ReadSideTable(r io.Reader, name string) (map[string]SideEntry, error) {
	sc := bufio.NewScanner(r)
	out := map[string]SideEntry{}
	col := map[string]int{}
	nHeader := 0
	line := 0
	bad := func(msg string, a ...any) error {
		return fmt.Errorf("%s:%d: %w: %s", name, line, ErrSideTable, fmt.Sprintf(msg, a...))
	}
	split := func(t string) []string {
		return strings.FieldsFunc(t, func(r rune) bool { return r == ',' || r == ' ' || r == '\t' || r == ';' })
	}
	for sc.Scan() {
		line++
		t := strings.TrimSpace(sc.Text())
		if t == "" || t[0] == '#' {
			continue
		}
		f := split(t)
		if len(col) == 0 {
			for i, c := range f {
				c = strings.ToLower(c)
				if _, dup := col[c]; dup {
					return nil, bad("header names the column %q twice; name each column once", c)
				}
				col[c] = i
			}
			nHeader = len(f)
			_, hasB := col["bjd"]
			_, hasV := col["berv"]
			if _, ok := col["file"]; !ok || !(hasB || hasV) {
				return nil, bad("header must name a file column and a bjd or berv column")
			}
			continue
		}
		if len(f) != nHeader {
			return nil, bad("%d fields, header has %d", len(f), nHeader)
		}
		var e SideEntry
		for key, dst := range map[string]*float64{"bjd": &e.BJD, "berv": &e.BERV} {
			i, ok := col[key]
			if !ok {
				continue
			}
			v, err := strconv.ParseFloat(f[i], 64)
			if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, bad("%s %q is not a number", key, f[i])
			}
			*dst = v
		}
		file := filepath.Base(f[col["file"]])
		if _, dup := out[file]; dup {
			return nil, bad("file %q listed twice", file)
		}
		out[file] = e
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	return out, nil
}

// MeasureFailure names a spectrum that was left out of the series, or, when
// Partial is set, one that is in the series with some indicators missing.
type MeasureFailure struct {
	// Path is the file.
	Path string
	// Partial reports whether the spectrum is in the series with only the
	// quantities named in Err missing.
	Partial bool
	// Err says what went wrong.
	Err error
}

// Error sentinels of Measure.
var (
	ErrNoSpectra = errors.New("activity: no spectra measured")
	ErrNoEpoch   = errors.New("activity: spectrum has no epoch")
)

// Indicator columns written by Measure, in order, with their units.
var measureColumns = []struct{ name, unit string }{
	{"fwhm", "m/s"}, {"contrast", ""}, {"bis", "m/s"}, {"delta_v", "m/s"}, {"vspan", "m/s"},
	{"s_index", ""}, {"log_rhk", "dex"}, {"halpha", ""}, {"naid", ""},
	{"chromatic_slope", "m/s"},
}

// Measure reads and measures the spectra in paths on a bounded pool of
// workers and assembles a per-epoch series: time (BJD_TDB from each
// spectrum), the barycentric RV and its photon-noise error, and the
// indicator columns fwhm, contrast, bis, delta_v (bi-Gaussian ΔV), vspan,
// s_index, log_rhk, halpha, naid and chromatic_slope, each with its error.
//
// A spectrum that cannot be read, has no epoch, or yields no RV is left
// out and named in the failures; one whose other quantities fail is kept
// with NaN there and named with Partial set. The series is sorted by time;
// results do not depend on the number of workers. Measure returns an error
// only when no spectrum could be measured (wrapping ErrNoSpectra) or no
// mask could be built, or with ctx's error when ctx is cancelled (no new
// spectrum is started after that).
func Measure(ctx context.Context, paths []string, opts *MeasureOptions) (*rvfit.Series, []MeasureFailure, error) {
	if opts == nil {
		opts = &MeasureOptions{}
	}
	if len(paths) == 0 {
		return nil, nil, fmt.Errorf("%w: no files given", ErrNoSpectra)
	}
	var failures []MeasureFailure
	rep := opts.Report
	if rep == nil {
		rep = &MeasureReport{}
	}
	mask := opts.Mask
	if mask == nil {
		m, unread, err := buildMask(paths, opts)
		if err != nil {
			// When no spectrum could be read, each file's reason is
			// the user's only lead: return them as failures.
			for _, f := range unread {
				if errors.Is(f.Err, indicators.ErrNotSpectrum) {
					rep.Skipped = append(rep.Skipped, f)
				} else {
					failures = append(failures, f)
				}
			}
			return nil, failures, err
		}
		mask = m
	}
	rep.Mask = mask
	iopts := measureIndicatorOptions(opts)

	workers := opts.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	if workers > 1 && len(paths) > 1 {
		// The pool already keeps the cores busy: measure each spectrum on
		// its own goroutine (same results, less work).
		var co indicators.CCFOptions
		if iopts.CCF != nil {
			co = *iopts.CCF
		}
		co.Serial = true
		iopts.CCF = &co
	}
	type item struct {
		res        *indicators.Result
		instrument string
		bary       indicators.BaryConvention
		err        error
	}
	items := make([]item, len(paths))
	jobs := make(chan int)
	var wg worker.Group
	var mu sync.Mutex
	done := 0
	for w := 0; w < min(workers, len(paths)); w++ {
		wg.Go(func() {
			for i := range jobs {
				items[i].err = guard(paths[i], func() error {
					s, err := readSpectrum(paths[i], opts)
					if err != nil {
						return err
					}
					items[i].instrument = instrumentOf(s, opts.Instrument)
					items[i].bary = s.Bary
					items[i].res, err = measureOne(s, mask, iopts)
					return err
				})
				if opts.Progress != nil {
					mu.Lock()
					done++
					opts.Progress(done, len(paths))
					mu.Unlock()
				}
			}
		})
	}
feed:
	for i := range paths {
		if ctx.Err() != nil {
			break
		}
		select {
		case <-ctx.Done():
			break feed
		case <-wg.Stopped():
			break feed
		case jobs <- i:
		}
	}
	close(jobs)
	// guard turns a spectrum's panic into its failure; this is any other
	// (in opts.Progress, say).
	if err := wg.Wait(); err != nil {
		return nil, nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, nil, err
	}

	var keep []int
	conv := map[indicators.BaryConvention]bool{}
	for i, it := range items {
		if errors.Is(it.err, indicators.ErrNotSpectrum) {
			rep.Skipped = append(rep.Skipped, MeasureFailure{Path: paths[i], Err: it.err})
			continue
		}
		if it.err != nil {
			failures = append(failures, MeasureFailure{Path: paths[i], Err: it.err})
			continue
		}
		keep = append(keep, i)
		if perr := partialError(it.res); perr != nil {
			failures = append(failures, MeasureFailure{Path: paths[i], Partial: true, Err: perr})
		}
		for _, w := range it.res.Warnings {
			rep.Warnings = append(rep.Warnings, MeasureFailure{Path: paths[i], Partial: true, Err: errors.New(w)})
		}
		if it.res.BERV != 0 || it.bary == indicators.BaryRedshift {
			if !conv[it.bary] {
				conv[it.bary] = true
				rep.Conventions = append(rep.Conventions, it.bary.Describe())
			}
		}
	}
	if len(keep) == 0 {
		if len(rep.Skipped) == len(paths) {
			return nil, failures, fmt.Errorf("%w: none of the %d files is a spectrum", ErrNoSpectra, len(paths))
		}
		return nil, failures, fmt.Errorf("%w: all %d spectra failed", ErrNoSpectra, len(paths)-len(rep.Skipped))
	}
	sort.SliceStable(keep, func(a, b int) bool {
		ta, tb := items[keep[a]].res.BJD, items[keep[b]].res.BJD
		if ta != tb {
			return ta < tb
		}
		return paths[keep[a]] < paths[keep[b]]
	})
	ser := &rvfit.Series{Name: "measured spectra"}
	cols := make([]rvfit.Indicator, len(measureColumns))
	for c, mc := range measureColumns {
		cols[c] = rvfit.Indicator{Name: mc.name, Unit: mc.unit}
	}
	for _, i := range keep {
		r := items[i].res
		ser.Time = append(ser.Time, r.BJD)
		ser.RV = append(ser.RV, r.RV.Value)
		ser.RVErr = append(ser.RVErr, r.RV.Sigma)
		ser.Instrument = append(ser.Instrument, items[i].instrument)
		for c, e := range []indicators.Estimate{r.FWHM, r.Contrast, r.BIS, r.DeltaV, r.Vspan, r.SIndex, r.LogRHK, r.HAlpha, r.NaD, r.Chromatic} {
			v, s := e.Value, e.Sigma
			if e.Err != nil {
				v, s = math.NaN(), math.NaN()
			}
			cols[c].Value = append(cols[c].Value, v)
			cols[c].Err = append(cols[c].Err, s)
		}
		if opts.Results != nil {
			*opts.Results = append(*opts.Results, r)
		}
	}
	for _, c := range cols {
		// Leave out columns no spectrum could measure (e.g. log R'HK
		// without B−V).
		if c.Count() > 0 {
			ser.Indicators = append(ser.Indicators, c)
		}
	}
	return ser, failures, nil
}

// SpectrumFiles expands a directory or a glob pattern into the spectrum
// files to measure, sorted: a directory gives its files ending in .fits,
// .fit, .fts, .txt, .dat or .csv (case-insensitive; not recursive), anything
// else is taken as a filepath.Glob pattern. No match is an error wrapping
// ErrNoSpectra.
func SpectrumFiles(dirOrGlob string) ([]string, error) {
	var out []string
	if fi, err := os.Stat(dirOrGlob); err == nil && fi.IsDir() {
		ents, err := os.ReadDir(dirOrGlob)
		if err != nil {
			return nil, err
		}
		for _, e := range ents {
			switch strings.ToLower(filepath.Ext(e.Name())) {
			case ".fits", ".fit", ".fts", ".txt", ".dat", ".csv":
				if !e.IsDir() {
					out = append(out, filepath.Join(dirOrGlob, e.Name()))
				}
			}
		}
	} else {
		m, err := filepath.Glob(dirOrGlob)
		if err != nil {
			return nil, fmt.Errorf("%q: %w", dirOrGlob, err)
		}
		out = m
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("%q: %w: no spectrum files", dirOrGlob, ErrNoSpectra)
	}
	sort.Strings(out)
	return out, nil
}

// BuildMask builds a line mask from the first opts.MaskSpectra (default 20)
// readable files of paths with indicators.BuildMask and opts.MaskOptions,
// as Measure does when opts.Mask is nil. Files that cannot be read are
// skipped here (Measure reports them); when none can be read, the error
// wraps ErrNoSpectra and quotes the first file's reason.
func BuildMask(paths []string, opts *MeasureOptions) (*indicators.Mask, error) {
	m, _, err := buildMask(paths, opts)
	return m, err
}

// buildMask is BuildMask, also returning the files it could not read
// (only when no spectrum could be read at all, the mask's error).
func buildMask(paths []string, opts *MeasureOptions) (*indicators.Mask, []MeasureFailure, error) {
	if opts == nil {
		opts = &MeasureOptions{}
	}
	n := opts.MaskSpectra
	if n == 0 {
		n = 20
	}
	var specs []*indicators.Spectrum
	var used []string
	var unread []MeasureFailure
	for _, p := range paths {
		if len(specs) == n {
			break
		}
		var s *indicators.Spectrum
		err := guard(p, func() (err error) {
			s, err = readSpectrum(p, opts)
			return err
		})
		if err != nil {
			unread = append(unread, MeasureFailure{Path: p, Err: err})
			continue
		}
		specs = append(specs, s)
		used = append(used, p)
	}
	if len(specs) == 0 {
		var first error
		for _, f := range unread {
			if !errors.Is(f.Err, indicators.ErrNotSpectrum) {
				first = f.Err
				break
			}
		}
		if first == nil {
			return nil, unread, fmt.Errorf("%w: none of the %d files is a spectrum", ErrNoSpectra, len(paths))
		}
		more := ""
		if len(unread) > 1 {
			more = fmt.Sprintf(" (and %d more files unreadable)", len(unread)-1)
		}
		return nil, unread, fmt.Errorf("%w: no spectrum could be read to build a mask; the first: %w%s", ErrNoSpectra, first, more)
	}
	var m *indicators.Mask
	err := guard("the mask", func() (err error) {
		m, err = indicators.BuildMask(specs, opts.MaskOptions)
		return err
	})
	if err != nil {
		return nil, nil, fmt.Errorf("building a mask from %d spectra (%s): %w", len(specs), nameSome(used), err)
	}
	return m, nil, nil
}

// nameSome names files for a message: up to three, then how many more.
func nameSome(paths []string) string {
	if len(paths) <= 3 {
		return strings.Join(paths, ", ")
	}
	return fmt.Sprintf("%s and %d more", strings.Join(paths[:3], ", "), len(paths)-3)
}

// ErrInternal is wrapped by the failure of a spectrum whose reading or
// measurement ran into a bug (a recovered panic, a *worker.PanicError of
// the internal package, whose stack is kept for debug output).
var ErrInternal = worker.ErrPanic

// guard runs f, turning a panic (in f or passed on by one of its worker
// goroutines) into an error wrapping ErrInternal that names what was being
// done; the panic's own text and stack (program details) are not in its
// message.
func guard(what string, f func() error) error {
	err := worker.Catch(f)
	if pe := (*worker.PanicError)(nil); errors.As(err, &pe) {
		return fmt.Errorf("%s: %w", what, pe)
	}
	return err
}

// readSpectrum reads one file and applies the side table.
func readSpectrum(path string, opts *MeasureOptions) (*indicators.Spectrum, error) {
	s, err := indicators.ReadFile(path, opts.Read)
	if err != nil {
		return nil, err
	}
	if e, ok := opts.Side[filepath.Base(path)]; ok {
		if e.BJD != 0 {
			s.BJD = e.BJD
		}
		if e.BERV != 0 {
			s.BERV = e.BERV
			s.Bary = indicators.BaryVelocity
		}
	}
	return s, nil
}

// measureIndicatorOptions merges the star's calibration into the options.
func measureIndicatorOptions(opts *MeasureOptions) *indicators.Options {
	var io indicators.Options
	if opts.Indicators != nil {
		io = *opts.Indicators
	}
	if opts.Star != nil {
		if io.SCalibration == nil && (opts.Star.SIndex.A != 0 || opts.Star.SIndex.B != 0) {
			io.SCalibration = &indicators.SIndexCalibration{A: opts.Star.SIndex.A, B: opts.Star.SIndex.B}
		}
		if io.RHK == nil && opts.Star.BV != 0 {
			io.RHK = &indicators.RHKOptions{BV: opts.Star.BV}
		}
	}
	return &io
}

// measureOne measures one spectrum and applies the rules for leaving it out.
func measureOne(s *indicators.Spectrum, m *indicators.Mask, o *indicators.Options) (*indicators.Result, error) {
	if s.BJD == 0 {
		return nil, fmt.Errorf("%s: %w (no BJD_TDB, MJD-OBS or DATE-OBS, or the named epoch keyword)", s.Name, ErrNoEpoch)
	}
	r, err := indicators.Measure(s, m, o)
	if err != nil {
		return nil, err
	}
	if r.RV.Err != nil {
		return nil, r.RV.Err
	}
	if !(r.RV.Sigma > 0) {
		return nil, fmt.Errorf("%s: RV error %v is not positive", s.Name, r.RV.Sigma)
	}
	return r, nil
}

// partialError joins the errors of the quantities a kept spectrum lacks;
// log R'HK without B−V is not counted (it is a choice, not a failure).
func partialError(r *indicators.Result) error {
	var msgs []string
	add := func(e indicators.Estimate) {
		if e.Err != nil {
			msgs = append(msgs, e.Err.Error())
		}
	}
	add(r.FWHM)
	add(r.Contrast)
	add(r.BIS)
	add(r.DeltaV)
	add(r.Vspan)
	add(r.Chromatic)
	// Indices left out for want of a rest frame are reported once, with
	// the mask.
	if !errors.Is(r.SIndex.Err, indicators.ErrNoZeroPoint) {
		add(r.SIndex)
		if r.SIndex.Err == nil && !errors.Is(r.LogRHK.Err, indicators.ErrNoColour) {
			add(r.LogRHK)
		}
		add(r.HAlpha)
		add(r.NaD)
	}
	if len(msgs) == 0 {
		return nil
	}
	return errors.New(strings.Join(msgs, "; "))
}

func instrumentOf(s *indicators.Spectrum, fixed string) string {
	if fixed != "" {
		return fixed
	}
	if v := strings.TrimSpace(s.Header["INSTRUME"]); v != "" {
		return v
	}
	return rvfit.DefaultInstrument
}
