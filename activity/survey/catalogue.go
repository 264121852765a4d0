package survey

import (
	"database/sql"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"

	// The pure-Go SQLite driver (no cgo), registered as "sqlite".
	_ "modernc.org/sqlite"

	"spotsift/activity"
)

// SchemaVersion is stored in the catalogue as PRAGMA user_version; it
// changes whenever Schema does.
const SchemaVersion = 2

// Schema is the SQL schema of the catalogue (SQLite). Numbers that are not
// known (NaN) are NULL. Stars, signals and evidence items are numbered in
// name order, so that the same sample gives the same rows however it was
// run (one run, shards and a merge).
const Schema = `
CREATE TABLE runs (
  run_id      TEXT PRIMARY KEY,  -- start time (UTC) and shard
  started     TEXT NOT NULL,     -- RFC 3339, UTC
  finished    TEXT NOT NULL,
  version     TEXT NOT NULL,     -- program version
  seed        TEXT NOT NULL,     -- survey seed (decimal; it may exceed 2^63)
  shard       TEXT,              -- "K/N", NULL for a whole run
  workers     INTEGER NOT NULL,
  skip_models INTEGER NOT NULL,  -- 1 when the GP fits were left out
  command     TEXT,
  status      TEXT NOT NULL,     -- complete, partial, interrupted
  n_stars     INTEGER NOT NULL,
  n_analysed  INTEGER NOT NULL,
  n_unchanged INTEGER NOT NULL,
  n_failed    INTEGER NOT NULL,
  n_not_run   INTEGER NOT NULL
);
CREATE TABLE stars (
  star_id         INTEGER PRIMARY KEY,  -- 1, 2, ... in name order
  name            TEXT NOT NULL UNIQUE,
  folder          TEXT NOT NULL,        -- stars/<folder>/ holds the report
  data            TEXT,                 -- the data as the manifest names it
  status          TEXT NOT NULL,        -- done, failed, pending
  error           TEXT,                 -- why it failed
  input_hash      TEXT,                 -- SHA-256 of inputs and settings
  seed            TEXT,                 -- the star's seed (decimal)
  run_id          TEXT,                 -- the run that analysed it
  seconds         REAL,                 -- wall time of its analysis and report
  n_epochs        INTEGER,
  n_instruments   INTEGER,
  baseline        REAL,                 -- days
  rv_rms          REAL,                 -- m/s, about each instrument's mean
  median_rv_err   REAL,                 -- m/s
  mean_s_index    REAL,
  mean_log_rhk    REAL,
  teff            REAL,                 -- K, from the star's parameters
  b_v             REAL,                 -- mag
  known_rotation  REAL,                 -- days, from the star's parameters
  rotation_period REAL,                 -- days, as adopted by the diagnosis
  rotation_err    REAL,
  rotation_source TEXT,
  n_signals       INTEGER,
  report          TEXT                  -- path of the verdict, from the survey folder
);
CREATE TABLE signals (
  signal_id     INTEGER PRIMARY KEY,
  star_id       INTEGER NOT NULL REFERENCES stars(star_id),
  idx           INTEGER NOT NULL,       -- 1, 2, ... within the star
  period        REAL,                   -- days
  freq          REAL,                   -- cycles per day
  source        TEXT,                   -- given or periodogram
  power         REAL,                   -- GLS power
  fap           REAL,                   -- false-alarm probability
  amplitude     REAL,                   -- m/s, the adopted K (activity.Signal.K)
  amplitude_err REAL,                   -- m/s
  p_over_prot   REAL,                   -- period / adopted rotation period
  verdict       TEXT NOT NULL,          -- planet-like, activity-like, inconclusive
  score         REAL,                   -- in [-1, 1], positive toward activity
  coverage      REAL,                   -- fraction of the test weight that ran
  summary       TEXT,
  probability   REAL,                   -- calibrated P(planetary), from the score and the caveat's kind
  fap_correlated REAL,                  -- false-alarm probability with the red-noise factor
  caveat        TEXT,                   -- why it cannot be planet-like, if it cannot
  caveat_kind   TEXT,                   -- relative, period_alias, rotation, cycle, baseline, significance
  related_to    TEXT                    -- the stronger signal it is an alias or harmonic of
);
CREATE TABLE evidence (
  evidence_id INTEGER PRIMARY KEY,
  signal_id   INTEGER NOT NULL REFERENCES signals(signal_id),
  name        TEXT NOT NULL,            -- e.g. rotation_match, indicator_power:fwhm
  value       REAL,
  threshold   REAL,
  points      TEXT NOT NULL,            -- planet, activity, neither
  weight      REAL NOT NULL,            -- signed contribution to the score
  reason      TEXT
);
CREATE TABLE skipped (
  signal_id INTEGER NOT NULL REFERENCES signals(signal_id),
  name      TEXT NOT NULL,              -- the test that could not run
  why       TEXT
);
CREATE INDEX signals_star ON signals(star_id);
CREATE INDEX signals_verdict ON signals(verdict);
CREATE INDEX evidence_signal ON evidence(signal_id);
CREATE INDEX evidence_name ON evidence(name);
`

// num returns nil (SQL NULL) for NaN or infinite numbers.
func num(x float64) any {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	return x
}

func nullText(s string) any {
	if s == "" {
		return nil
	}
	return s
}

// writeCatalogue writes the catalogue of recs and runs to path, through a
// temporary file renamed at the end.
func writeCatalogue(path string, recs []record, runs []RunRecord) (err error) {
	f, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp*")
	if err != nil {
		return err
	}
	tmp := f.Name()
	if err := f.Close(); err != nil {
		os.Remove(tmp)
		return err
	}
	defer func() {
		if err != nil {
			os.Remove(tmp)
		}
	}()
	db, err := sql.Open("sqlite", tmp)
	if err != nil {
		return err
	}
	defer func() {
		if cerr := db.Close(); err == nil && cerr != nil {
			err = cerr
		}
		if err == nil {
			err = os.Chmod(tmp, 0o644)
		}
		if err == nil {
			err = os.Rename(tmp, path)
		}
	}()
	if _, err = db.Exec(Schema + fmt.Sprintf("PRAGMA user_version = %d;", SchemaVersion)); err != nil {
		return fmt.Errorf("survey: catalogue schema: %w", err)
	}
	tx, err := db.Begin()
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			tx.Rollback()
		}
	}()
	for _, r := range runs {
		_, err = tx.Exec(`INSERT INTO runs VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)`,
			r.ID, r.Started, r.Finished, r.Version, strconv.FormatUint(r.Seed, 10), nullText(r.Shard), r.Workers,
			r.SkipModels, nullText(r.Command), r.Status, r.Stars, r.Analysed, r.Unchanged, r.Failed, r.NotRun)
		if err != nil {
			return fmt.Errorf("survey: catalogue run %s: %w", r.ID, err)
		}
	}
	insStar, err := tx.Prepare(`INSERT INTO stars VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)`)
	if err != nil {
		return err
	}
	insSig, err := tx.Prepare(`INSERT INTO signals VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)`)
	if err != nil {
		return err
	}
	insEv, err := tx.Prepare(`INSERT INTO evidence VALUES (?,?,?,?,?,?,?,?)`)
	if err != nil {
		return err
	}
	insSk, err := tx.Prepare(`INSERT INTO skipped VALUES (?,?,?)`)
	if err != nil {
		return err
	}
	sigID, evID := 0, 0
	for i, r := range recs {
		starID := i + 1
		st := r.State
		if st == nil {
			st = &state{RVRMS: activity.Num(math.NaN()), MedianRVErr: activity.Num(math.NaN()), MeanSIndex: activity.Num(math.NaN()), MeanLogRHK: activity.Num(math.NaN())}
		}
		rotP, rotE, rotSrc := math.NaN(), math.NaN(), ""
		var nsig any
		report := ""
		if r.Diag != nil {
			rotP, rotE, rotSrc = float64(r.Diag.Rotation.Period), float64(r.Diag.Rotation.Err), r.Diag.Rotation.Source
			nsig = len(r.Diag.Signals)
			report = filepath.ToSlash(filepath.Join(StarsDir, r.Folder, activity.VerdictFile))
		}
		var seed, seconds, nep, ninst, base any
		if r.State != nil {
			seed, seconds = strconv.FormatUint(st.Seed, 10), st.Seconds
			if r.Diag != nil {
				nep, ninst, base = st.NEpochs, st.NInstruments, st.Baseline
			}
		}
		_, err = insStar.Exec(starID, r.Name, r.Folder, nullText(st.Data), r.Status, nullText(st.Error), nullText(st.Hash), seed,
			nullText(st.Run), seconds, nep, ninst, base, num(float64(st.RVRMS)), num(float64(st.MedianRVErr)),
			num(float64(st.MeanSIndex)), num(float64(st.MeanLogRHK)), zeroNull(st.Teff), zeroNull(st.BV), zeroNull(st.KnownRotation),
			num(rotP), num(rotE), nullText(rotSrc), nsig, nullText(report))
		if err != nil {
			return fmt.Errorf("survey: catalogue star %q: %w", r.Name, err)
		}
		if r.Diag == nil {
			continue
		}
		for k, s := range r.Diag.Signals {
			sigID++
			_, err = insSig.Exec(sigID, starID, k+1, num(float64(s.Period)), num(float64(s.Freq)), s.Source, num(float64(s.Power)),
				num(float64(s.FAP)), num(float64(s.K)), num(float64(s.KErr)), num(float64(s.Period)/rotP),
				s.Verdict, num(s.Score), num(s.Coverage), nullText(s.Summary),
				num(float64(s.Probability)), num(float64(s.FAPCorrelated)), nullText(s.Caveat), nullText(s.CaveatKind), nullText(s.RelatedTo))
			if err != nil {
				return fmt.Errorf("survey: catalogue star %q signal %d: %w", r.Name, k+1, err)
			}
			for _, ev := range s.Evidence {
				evID++
				_, err = insEv.Exec(evID, sigID, ev.Name, num(float64(ev.Value)), num(float64(ev.Threshold)), ev.Points, ev.Weight, nullText(ev.Reason))
				if err != nil {
					return fmt.Errorf("survey: catalogue star %q evidence %s: %w", r.Name, ev.Name, err)
				}
			}
			for _, sk := range s.Skipped {
				if _, err = insSk.Exec(sigID, sk.Name, nullText(sk.Why)); err != nil {
					return fmt.Errorf("survey: catalogue star %q skipped %s: %w", r.Name, sk.Name, err)
				}
			}
		}
	}
	return tx.Commit()
}

func zeroNull(x float64) any {
	if x == 0 {
		return nil
	}
	return num(x)
}
