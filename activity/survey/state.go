package survey

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"

	"spotsift/activity"
	"spotsift/rvfit"
)

// state is a star's survey record, kept in its folder as StateFile: what
// the verdict was computed from and a few sample-wide numbers that the
// index and catalogue need without rereading the data.
type state struct {
	Name    string  `json:"name"`
	Folder  string  `json:"folder"`
	Data    string  `json:"data"`
	Status  string  `json:"status"`
	Error   string  `json:"error,omitempty"`
	Hash    string  `json:"input_hash"`
	Seed    uint64  `json:"seed"`
	Run     string  `json:"run"`
	Version string  `json:"version"`
	Seconds float64 `json:"seconds"`
	Signals int     `json:"signals"`
	// SurveySeed and Settings are the survey's seed and analysis settings
	// (Options.settings); a merge refuses shards where they differ.
	SurveySeed uint64 `json:"survey_seed"`
	Settings   string `json:"settings,omitempty"`
	// Outputs is the hash of the folder's other files (hashOutputs), taken
	// when the state was written.
	Outputs string `json:"outputs_hash,omitempty"`
	// Star parameters used (zero: not known).
	Teff          float64      `json:"teff,omitempty"`
	BV            float64      `json:"b_v,omitempty"`
	KnownRotation float64      `json:"known_rotation,omitempty"`
	NEpochs       int          `json:"n_epochs,omitempty"`
	NInstruments  int          `json:"n_instruments,omitempty"`
	Baseline      float64      `json:"baseline,omitempty"`
	RVRMS         activity.Num `json:"rv_rms"`
	MedianRVErr   activity.Num `json:"median_rv_err"`
	MeanSIndex    activity.Num `json:"mean_s_index"`
	MeanLogRHK    activity.Num `json:"mean_log_rhk"`
	Notes         []string     `json:"notes,omitempty"`
}

// fill records the sample-wide numbers of a finished star.
func (st *state) fill(dg *activity.Diagnosis, s *rvfit.Series, star *activity.Star) {
	st.Signals = len(dg.Signals)
	if star != nil {
		st.Teff, st.BV, st.KnownRotation = star.Teff, star.BV, star.RotationPeriod
	}
	st.NEpochs = s.Len()
	st.NInstruments = len(s.Instruments())
	st.Baseline = s.Baseline()
	st.RVRMS = activity.Num(rvRMS(s))
	errs := append([]float64(nil), s.RVErr...)
	sort.Float64s(errs)
	st.MedianRVErr = activity.Num(median(errs))
	st.MeanSIndex = activity.Num(meanOf(s.Indicator("s_index")))
	st.MeanLogRHK = activity.Num(meanOf(s.Indicator("log_rhk")))
}

// rvRMS is the root-mean-square scatter of the RVs about each
// instrument's mean, in m/s:
//
//	rms = sqrt( Σ (v_i − mean_{inst(i)})² / N )
func rvRMS(s *rvfit.Series) float64 {
	sum := map[string]float64{}
	cnt := map[string]float64{}
	for i, v := range s.RV {
		sum[s.Instrument[i]] += v
		cnt[s.Instrument[i]]++
	}
	var ss float64
	for i, v := range s.RV {
		d := v - sum[s.Instrument[i]]/cnt[s.Instrument[i]]
		ss += d * d
	}
	if len(s.RV) == 0 {
		return math.NaN()
	}
	return math.Sqrt(ss / float64(len(s.RV)))
}

func median(sorted []float64) float64 {
	n := len(sorted)
	if n == 0 {
		return math.NaN()
	}
	if n%2 == 1 {
		return sorted[n/2]
	}
	return (sorted[n/2-1] + sorted[n/2]) / 2
}

// meanOf is the mean of the finite values of an indicator, NaN if none.
func meanOf(ind *rvfit.Indicator) float64 {
	if ind == nil {
		return math.NaN()
	}
	var s float64
	n := 0
	for _, v := range ind.Value {
		if !math.IsNaN(v) && !math.IsInf(v, 0) {
			s += v
			n++
		}
	}
	if n == 0 {
		return math.NaN()
	}
	return s / float64(n)
}

func readState(dir string) (*state, error) {
	b, err := os.ReadFile(filepath.Join(dir, StateFile))
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil, errStateMissing
		}
		return nil, err
	}
	var st state
	if err := json.Unmarshal(b, &st); err != nil {
		return nil, fmt.Errorf("survey: %s: %w", filepath.Join(dir, StateFile), err)
	}
	return &st, nil
}

// seal records the hash of dir's outputs in st and writes st into dir,
// last.
func (st *state) seal(dir string) error {
	h, err := hashOutputs(dir)
	if err != nil {
		return err
	}
	st.Outputs = h
	return writeState(dir, st)
}

// intact reports whether the finished star's folder holds what its state
// file says was written: a readable verdict and the same outputs hash.
func (st *state) intact(dir string) bool {
	if _, err := readVerdict(dir); err != nil {
		return false
	}
	h, err := hashOutputs(dir)
	return err == nil && st.Outputs != "" && h == st.Outputs
}

func writeState(dir string, st *state) error {
	return writeJSON(filepath.Join(dir, StateFile), st)
}

func writeJSON(path string, v any) error {
	return rvfit.WriteFileAtomic(path, func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(v)
	})
}

func readRuns(outDir string) ([]RunRecord, error) {
	b, err := os.ReadFile(filepath.Join(outDir, RunsFile))
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil
	}
	if err != nil {
		return nil, err
	}
	var runs []RunRecord
	if err := json.Unmarshal(b, &runs); err != nil {
		return nil, fmt.Errorf("survey: %s: %w", filepath.Join(outDir, RunsFile), err)
	}
	return runs, nil
}

func writeRuns(outDir string, runs []RunRecord) error {
	sort.SliceStable(runs, func(i, j int) bool { return runs[i].ID < runs[j].ID })
	return writeJSON(filepath.Join(outDir, RunsFile), runs)
}

// hashVersion changes when the meaning of the input hash changes.
const hashVersion = "spotsift survey input hash v1"

// InputHash returns the hex SHA-256 of everything a star's verdict depends
// on: the bytes of its data (the table file; for a folder of spectra every
// spectrum's name and bytes; for data in memory its CSV encoding), the
// bytes of its star file, its inline parameters, periods, column map and
// RV unit, the star's seed, the diagnosis settings and the program
// version. It also returns the hashes of the input files, for the
// verdict's provenance. An unreadable input is an error.
func InputHash(m *Manifest, e *Entry, o *Options) (string, []activity.InputHash, error) {
	h := sha256.New()
	line := func(k string, v any) { fmt.Fprintf(h, "%s\t%v\n", k, v) }
	line("format", hashVersion)
	line("version", o.Version)
	line("name", e.Name)
	line("seed", StarSeed(o.Seed, e.Name))
	line("skip_models", o.SkipModels)
	var do activity.Options
	if o.Diagnose != nil {
		do = *o.Diagnose
	}
	line("diagnose", fmt.Sprintf("fap=%v max=%d pmin=%v pmax=%v over=%v perm=%d", do.FAPThreshold, do.MaxSignals, do.PMin, do.PMax, do.Oversampling, do.Permutations))
	for _, p := range e.Periods {
		line("period", strconv.FormatFloat(p, 'g', -1, 64))
	}
	keys := make([]string, 0, len(e.Columns))
	for k := range e.Columns {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		line("column", k+"="+e.Columns[k])
	}
	line("rv_unit", e.RVUnit)
	if k := e.Read.key(); k != "" {
		line("read", k)
	}
	if e.Star != nil {
		b, _ := json.Marshal(e.Star)
		line("inline", string(b))
	}
	var inputs []activity.InputHash
	if e.StarFile != "" {
		p := m.path(e.StarFile)
		if err := regularFile(p, "star file"); err != nil {
			return "", nil, err
		}
		sum, err := activity.HashFile(p)
		if err != nil {
			return "", nil, fmt.Errorf("star file: %w", err)
		}
		line("star_file", sum)
		inputs = append(inputs, activity.InputHash{Path: e.StarFile, SHA256: sum})
	}
	if e.Photometry != "" {
		sum, err := activity.HashFile(m.path(e.Photometry))
		if err != nil {
			return "", nil, fmt.Errorf("photometry: %w", err)
		}
		line("photometry", sum)
		inputs = append(inputs, activity.InputHash{Path: e.Photometry, SHA256: sum})
	}
	switch {
	case e.Series != nil:
		var buf bytes.Buffer
		if err := rvfit.WriteCSV(&buf, e.Series, &rvfit.WriteOptions{Creator: "survey"}); err != nil {
			return "", nil, fmt.Errorf("data: %w", err)
		}
		sum := sha256.Sum256(buf.Bytes())
		line("series", hex.EncodeToString(sum[:]))
	default:
		p := m.path(e.Data)
		fi, err := os.Stat(p)
		if err != nil {
			return "", nil, fmt.Errorf("data: %w", err)
		}
		if fi.IsDir() {
			files, err := spectrumFiles(p)
			if err != nil {
				return "", nil, err
			}
			fh := sha256.New()
			for _, f := range files {
				sum, err := activity.HashFile(f)
				if err != nil {
					return "", nil, fmt.Errorf("data: %w", err)
				}
				fmt.Fprintf(fh, "%s\t%s\n", filepath.Base(f), sum)
			}
			sum := hex.EncodeToString(fh.Sum(nil))
			line("spectra", sum)
			inputs = append(inputs, activity.InputHash{Path: e.Data, SHA256: sum})
		} else {
			if err := regularFile(p, "data"); err != nil {
				return "", nil, err
			}
			sum, err := hashData(p)
			if err != nil {
				return "", nil, fmt.Errorf("data: %w", err)
			}
			line("data", sum)
			inputs = append(inputs, activity.InputHash{Path: e.Data, SHA256: sum})
		}
	}
	return hex.EncodeToString(h.Sum(nil)), inputs, nil
}

// record is one star as the outputs show it.
type record struct {
	Name, Folder string
	// Status is StatusDone, StatusFailed or "pending" (not analysed with
	// its current inputs).
	Status string
	State  *state
	Diag   *activity.Diagnosis
}

// statusPending marks a star without a result for its current inputs.
const statusPending = "pending"

// collect gathers the records of a run's stars from their folders.
func collect(outDir string, results []StarResult) ([]record, error) {
	var recs []record
	for _, r := range results {
		rec := record{Name: r.Name, Folder: r.Folder, Status: statusPending}
		dir := filepath.Join(outDir, StarsDir, r.Folder)
		switch r.Status {
		case StatusDone, StatusUnchanged, StatusFailed:
			st, err := readState(dir)
			if err != nil {
				if r.Status != StatusFailed {
					return nil, err
				}
				st = &state{Name: r.Name, Folder: r.Folder, Status: StatusFailed, Error: r.Error, Hash: r.Hash}
			}
			rec.State = st
			rec.Status = st.Status
			if st.Status == StatusDone {
				dg, err := readVerdict(dir)
				if err != nil {
					// The folder was damaged after the star finished:
					// show it as failed; the next run redoes it.
					bad := *st
					bad.Status, bad.Error = StatusFailed, oneLine("the verdict cannot be read: "+err.Error())
					rec.State, rec.Status = &bad, StatusFailed
					break
				}
				rec.Diag = dg
			}
		}
		recs = append(recs, rec)
	}
	sort.Slice(recs, func(i, j int) bool { return recs[i].Name < recs[j].Name })
	return recs, nil
}

func readVerdict(dir string) (*activity.Diagnosis, error) {
	b, err := os.ReadFile(filepath.Join(dir, activity.VerdictFile))
	if err != nil {
		return nil, err
	}
	var dg activity.Diagnosis
	if err := json.Unmarshal(b, &dg); err != nil {
		return nil, fmt.Errorf("survey: %s: %w", filepath.Join(dir, activity.VerdictFile), err)
	}
	return &dg, nil
}
