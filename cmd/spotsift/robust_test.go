package main

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"spotsift/activity"
	"spotsift/activity/survey"
)

// TestMain lets a test run the program as a subprocess (to kill it or send
// it signals): with SPOTSIFT_RUN_MAIN=1 the test binary is spotsift.
func TestMain(m *testing.M) {
	if os.Getenv("SPOTSIFT_RUN_MAIN") == "1" {
		os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
	}
	os.Exit(m.Run())
}

// spotsiftCmd returns the program as a subprocess with args.
func spotsiftCmd(ctx context.Context, args ...string) *exec.Cmd {
	c := exec.CommandContext(ctx, os.Args[0], args...)
	c.Env = append(os.Environ(), "SPOTSIFT_RUN_MAIN=1")
	return c
}

// tinyStar writes a small RV table: n epochs over about 200 days, a
// sinusoid of period p and semi-amplitude k (m/s) in white noise of
// 1.5 m/s, an FWHM column; every draw from seed.
func tinyStar(t *testing.T, dir, name string, n int, p, k float64, seed uint64) string {
	t.Helper()
	r := rand.New(rand.NewPCG(seed, 1))
	var b strings.Builder
	b.WriteString("time,rv,rv_err,fwhm\n")
	tm := 2460000.0
	for i := 0; i < n; i++ {
		tm += 0.5 + 9*r.Float64()
		fmt.Fprintf(&b, "%.5f,%.3f,1.5,%.3f\n", tm, k*math.Sin(2*math.Pi*tm/p)+1.5*r.NormFloat64(), 7000+5*r.NormFloat64())
	}
	return write(t, dir, name+".csv", b.String())
}

// tinySurvey writes a manifest of three tiny stars and returns its path.
func tinySurvey(t *testing.T, dir string) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("name,data,teff\n")
	for i, p := range []float64{5.3, 12.1, 3.7} {
		name := fmt.Sprintf("Tiny-%d", i+1)
		tinyStar(t, dir, name, 36, p, 6, uint64(i+1))
		fmt.Fprintf(&b, "%s,%s.csv,5600\n", name, name)
	}
	return write(t, dir, "manifest.csv", b.String())
}

// verdicts reads every star's verdict.json in a survey folder, without
// the line of the command (it names the output folder).
func verdicts(t *testing.T, out string) map[string]string {
	t.Helper()
	got := map[string]string{}
	ents, _ := os.ReadDir(filepath.Join(out, survey.StarsDir))
	for _, d := range ents {
		if strings.HasPrefix(d.Name(), ".") {
			continue
		}
		b, err := os.ReadFile(filepath.Join(out, survey.StarsDir, d.Name(), activity.VerdictFile))
		if err == nil {
			var keep []string
			for _, l := range strings.Split(string(b), "\n") {
				if !strings.Contains(l, `"command":`) {
					keep = append(keep, l)
				}
			}
			got[d.Name()] = strings.Join(keep, "\n")
		}
	}
	return got
}

// TestKillAndRerun: a survey is run to the end, then run again with other
// settings and killed (kill -9) at random points while it rewrites the
// stars, then run again with the first settings: the verdicts published
// are those of an uninterrupted run with those settings, byte for byte
// (a kill between the new verdict and the old state file once left a
// verdict of the other seed taken as "unchanged"), and the catalogue
// is whole.
func TestKillAndRerun(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the survey as a subprocess several times")
	}
	dir := t.TempDir()
	manifest := tinySurvey(t, dir)
	settings := []string{"--no-gp", "--workers", "2", "--quiet"}
	ref := filepath.Join(dir, "ref")
	if code, _, stderr := runCmd(append([]string{"survey", "--manifest", manifest, "--out", ref}, settings...)...); code != exitOK {
		t.Fatalf("reference run: exit %d\n%s", code, stderr)
	}
	want := verdicts(t, ref)
	if len(want) != 3 {
		t.Fatalf("reference run: %d verdicts", len(want))
	}
	other := filepath.Join(dir, "other")
	if code, _, stderr := runCmd(append([]string{"survey", "--manifest", manifest, "--out", other, "--seed", "2"}, settings...)...); code != exitOK {
		t.Fatalf("run with other settings: exit %d\n%s", code, stderr)
	}
	if o := verdicts(t, other); o["Tiny-1"] == want["Tiny-1"] && o["Tiny-2"] == want["Tiny-2"] && o["Tiny-3"] == want["Tiny-3"] {
		t.Fatal("--seed 2 gives the same verdicts: the test cannot tell the settings apart")
	}
	r := rand.New(rand.NewPCG(19, 2))
	for try := 0; try < 3; try++ {
		out := filepath.Join(dir, fmt.Sprintf("out-%d", try))
		if code, _, stderr := runCmd(append([]string{"survey", "--manifest", manifest, "--out", out}, settings...)...); code != exitOK {
			t.Fatalf("first run: exit %d\n%s", code, stderr)
		}
		// Runs with other settings, killed at random while they rewrite.
		for kill := 0; kill < 3; kill++ {
			cmd := spotsiftCmd(context.Background(), append([]string{"survey", "--manifest", manifest, "--out", out, "--seed", "2"}, settings...)...)
			if err := cmd.Start(); err != nil {
				t.Fatal(err)
			}
			time.Sleep(time.Duration(r.IntN(1200)) * time.Millisecond)
			cmd.Process.Signal(syscall.SIGKILL)
			cmd.Wait()
		}
		if code, _, stderr := runCmd(append([]string{"survey", "--manifest", manifest, "--out", out}, settings...)...); code != exitOK {
			t.Fatalf("rerun after kills: exit %d\n%s", code, stderr)
		}
		got := verdicts(t, out)
		for f, v := range want {
			if got[f] != v {
				t.Errorf("try %d: star %s: the verdict published after kills differs from an uninterrupted run's", try, f)
			}
		}
		checkCatalogue(t, out, 3)
		ents, _ := os.ReadDir(filepath.Join(out, survey.StarsDir))
		for _, d := range ents {
			if strings.HasPrefix(d.Name(), ".") {
				t.Errorf("try %d: leftover %s", try, d.Name())
			}
		}
	}
}

// checkCatalogue opens a survey's catalogue: integrity_check must say ok
// and n stars be done.
func checkCatalogue(t *testing.T, out string, n int) {
	t.Helper()
	db, err := sql.Open("sqlite", filepath.Join(out, survey.CatalogueFile))
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var ok string
	if err := db.QueryRow(`PRAGMA integrity_check`).Scan(&ok); err != nil || ok != "ok" {
		t.Errorf("%s: integrity_check %q %v", out, ok, err)
	}
	var done int
	if err := db.QueryRow(`SELECT count(*) FROM stars WHERE status = 'done'`).Scan(&done); err != nil || done != n {
		t.Errorf("%s: %d stars done, want %d (%v)", out, done, n, err)
	}
}

// TestConcurrentSurveys starts two surveys into one folder at once, as
// two processes, a few times: both finish, and the catalogue is whole.
func TestConcurrentSurveys(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the survey as a subprocess several times")
	}
	dir := t.TempDir()
	manifest := tinySurvey(t, dir)
	for try := 0; try < 4; try++ {
		out := filepath.Join(dir, fmt.Sprintf("out-%d", try))
		var cmds []*exec.Cmd
		for range 2 {
			c := spotsiftCmd(context.Background(), "survey", "--manifest", manifest, "--out", out, "--no-gp", "--workers", "1")
			var stderr strings.Builder
			c.Stderr = &stderr
			if err := c.Start(); err != nil {
				t.Fatal(err)
			}
			cmds = append(cmds, c)
		}
		for i, c := range cmds {
			if err := c.Wait(); err != nil {
				t.Errorf("try %d, survey %d: %v\n%s", try, i+1, err, c.Stderr)
			}
		}
		checkCatalogue(t, out, 3)
	}
}

// TestSIGTERMDuringLongStar sends SIGTERM to a survey whose last star is
// still being analysed (a long table with the GP fits): it exits within
// 10 s with status 1, the finished stars intact and the long one marked
// not run.
func TestSIGTERMDuringLongStar(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the survey as a subprocess")
	}
	dir := t.TempDir()
	var b strings.Builder
	b.WriteString("name,data,rotation_period\n")
	for i := 0; i < 2; i++ {
		tinyStar(t, dir, fmt.Sprintf("Tiny-%d", i+1), 30, 5.3, 6, uint64(i+1))
		fmt.Fprintf(&b, "Tiny-%d,Tiny-%d.csv,\n", i+1, i+1)
	}
	// With a known rotation period the GP activity models are fitted:
	// tens of seconds or more on 20000 epochs.
	tinyStar(t, dir, "Zlong", 20000, 17.2, 4, 9)
	b.WriteString("Zlong,Zlong.csv,17.2\n")
	manifest := write(t, dir, "manifest.csv", b.String())
	out := filepath.Join(dir, "out")
	cmd := spotsiftCmd(context.Background(), "survey", "--manifest", manifest, "--out", out, "--workers", "2", "--quiet")
	var stdout, stderr strings.Builder
	cmd.Stdout, cmd.Stderr = &stdout, &stderr
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() { done <- cmd.Wait() }()
	// Wait for the two tiny stars to finish.
	deadline := time.Now().Add(5 * time.Minute)
	for {
		n := 0
		for _, s := range []string{"Tiny-1", "Tiny-2"} {
			if _, err := os.Stat(filepath.Join(out, survey.StarsDir, s, survey.StateFile)); err == nil {
				n++
			}
		}
		if n == 2 {
			break
		}
		select {
		case err := <-done:
			t.Fatalf("the survey ended before the signal: %v\n%s\n%s", err, stdout.String(), stderr.String())
		case <-time.After(100 * time.Millisecond):
		}
		if time.Now().After(deadline) {
			cmd.Process.Kill()
			t.Fatal("the tiny stars did not finish in 5 minutes")
		}
	}
	t0 := time.Now()
	cmd.Process.Signal(syscall.SIGTERM)
	select {
	case err := <-done:
		var ee *exec.ExitError
		if !errors.As(err, &ee) || ee.ExitCode() != exitFailed {
			t.Errorf("exit: %v, want status %d\n%s", err, exitFailed, stderr.String())
		}
	case <-time.After(10 * time.Second):
		cmd.Process.Kill()
		t.Fatalf("still running 10 s after SIGTERM")
	}
	t.Logf("exited %v after SIGTERM", time.Since(t0).Round(time.Millisecond))
	if !strings.Contains(stdout.String(), "not run") {
		t.Errorf("summary does not say what was not run:\n%s", stdout.String())
	}
	checkCatalogue(t, out, 2)
	db, _ := sql.Open("sqlite", filepath.Join(out, survey.CatalogueFile))
	defer db.Close()
	var st string
	db.QueryRow(`SELECT status FROM stars WHERE name = 'Zlong'`).Scan(&st)
	if st != "pending" {
		t.Errorf("the interrupted star is %q in the catalogue, want pending", st)
	}
}
