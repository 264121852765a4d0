package survey

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"spotsift/activity"
)

// fastOpts are the settings of most tests: no GP fits, 2 workers.
func fastOpts() *Options {
	return &Options{Workers: 2, Seed: 7, SkipModels: true, Version: "test"}
}

func openCatalogue(t *testing.T, dir string) *sql.DB {
	t.Helper()
	db, err := sql.Open("sqlite", filepath.Join(dir, CatalogueFile))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	return db
}

// queryRows runs q and returns every row as text, one string per row.
func queryRows(t *testing.T, db *sql.DB, q string, args ...any) []string {
	t.Helper()
	rows, err := db.Query(q, args...)
	if err != nil {
		t.Fatalf("%s: %v", q, err)
	}
	defer rows.Close()
	cols, _ := rows.Columns()
	var out []string
	for rows.Next() {
		vals := make([]any, len(cols))
		ptrs := make([]any, len(cols))
		for i := range vals {
			ptrs[i] = &vals[i]
		}
		if err := rows.Scan(ptrs...); err != nil {
			t.Fatal(err)
		}
		parts := make([]string, len(vals))
		for i, v := range vals {
			parts[i] = fmt.Sprint(v)
		}
		out = append(out, strings.Join(parts, "|"))
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	return out
}

func TestRunSimulatedSample(t *testing.T) {
	stars := sample12(t)
	out := t.TempDir()
	var calls, last int
	o := fastOpts()
	o.Progress = func(done, total int) {
		calls++
		if done != last+1 || total != len(stars) {
			t.Errorf("progress(%d, %d) after %d", done, total, last)
		}
		last = done
	}
	sum, err := Run(context.Background(), manifestOf(stars), out, o)
	if err != nil {
		t.Fatal(err)
	}
	if calls != len(stars) || sum.Run.Analysed != len(stars) || sum.Run.Status != RunComplete {
		t.Fatalf("progress calls %d, run %+v", calls, sum.Run)
	}
	db := openCatalogue(t, out)
	nsig := 0
	for _, s := range stars {
		dg, err := readVerdict(filepath.Join(out, StarsDir, Folder(s.name)))
		if err != nil {
			t.Fatalf("%s: no verdict: %v", s.name, err)
		}
		nsig += len(dg.Signals)
		// One catalogue row per signal, with the verdict of the report.
		got := queryRows(t, db, `SELECT g.verdict FROM signals g JOIN stars s USING(star_id) WHERE s.name = ? ORDER BY g.idx`, s.name)
		if len(got) != len(dg.Signals) {
			t.Errorf("%s: %d catalogue rows, %d signals", s.name, len(got), len(dg.Signals))
			continue
		}
		for k, sg := range dg.Signals {
			if got[k] != sg.Verdict {
				t.Errorf("%s signal %d: catalogue %s, report %s", s.name, k+1, got[k], sg.Verdict)
			}
		}
		// The clear cases (truth from the simulation): a quiet star's
		// planet is planet-like; an active star's strongest signal, at the
		// rotation period or a harmonic, is activity-like.
		if s.active {
			if len(dg.Signals) == 0 || dg.Signals[0].Verdict != activity.ActivityLike {
				t.Errorf("%s (active, Prot %g d): strongest signal %+v, want activity-like", s.name, s.rotation, first(dg))
			}
		} else {
			k := nearest(dg, s.planets[0])
			if k < 0 {
				t.Errorf("%s: planet at %g d not found", s.name, s.planets[0])
			} else if dg.Signals[k].Verdict != activity.PlanetLike {
				t.Errorf("%s: planet at %g d judged %s (%s)", s.name, s.planets[0], dg.Signals[k].Verdict, dg.Signals[k].Summary)
			}
		}
	}
	var n int
	db.QueryRow(`SELECT count(*) FROM signals`).Scan(&n)
	if n != nsig {
		t.Errorf("catalogue has %d signals, reports %d", n, nsig)
	}
	// The activity-like signals found by SQL: every active star has one at
	// its rotation period or a harmonic; none is a quiet star's planet.
	found := map[string]bool{}
	for _, row := range queryRows(t, db, `
		SELECT s.name, g.period FROM signals g JOIN stars s USING(star_id)
		WHERE g.verdict = 'activity-like' ORDER BY s.name, g.period`) {
		var name string
		var p float64
		fmt.Sscanf(strings.ReplaceAll(row, "|", " "), "%s %g", &name, &p)
		found[name] = true
		for _, s := range stars {
			if s.name == name && !s.active && math.Abs(p-s.planets[0])/s.planets[0] < 0.02 {
				t.Errorf("SQL: planet of %s at %g d listed as activity-like", name, p)
			}
		}
	}
	for _, s := range stars {
		if s.active && !found[s.name] {
			t.Errorf("SQL: no activity-like signal of %s", s.name)
		}
	}
	// The summary table has one row per signal too.
	b, err := os.ReadFile(filepath.Join(out, SummaryCSV))
	if err != nil {
		t.Fatal(err)
	}
	lines := 0
	for _, l := range strings.Split(strings.TrimSpace(string(b)), "\n") {
		if !strings.HasPrefix(l, "#") {
			lines++
		}
	}
	if lines-1 != nsig {
		t.Errorf("summary.csv has %d rows, want %d", lines-1, nsig)
	}
	idx, err := os.ReadFile(filepath.Join(out, IndexFile))
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range stars {
		if !strings.Contains(string(idx), "stars/"+Folder(s.name)+"/") {
			t.Errorf("index.html does not link %s", s.name)
		}
	}
	if strings.Count(string(idx), "<svg") != 2 {
		t.Errorf("index.html: want 2 figures")
	}
	for _, f := range []string{FigurePeriodRotation, FigureActivityScatter} {
		b, err := os.ReadFile(filepath.Join(out, FiguresDir, f))
		if err != nil || strings.Count(string(b), "<circle") == 0 {
			t.Errorf("figure %s: %v", f, err)
		}
	}
	fitsverify(t, filepath.Join(out, SummaryFITS))
}

func first(dg *activity.Diagnosis) any {
	if len(dg.Signals) == 0 {
		return "none"
	}
	s := dg.Signals[0]
	return fmt.Sprintf("P=%.4g d %s (%s)", float64(s.Period), s.Verdict, s.Summary)
}

// nearest returns the signal within 2 % of period p, or -1.
func nearest(dg *activity.Diagnosis, p float64) int {
	for k, s := range dg.Signals {
		if math.Abs(float64(s.Period)-p)/p < 0.02 {
			return k
		}
	}
	return -1
}

// fitsverify runs /usr/bin/fitsverify on path (skipped when absent).
func fitsverify(t *testing.T, path string) {
	t.Helper()
	const fv = "/usr/bin/fitsverify"
	if _, err := os.Stat(fv); err != nil {
		t.Log("fitsverify not installed; FITS check skipped")
		return
	}
	out, err := exec.Command(fv, path).CombinedOutput()
	if err != nil || !strings.Contains(string(out), "Verification found 0 warning(s) and 0 error(s)") {
		t.Errorf("fitsverify %s: %v\n%s", path, err, out)
	}
}

func TestFailureIsolation(t *testing.T) {
	stars := sample12(t)[:5]
	dir := t.TempDir()
	m := manifestOf(stars)
	// Three broken inputs: a missing file, a table that is not one, a star
	// file with an unknown key.
	garbage := filepath.Join(dir, "garbage.csv")
	os.WriteFile(garbage, []byte("time,rv,rv_err\n2460000.5,abc,1\n"), 0o644)
	badStar := filepath.Join(dir, "bad.toml")
	os.WriteFile(badStar, []byte("name = \"Bad\"\nrotaton_period = 12\n"), 0o644)
	m.Stars = append(m.Stars,
		Entry{Name: "Missing", Data: filepath.Join(dir, "nowhere.csv")},
		Entry{Name: "Garbage", Data: garbage},
		Entry{Name: "BadStar", Data: stars[0].table, StarFile: badStar},
	)
	out := t.TempDir()
	sum, err := Run(context.Background(), m, out, fastOpts())
	if !errors.Is(err, ErrPartial) {
		t.Fatalf("error %v, want ErrPartial", err)
	}
	if sum.Run.Status != RunPartial || sum.Run.Analysed != len(stars) || sum.Run.Failed != 3 {
		t.Errorf("run %+v", sum.Run)
	}
	want := map[string]string{"Missing": "no such file", "Garbage": "abc", "BadStar": "rotaton_period"}
	fails := sum.Failed()
	if len(fails) != 3 {
		t.Fatalf("failed %+v", fails)
	}
	for _, f := range fails {
		if !strings.Contains(f.Error, want[f.Name]) {
			t.Errorf("%s: reason %q does not mention %q", f.Name, f.Error, want[f.Name])
		}
	}
	for _, s := range stars {
		if _, err := os.Stat(filepath.Join(out, StarsDir, Folder(s.name), activity.VerdictFile)); err != nil {
			t.Errorf("good star %s: %v", s.name, err)
		}
	}
	db := openCatalogue(t, out)
	got := queryRows(t, db, `SELECT name, status FROM stars WHERE status = 'failed' ORDER BY name`)
	if strings.Join(got, ",") != "BadStar|failed,Garbage|failed,Missing|failed" {
		t.Errorf("failed stars in the catalogue: %v", got)
	}
	// The failures are listed on the index page.
	idx, _ := os.ReadFile(filepath.Join(out, IndexFile))
	if !strings.Contains(string(idx), "rotaton_period") {
		t.Error("index.html does not give the failure's reason")
	}
}

func TestResume(t *testing.T) {
	stars := copySample(t, sample12(t)[:4], t.TempDir())
	m := manifestOf(stars)
	out := t.TempDir()
	if _, err := Run(context.Background(), m, out, fastOpts()); err != nil {
		t.Fatal(err)
	}
	mtimes := func() map[string]int64 {
		mt := map[string]int64{}
		for _, s := range stars {
			fi, err := os.Stat(filepath.Join(out, StarsDir, Folder(s.name), activity.VerdictFile))
			if err != nil {
				t.Fatal(err)
			}
			mt[s.name] = fi.ModTime().UnixNano()
		}
		return mt
	}
	before := mtimes()
	sum, err := Run(context.Background(), m, out, fastOpts())
	if err != nil {
		t.Fatal(err)
	}
	if sum.Run.Analysed != 0 || sum.Run.Unchanged != len(stars) {
		t.Errorf("second run: %+v, want nothing analysed", sum.Run)
	}
	if after := mtimes(); fmt.Sprint(after) != fmt.Sprint(before) {
		t.Error("second run rewrote verdicts")
	}
	// Change one star's data: append a comment line to its table.
	f, err := os.OpenFile(stars[1].table, os.O_APPEND|os.O_WRONLY, 0)
	if err != nil {
		t.Fatal(err)
	}
	f.WriteString("# re-reduced\n")
	f.Close()
	sum, err = Run(context.Background(), m, out, fastOpts())
	if err != nil {
		t.Fatal(err)
	}
	if sum.Run.Analysed != 1 || sum.Run.Unchanged != len(stars)-1 {
		t.Errorf("after a change: %+v", sum.Run)
	}
	for _, r := range sum.Stars {
		if (r.Status == StatusDone) != (r.Name == stars[1].name) {
			t.Errorf("%s: %s", r.Name, r.Status)
		}
	}
	// A changed setting reruns everything.
	o := fastOpts()
	o.Seed = 8
	sum, err = Run(context.Background(), m, out, o)
	if err != nil || sum.Run.Analysed != len(stars) {
		t.Errorf("new seed: %v %+v", err, sum.Run)
	}
	db := openCatalogue(t, out)
	if got := queryRows(t, db, `SELECT count(*) FROM runs`); got[0] != "4" {
		t.Errorf("runs recorded: %v", got)
	}
}

// dump returns the catalogue's content that does not depend on how or
// when the survey ran.
func dump(t *testing.T, dir string) []string {
	db := openCatalogue(t, dir)
	var out []string
	out = append(out, queryRows(t, db, `SELECT star_id, name, folder, status, error, input_hash, seed, n_epochs, baseline, rv_rms,
		mean_s_index, teff, rotation_period, rotation_err, rotation_source, n_signals, report FROM stars ORDER BY star_id`)...)
	out = append(out, queryRows(t, db, `SELECT * FROM signals ORDER BY signal_id`)...)
	out = append(out, queryRows(t, db, `SELECT * FROM evidence ORDER BY evidence_id`)...)
	out = append(out, queryRows(t, db, `SELECT * FROM skipped ORDER BY signal_id, name`)...)
	return out
}

func TestShardsAndMerge(t *testing.T) {
	stars := sample12(t)[:9]
	m := manifestOf(stars)
	whole := t.TempDir()
	if _, err := Run(context.Background(), m, whole, fastOpts()); err != nil {
		t.Fatal(err)
	}
	// The shards get the manifest in another order: seeds depend on names
	// only.
	rev := &Manifest{File: m.File}
	for i := len(m.Stars) - 1; i >= 0; i-- {
		rev.Stars = append(rev.Stars, m.Stars[i])
	}
	base := t.TempDir()
	var dirs []string
	seen := map[string]int{}
	for k := 1; k <= 3; k++ {
		d := filepath.Join(base, fmt.Sprintf("shard-%d", k))
		o := fastOpts()
		o.Workers = 1
		o.Shard = Shard{K: k, N: 3}
		sum, err := Run(context.Background(), rev, d, o)
		if err != nil {
			t.Fatal(err)
		}
		for _, r := range sum.Stars {
			seen[r.Name]++
		}
		dirs = append(dirs, d)
	}
	if len(seen) != len(stars) {
		t.Errorf("shards covered %d of %d stars", len(seen), len(stars))
	}
	for n, c := range seen {
		if c != 1 {
			t.Errorf("%s in %d shards", n, c)
		}
	}
	merged := filepath.Join(base, "merged")
	if err := Merge(merged, dirs); err != nil {
		t.Fatal(err)
	}
	a, b := dump(t, whole), dump(t, merged)
	if len(a) != len(b) {
		t.Fatalf("one run: %d rows, merged shards: %d", len(a), len(b))
	}
	for i := range a {
		if a[i] != b[i] {
			t.Fatalf("row %d differs:\n one run: %s\n merged:  %s", i, a[i], b[i])
		}
	}
	if got := queryRows(t, openCatalogue(t, merged), `SELECT count(*) FROM runs WHERE shard IS NOT NULL`); got[0] != "3" {
		t.Errorf("merged runs: %v", got)
	}
	for _, s := range stars {
		if _, err := os.Stat(filepath.Join(merged, StarsDir, Folder(s.name), activity.VerdictFile)); err != nil {
			t.Error(err)
		}
	}
	// Merging again (into a shard folder itself) gives the same content.
	if err := Merge(dirs[0], dirs); err != nil {
		t.Fatal(err)
	}
	if c := dump(t, dirs[0]); strings.Join(c, "\n") != strings.Join(a, "\n") {
		t.Error("merge into a shard folder differs")
	}
}

func TestInterrupt(t *testing.T) {
	stars := sample12(t)[:6]
	m := manifestOf(stars)
	out := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	o := fastOpts()
	o.Workers = 1
	o.Progress = func(done, total int) {
		if done == 2 {
			cancel()
		}
	}
	sum, err := Run(ctx, m, out, o)
	if !errors.Is(err, context.Canceled) || !errors.Is(err, ErrPartial) {
		t.Fatalf("error %v", err)
	}
	if sum.Run.Status != RunInterrupted || sum.Run.Analysed < 2 || sum.Run.NotRun == 0 {
		t.Fatalf("run %+v", sum.Run)
	}
	var finished []string
	for _, r := range sum.Stars {
		if r.Status == StatusDone {
			finished = append(finished, r.Name)
		}
	}
	// The finished stars are intact and are not redone.
	o.Progress = nil
	sum2, err := Run(context.Background(), m, out, o)
	if err != nil {
		t.Fatal(err)
	}
	if sum2.Run.Unchanged != len(finished) || sum2.Run.Analysed != len(stars)-len(finished) {
		t.Errorf("after the interruption: %+v (finished before: %v)", sum2.Run, finished)
	}
	db := openCatalogue(t, out)
	got := queryRows(t, db, `SELECT status FROM runs ORDER BY run_id`)
	if strings.Join(got, ",") != "interrupted,complete" {
		t.Errorf("runs: %v", got)
	}
}

func TestStarSeed(t *testing.T) {
	a, b := StarSeed(1, "Veyla-9"), StarSeed(1, "Corvane-3")
	if a == b || StarSeed(1, "Veyla-9") != a || StarSeed(2, "Veyla-9") == a {
		t.Errorf("seeds %d %d", a, b)
	}
}

func TestShardPick(t *testing.T) {
	var es []Entry
	for _, n := range []string{"e", "a", "d", "c", "b", "f", "g"} {
		es = append(es, Entry{Name: n})
	}
	var all []string
	for k := 1; k <= 3; k++ {
		for _, i := range (Shard{K: k, N: 3}).pick(es) {
			all = append(all, es[i].Name)
		}
	}
	sort.Strings(all)
	if strings.Join(all, "") != "abcdefg" {
		t.Errorf("shards cover %v", all)
	}
	for _, s := range []string{"0/3", "4/3", "x", "1/0", "2"} {
		if _, err := ParseShard(s); !errors.Is(err, ErrShard) {
			t.Errorf("ParseShard(%q): %v", s, err)
		}
	}
	if s, err := ParseShard(" 2/5 "); err != nil || s != (Shard{2, 5}) {
		t.Errorf("ParseShard: %v %v", s, err)
	}
}

// TestDamagedFolder: a star whose verdict was damaged after it finished
// is redone by the next run.
func TestDamagedFolder(t *testing.T) {
	stars := sample12(t)[:2]
	m := manifestOf(stars)
	out := t.TempDir()
	if _, err := Run(context.Background(), m, out, fastOpts()); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(filepath.Join(out, StarsDir, Folder(stars[0].name), activity.VerdictFile), []byte("{truncated"), 0o644)
	sum, err := Run(context.Background(), m, out, fastOpts())
	if err != nil || sum.Run.Analysed != 1 || sum.Run.Unchanged != 1 {
		t.Errorf("%v %+v", err, sum.Run)
	}
}
