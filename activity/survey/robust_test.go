package survey

import (
	"context"
	"encoding/json"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"spotsift/activity"

	"spotsift/internal/worker"
)

// setHook installs testHookAnalyse for one test.
func setHook(t *testing.T, h func(ctx context.Context, name string)) {
	t.Helper()
	testHookAnalyse.Store(&h)
	t.Cleanup(func() { testHookAnalyse.Store(nil) })
}

// tree lists every path under dir with its size, to see that nothing
// changed.
func tree(t *testing.T, dir string) string {
	t.Helper()
	var b strings.Builder
	filepath.WalkDir(dir, func(p string, d os.DirEntry, err error) error {
		if err != nil {
			b.WriteString(p + " error\n")
			return nil
		}
		fi, _ := d.Info()
		b.WriteString(p)
		if fi != nil && fi.Mode().IsRegular() {
			b.WriteString(" " + fi.ModTime().String() + " " + string(rune('0'+fi.Size()%10)))
		}
		b.WriteString("\n")
		return nil
	})
	return b.String()
}

// editState rewrites a star's state file through fn.
func editState(t *testing.T, dir string, fn func(m map[string]any)) {
	t.Helper()
	p := filepath.Join(dir, StateFile)
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	fn(m)
	b, _ = json.Marshal(m)
	if err := os.WriteFile(p, b, 0o644); err != nil {
		t.Fatal(err)
	}
}

// TestMergeTamperedState: state files that name another folder, an empty
// one or a path outside the output folder, and star folders that are
// symbolic links, make Merge refuse before it writes anything: nothing
// outside --out is touched, and a new output folder gets no stars/.
func TestMergeTamperedState(t *testing.T) {
	stars := sample12(t)[:2]
	base := t.TempDir()
	shard := filepath.Join(base, "shard")
	if _, err := Run(context.Background(), manifestOf(stars), shard, fastOpts()); err != nil {
		t.Fatal(err)
	}
	victim := filepath.Join(base, "victim")
	os.MkdirAll(filepath.Join(victim, "stars"), 0o755)
	os.WriteFile(filepath.Join(victim, "precious.txt"), []byte("keep me"), 0o644)
	os.WriteFile(filepath.Join(victim, "stars", "precious.txt"), []byte("keep me"), 0o644)
	before := tree(t, victim)
	starDir0 := filepath.Join(shard, StarsDir, Folder(stars[0].name))
	orig, _ := os.ReadFile(filepath.Join(starDir0, StateFile))
	cases := []struct {
		name string
		edit func(m map[string]any)
	}{
		{"folder outside", func(m map[string]any) { m["folder"] = "../../victim" }},
		{"folder outside, absolute", func(m map[string]any) { m["folder"] = victim }},
		{"empty folder", func(m map[string]any) { m["folder"] = "" }},
		{"dot folder", func(m map[string]any) { m["folder"] = "." }},
		{"name of a path", func(m map[string]any) { m["name"] = "../../victim"; m["folder"] = "../../victim" }},
		{"empty name", func(m map[string]any) { m["name"] = "" }},
		{"another star's name", func(m map[string]any) { m["name"] = stars[1].name; m["folder"] = Folder(stars[1].name) }},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			os.WriteFile(filepath.Join(starDir0, StateFile), orig, 0o644)
			editState(t, starDir0, c.edit)
			merged := filepath.Join(base, "merged-"+strings.ReplaceAll(c.name, " ", "-"))
			err := Merge(merged, []string{shard})
			if !errors.Is(err, ErrMerge) {
				t.Fatalf("merge with a tampered state: %v, want ErrMerge", err)
			}
			if !strings.Contains(err.Error(), StateFile) {
				t.Errorf("the message does not name the state file: %v", err)
			}
			if got := tree(t, victim); got != before {
				t.Errorf("outside --out changed:\n%s\nwas\n%s", got, before)
			}
			if _, err := os.Stat(filepath.Join(merged, StarsDir)); !errors.Is(err, os.ErrNotExist) {
				t.Errorf("a refused merge left %s: %v", filepath.Join(merged, StarsDir), err)
			}
		})
	}
	os.WriteFile(filepath.Join(starDir0, StateFile), orig, 0o644)
	// A star folder that is a symbolic link to a folder elsewhere is not
	// followed: the victim is neither read as a star nor touched.
	if err := os.Symlink(victim, filepath.Join(shard, StarsDir, "Evil")); err != nil {
		t.Fatal(err)
	}
	merged := filepath.Join(base, "merged")
	if err := Merge(merged, []string{shard}); err != nil {
		t.Fatalf("merge of an intact shard with a symbolic link beside: %v", err)
	}
	if _, err := os.Lstat(filepath.Join(merged, StarsDir, "Evil")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("the symbolic link was copied: %v", err)
	}
	// Merging into the shard itself leaves the link and the victim alone.
	if err := Merge(shard, []string{shard}); err != nil {
		t.Fatal(err)
	}
	if got := tree(t, victim); got != before {
		t.Errorf("outside --out changed:\n%s\nwas\n%s", got, before)
	}
}

// TestMergeRefusesMismatch: shards analysed with another seed, other
// settings or another version are refused, naming both folders.
func TestMergeRefusesMismatch(t *testing.T) {
	stars := sample12(t)[:2]
	m := manifestOf(stars)
	base := t.TempDir()
	run := func(name string, k int, edit func(o *Options)) string {
		d := filepath.Join(base, name)
		o := fastOpts()
		o.Shard = Shard{K: k, N: 2}
		edit(o)
		if _, err := Run(context.Background(), m, d, o); err != nil {
			t.Fatal(err)
		}
		return d
	}
	first := run("a", 1, func(o *Options) {})
	for _, c := range []struct {
		name, want string
		edit       func(o *Options)
	}{
		{"seed", "seed 8", func(o *Options) { o.Seed = 8 }},
		{"version", "version other", func(o *Options) { o.Version = "other" }},
		{"settings", "max_signals=2", func(o *Options) { o.Diagnose = &activity.Options{MaxSignals: 2} }},
	} {
		second := run(c.name, 2, c.edit)
		out := filepath.Join(base, "merged-"+c.name)
		err := Merge(out, []string{first, second})
		if !errors.Is(err, ErrMerge) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want ErrMerge naming %q", c.name, err, c.want)
		}
		if _, err := os.Stat(out); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("%s: the refused merge made %s", c.name, out)
		}
	}
	// The same settings merge.
	if err := Merge(filepath.Join(base, "merged"), []string{first, run("same", 2, func(o *Options) {})}); err != nil {
		t.Errorf("same settings: %v", err)
	}
}

// TestLeftoversCleaned: what a killed run leaves (hidden new and old star
// folders, temporary files of atomic writes) is removed by the next run;
// other files are kept.
func TestLeftoversCleaned(t *testing.T) {
	stars := sample12(t)[:1]
	out := t.TempDir()
	m := manifestOf(stars)
	if _, err := Run(context.Background(), m, out, fastOpts()); err != nil {
		t.Fatal(err)
	}
	sd := filepath.Join(out, StarsDir, Folder(stars[0].name))
	left := []string{
		filepath.Join(out, StarsDir, "."+Folder(stars[0].name)+newMarker+"123", activity.VerdictFile),
		filepath.Join(out, StarsDir, "."+Folder(stars[0].name)+oldMarker+"456", "x", activity.VerdictFile),
		filepath.Join(sd, ".report.pdf.tmp789"),
		filepath.Join(sd, "figures", ".rv.svg.tmp1"),
		filepath.Join(out, ".catalogue.sqlite.tmp2"),
		filepath.Join(out, ".summary.csv.tmp3"),
	}
	for _, p := range left {
		os.MkdirAll(filepath.Dir(p), 0o755)
		os.WriteFile(p, []byte("partial"), 0o644)
	}
	keep := filepath.Join(out, "notes.txt")
	os.WriteFile(keep, []byte("mine"), 0o644)
	sum, err := Run(context.Background(), m, out, fastOpts())
	if err != nil || sum.Run.Unchanged != 1 {
		t.Fatalf("%v %+v", err, sum.Run)
	}
	for _, p := range left {
		if _, err := os.Stat(p); !errors.Is(err, os.ErrNotExist) {
			t.Errorf("leftover %s still there (%v)", p, err)
		}
	}
	if _, err := os.Stat(keep); err != nil {
		t.Errorf("a file of the user's was removed: %v", err)
	}
}

// TestVerdictBesideOldState: a verdict that does not match the star's
// state file (another run's verdict.json put beside it, as a kill during
// an in-place rewrite used to leave) is never taken as unchanged: the star
// is analysed again and its verdict is the one of its inputs.
func TestVerdictBesideOldState(t *testing.T) {
	stars := sample12(t)[:1]
	m := manifestOf(stars)
	a, b := t.TempDir(), t.TempDir()
	if _, err := Run(context.Background(), m, a, fastOpts()); err != nil {
		t.Fatal(err)
	}
	o := fastOpts()
	o.Diagnose = &activity.Options{MaxSignals: 1}
	if _, err := Run(context.Background(), m, b, o); err != nil {
		t.Fatal(err)
	}
	f := Folder(stars[0].name)
	want, _ := os.ReadFile(filepath.Join(a, StarsDir, f, activity.VerdictFile))
	other, _ := os.ReadFile(filepath.Join(b, StarsDir, f, activity.VerdictFile))
	if string(want) == string(other) {
		t.Fatal("the two settings give the same verdict: the test cannot tell them apart")
	}
	os.WriteFile(filepath.Join(a, StarsDir, f, activity.VerdictFile), other, 0o644)
	sum, err := Run(context.Background(), m, a, fastOpts())
	if err != nil || sum.Run.Analysed != 1 {
		t.Fatalf("%v %+v: a mismatched verdict was kept", err, sum.Run)
	}
	got, _ := os.ReadFile(filepath.Join(a, StarsDir, f, activity.VerdictFile))
	if string(got) != string(want) {
		t.Error("the verdict after the rerun is not the one of the star's inputs and settings")
	}
}

// TestStuckStar: a star whose analysis ignores its context neither blocks
// an interruption (Run returns within seconds, the star not run, the
// others intact) nor, with StarTimeout, the survey (the star fails with
// the time limit as its reason).
func TestStuckStar(t *testing.T) {
	stars := sample12(t)[:3]
	m := manifestOf(stars)
	release := make(chan struct{})
	t.Cleanup(func() { close(release) })
	stuck := stars[1].name
	setHook(t, func(ctx context.Context, name string) {
		if name == stuck {
			<-release // ignores ctx
		}
	})

	out := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	o := fastOpts()
	var cancelled time.Time
	o.Progress = func(done, total int) {
		if done == len(stars)-1 {
			cancelled = time.Now()
			cancel()
		}
	}
	sum, err := Run(ctx, m, out, o)
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("error %v", err)
	}
	if d := time.Since(cancelled); d > 30*time.Second {
		t.Errorf("the interrupted run returned %v after the interruption", d)
	}
	for _, r := range sum.Stars {
		want := StatusDone
		if r.Name == stuck {
			want = StatusNotRun
		}
		if r.Status != want {
			t.Errorf("%s: %s, want %s", r.Name, r.Status, want)
		}
	}

	// The time limit: the stuck star alone (the others' analysis could
	// itself take longer than a short limit on a loaded machine).
	one := &Manifest{File: m.File, Stars: []Entry{m.Stars[1]}}
	out = t.TempDir()
	o = fastOpts()
	o.StarTimeout = time.Second
	t0 := time.Now()
	sum, err = Run(context.Background(), one, out, o)
	if !errors.Is(err, ErrPartial) || sum.Run.Failed != 1 {
		t.Fatalf("%v %+v", err, sum.Run)
	}
	if d := time.Since(t0); d > 30*time.Second {
		t.Errorf("a 1 s star time limit took %v", d)
	}
	if r := sum.Stars[0]; r.Status != StatusFailed || !strings.Contains(r.Error, "--star-timeout") {
		t.Errorf("stuck star: %+v", r)
	}
	// The failure is saved: the next run keeps it without retrying.
	setHook(t, func(ctx context.Context, name string) {
		if name == stuck {
			t.Error("an unchanged failed star was retried")
		}
	})
	sum, _ = Run(context.Background(), one, out, fastOpts())
	if sum.Run.Failed != 1 || sum.Stars[0].Error == "" {
		t.Errorf("rerun: %+v", sum.Run)
	}
}

// TestPanicIsFailure: a panic in one star's handling is that star's
// failure; the others finish and the catalogue is written.
func TestPanicIsFailure(t *testing.T) {
	stars := sample12(t)[:2]
	setHook(t, func(ctx context.Context, name string) {
		if name == stars[0].name {
			var a []int
			_ = a[len(name)] // index out of range
		}
	})
	out := t.TempDir()
	sum, err := Run(context.Background(), manifestOf(stars), out, fastOpts())
	if !errors.Is(err, ErrPartial) || sum.Run.Failed != 1 || sum.Run.Analysed != 1 {
		t.Fatalf("%v %+v", err, sum.Run)
	}
	if r := sum.Stars[0]; r.Name == stars[0].name && !strings.Contains(r.Error, "internal error") {
		t.Errorf("failure reason: %q", r.Error)
	}
	if _, err := os.Stat(filepath.Join(out, CatalogueFile)); err != nil {
		t.Error(err)
	}
}

// TestWorkerPanicIsFailure: a panic in a worker goroutine of a star's
// analysis (as in a periodogram's or a fit's pool) is passed on to the
// star and becomes its failure, naming the function, with no stack or
// panic text in the saved reason; the stack is kept for debug output.
func TestWorkerPanicIsFailure(t *testing.T) {
	stars := sample12(t)[:2]
	setHook(t, func(ctx context.Context, name string) {
		if name == stars[0].name {
			var g worker.Group
			for range 2 {
				g.Go(func() { explodeInWorker(name) })
			}
			g.Rethrow()
		}
	})
	out := t.TempDir()
	sum, err := Run(context.Background(), manifestOf(stars), out, fastOpts())
	if !errors.Is(err, ErrPartial) || sum.Run.Failed != 1 || sum.Run.Analysed != 1 {
		t.Fatalf("%v %+v", err, sum.Run)
	}
	for _, r := range sum.Stars {
		if r.Name != stars[0].name {
			continue
		}
		if !strings.Contains(r.Error, "internal error in activity/survey.explodeInWorker") {
			t.Errorf("failure reason %q, want the function that panicked", r.Error)
		}
		for _, bad := range []string{"goroutine ", "panic:", "runtime error", "index out of range", ".go:"} {
			if strings.Contains(r.Error, bad) {
				t.Errorf("failure reason %q holds %q", r.Error, bad)
			}
		}
		if !strings.Contains(r.Debug, "index out of range") || !strings.Contains(r.Debug, "explodeInWorker") {
			t.Errorf("debug output lacks the panic and its stack: %q", r.Debug)
		}
		st, _ := readState(filepath.Join(out, StarsDir, r.Folder))
		if st == nil || st.Error != r.Error {
			t.Errorf("saved state %+v, want the same reason", st)
		}
	}
}

// explodeInWorker is a bug: an index out of range.
func explodeInWorker(name string) {
	var a []int
	_ = a[len(name)]
}

// TestNotRegularInputs: a star whose data or star file is a named pipe or
// a device fails at once with that reason; a star with a 250-byte name
// (its folder name cut to MaxFolder bytes) is analysed and kept.
func TestNotRegularInputs(t *testing.T) {
	stars := sample12(t)[:1]
	dir := t.TempDir()
	fifo := filepath.Join(dir, "pipe.csv")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Skipf("no named pipes here: %v", err)
	}
	spectra := filepath.Join(dir, "spectra")
	os.Mkdir(spectra, 0o755)
	if err := syscall.Mkfifo(filepath.Join(spectra, "epoch-1.fits"), 0o644); err != nil {
		t.Fatal(err)
	}
	long := strings.Repeat("Long-name-", 25)
	m := manifestOf(stars)
	m.Stars = append(m.Stars,
		Entry{Name: "Pipe", Data: fifo},
		Entry{Name: "Zero", Data: "/dev/zero"},
		Entry{Name: "PipeStar", Data: stars[0].table, StarFile: fifo},
		Entry{Name: "PipeSpectra", Data: spectra},
		Entry{Name: long, Data: stars[0].table, StarFile: stars[0].starFile},
	)
	out := t.TempDir()
	done := make(chan struct{})
	var sum *Summary
	go func() {
		defer close(done)
		sum, _ = Run(context.Background(), m, out, fastOpts())
	}()
	select {
	case <-done:
	case <-time.After(10 * time.Minute):
		t.Fatal("the survey still runs after 10 minutes: an input blocks it")
	}
	want := map[string]string{"Pipe": "named pipe", "Zero": "character device", "PipeStar": "named pipe", "PipeSpectra": "named pipe"}
	for _, r := range sum.Stars {
		w, bad := want[r.Name]
		switch {
		case bad && (r.Status != StatusFailed || !strings.Contains(r.Error, w)):
			t.Errorf("%s: %s %q, want a failure naming %q", r.Name, r.Status, r.Error, w)
		case !bad && r.Status != StatusDone:
			t.Errorf("%s: %s %s", r.Name, r.Status, r.Error)
		}
	}
	if f := Folder(long); len(f) > MaxFolder {
		t.Errorf("folder of %d bytes", len(f))
	}
	sum, _ = Run(context.Background(), m, out, fastOpts())
	if sum.Run.Unchanged != 2 || sum.Run.Failed != 4 {
		t.Errorf("rerun: %+v", sum.Run)
	}
}

// TestConcurrentRuns: two surveys started at once into one folder take
// turns (the folder's lock): both finish, and the catalogue is whole
// (PRAGMA integrity_check) with every star, every time.
func TestConcurrentRuns(t *testing.T) {
	stars := sample12(t)[:2]
	m := manifestOf(stars)
	tries := 3
	if testing.Short() {
		tries = 1
	}
	for try := 0; try < tries; try++ {
		out := t.TempDir()
		var wg sync.WaitGroup
		errs := make([]error, 2)
		waited := make([]bool, 2)
		for i := range 2 {
			wg.Add(1)
			go func() {
				defer wg.Done()
				o := fastOpts()
				o.Notify = func(string) { waited[i] = true }
				_, errs[i] = Run(context.Background(), m, out, o)
			}()
		}
		wg.Wait()
		if errs[0] != nil || errs[1] != nil {
			t.Fatalf("try %d: %v / %v", try, errs[0], errs[1])
		}
		if !waited[0] && !waited[1] {
			t.Logf("try %d: the runs did not overlap", try)
		}
		db := openCatalogue(t, out)
		if got := queryRows(t, db, `PRAGMA integrity_check`); len(got) != 1 || got[0] != "ok" {
			t.Errorf("try %d: integrity_check %v", try, got)
		}
		if got := queryRows(t, db, `SELECT count(*) FROM stars WHERE status = 'done'`); got[0] != "2" {
			t.Errorf("try %d: %v stars done", try, got)
		}
		if got := queryRows(t, db, `SELECT count(*) FROM runs WHERE status = 'complete'`); got[0] != "2" {
			t.Errorf("try %d: %v complete runs", try, got)
		}
	}
}
