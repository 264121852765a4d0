package main

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
	"unicode/utf8"
)

// malformedCase is one input of the malformed-input corpus
// (testdata/malformed, made by its make_corpus.py; some made here) and
// what the commands must do with it.
type malformedCase struct {
	// path is the input, relative to testdata/malformed unless absolute.
	path string
	// file is the name the message must hold; "" means path's base name.
	file string
	// want are the words the message must hold beside the file's name:
	// the line, row, column or keyword at fault.
	want []string
	// valid marks an input that only looks malformed and is read
	// correctly (exit 0 is then right).
	valid bool
}

// corpusRoot is testdata/malformed, from this package's folder.
const corpusRoot = "../../testdata/malformed"

// runBounded runs the program in-process with a time limit; it returns the
// exit code, stdout and stderr, or fails the test when the command does
// not end within limit.
func runBounded(t *testing.T, limit time.Duration, args ...string) (int, string, string) {
	t.Helper()
	type res struct {
		code   int
		stdout string
		stderr string
	}
	ch := make(chan res, 1)
	go func() {
		var o, e bytes.Buffer
		code := run(args, &o, &e)
		ch <- res{code, o.String(), e.String()}
	}()
	select {
	case r := <-ch:
		return r.code, r.stdout, r.stderr
	case <-time.After(limit):
		t.Fatalf("spotsift %s: not finished after %v", strings.Join(args, " "), limit)
	}
	return 0, "", ""
}

// checkMessage applies the corpus rules to one command's outcome.
func checkMessage(t *testing.T, c malformedCase, code int, stdout, stderr string) {
	t.Helper()
	msg := stderr + stdout
	for _, bad := range []string{"goroutine ", "panic:", "runtime error", "[recovered]"} {
		if strings.Contains(msg, bad) {
			t.Errorf("panic text %q in the output:\n%s", bad, msg)
		}
	}
	if c.valid {
		if code != exitOK {
			t.Errorf("exit %d for a valid input:\n%s", code, msg)
		}
		return
	}
	if code != exitFailed && code != exitUsage {
		t.Errorf("exit %d, want 1 (analysis failure) or 2 (bad input)\n%s", code, msg)
	}
	file := c.file
	if file == "" {
		file = filepath.Base(c.path)
	}
	if !strings.Contains(msg, file) {
		t.Errorf("the message does not name the file %s:\n%s", file, msg)
	}
	for _, w := range c.want {
		if !strings.Contains(msg, w) {
			t.Errorf("the message does not say %q:\n%s", w, msg)
		}
	}
	if !utf8.ValidString(stderr) || strings.ContainsFunc(stderr, func(r rune) bool { return r < 0x20 && r != '\n' && r != '\t' }) {
		t.Errorf("the message echoes binary bytes: %q", stderr)
	}
}

// TestMalformedCorpus runs every relevant command on every case of the
// malformed-input corpus: each ends within 20 s, exits 2 (bad input) or 1
// (analysis failure), names the file and the line, column or keyword at
// fault, and shows no panic text.
func TestMalformedCorpus(t *testing.T) {
	if _, err := os.Stat(corpusRoot); err != nil {
		t.Fatalf("the corpus is missing: %v", err)
	}
	tmp := t.TempDir()
	good := tinyStar(t, tmp, "good", 40, 5.3, 6, 3)
	fifo := filepath.Join(tmp, "pipe.csv")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Fatalf("mkfifo: %v", err)
	}
	// Large inputs made here: a 2 MB line, a header of 10^6 columns.
	longLine := write(t, tmp, "long-line.csv", "time,rv,rv_err\n2460000.1,1,1\n2460001.1,"+strings.Repeat("9", 2<<20)+",1\n")
	var wide strings.Builder
	wide.WriteString("time,rv,rv_err")
	for i := range 1000000 {
		fmt.Fprintf(&wide, ",c%d", i)
	}
	wideHeader := write(t, tmp, "wide-header.csv", wide.String()+"\n")
	// Spectra folders with a named pipe, and with a link to /dev/zero.
	pipeSpectra := filepath.Join(tmp, "pipe-spectra")
	os.Mkdir(pipeSpectra, 0o755)
	syscall.Mkfifo(filepath.Join(pipeSpectra, "epoch-1.fits"), 0o644)
	zeroSpectra := filepath.Join(tmp, "zero-spectra")
	os.Mkdir(zeroSpectra, 0o755)
	os.Symlink("/dev/zero", filepath.Join(zeroSpectra, "epoch-1.fits"))

	tables := []malformedCase{
		{path: "tables/binary.csv", want: []string{":1:", "not UTF-8"}},
		{path: "tables/control-chars.csv", want: []string{":1:", "binary data at byte 1", "0x16"}},
		{path: "tables/cr-only.csv", valid: true},
		{path: "tables/utf16.csv", valid: true},
		{path: "tables/no-rv.csv", valid: true}, // "velocity" is recognised as the RV column
		{path: "tables/dup-column.csv", want: []string{":1:", `column "rv"`}},
		{path: "tables/duplicate-epoch.csv", want: []string{":5:", `"time"`}},
		{path: "tables/empty.csv", want: []string{"empty"}},
		{path: "tables/header-only.csv", want: []string{"no rows"}},
		{path: "tables/ragged.csv", want: []string{":4:", "fields"}},
		{path: "tables/text-number.csv", want: []string{":5:", `column "rv"`}},
		{path: "tables/nul-byte.csv", want: []string{":4:", "NUL"}},
		{path: "tables/negative-err.csv", want: []string{":6:", `column "rv_err"`}},
		{path: "tables/zero-err.csv", want: []string{":6:", `column "rv_err"`}},
		{path: "tables/tiny-err.csv", want: []string{":6:", `column "rv_err"`}},
		{path: "tables/huge-err.csv", want: []string{":6:", `column "rv_err"`}},
		{path: "tables/huge-rv.csv", want: []string{":4:", `column "rv"`}},
		{path: "tables/huge-indicator.csv", want: []string{":4:", `column "fwhm"`}},
		{path: "tables/huge-time.csv", want: []string{":5:", `column "time"`}},
		{path: "tables/inf.csv", want: []string{":5:", `column "rv"`}},
		{path: "tables/nan-time.csv", want: []string{":5:", `column "time"`}},
		{path: "tables/fits-tfields.fits", want: []string{"TFIELDS"}},
		{path: "tables/fits-tform.fits", want: []string{"NAXIS1"}}, // an unknown code 'Q' changes the row length
		{path: "tables/fits-negative-tform.fits", want: []string{"TFORM2"}},
		{path: "tables/fits-naxis1.fits", want: []string{"NAXIS1 = 5 bytes a row", "add up to 47 bytes"}},
		{path: "tables/fits-naxis2-huge.fits", want: []string{"NAXIS2"}},
		{path: "tables/fits-truncated.fits", want: []string{"truncated"}},
		{path: "tables/fits-not-fits.fits", want: []string{`"time"`}},
		{path: longLine, want: []string{":3:", "longer than"}},
		{path: wideHeader, want: []string{":1:"}},
		{path: fifo, want: []string{"not a regular file"}},
		{path: "/dev/zero", want: []string{"not a regular file"}},
	}
	for _, c := range tables {
		for _, cmd := range [][]string{
			{"scan", "--data", c.path},
			{"vet", "--data", c.path, "--no-gp", "--out", filepath.Join(tmp, "vet-out")},
			{"model", "--data", c.path, "--planets", "1", "--starts", "1"},
		} {
			if c.valid && cmd[0] == "model" {
				continue // a whole fit: the readers are the same as scan's
			}
			runCase(t, c, cmd)
		}
	}

	stars := []malformedCase{
		{path: "stars/syntax.toml", want: []string{":2:"}},
		{path: "stars/unknown-key.toml", want: []string{":2:", `"temperature"`}},
		{path: "stars/teff-range.toml", want: []string{":2:", `"teff"`}},
		{path: "stars/wrong-type.toml", want: []string{"line 2", `"mass"`}},
		{path: "stars/binary.toml", want: []string{":1:"}},
		{path: fifo, want: []string{"not a regular file"}},
		{path: "/dev/zero", want: []string{"not a regular file"}},
	}
	for _, c := range stars {
		runCase(t, c, []string{"vet", "--data", good, "--star", c.path, "--no-gp"})
	}

	spectra := []malformedCase{
		{path: "spectra/card-naxis0/epoch-1.fits", want: []string{"NAXIS0"}},
		{path: "spectra/card-naxis-1/epoch-1.fits", want: []string{"building a mask", "no mask line"}}, // a legal keyword name, not an axis: the spectrum is read, its lines fail
		{path: "spectra/naxis0/epoch-1.fits", want: []string{"NAXIS = 0", "XTENSION"}},
		{path: "spectra/naxis-negative/epoch-1.fits", want: []string{"NAXIS"}},
		{path: "spectra/naxis1-huge/epoch-1.fits", want: []string{"NAXIS1 = 4000000000000", "the file holds 2880"}},
		{path: "spectra/naxis1-negative/epoch-1.fits", want: []string{"NAXIS1"}},
		{path: "spectra/bitpix/epoch-1.fits", want: []string{"BITPIX"}},
		{path: "spectra/cdelt-zero/epoch-1.fits", want: []string{"CDELT1"}},
		{path: "spectra/crval-huge/epoch-1.fits", want: []string{"CRVAL1 = 1.7e+308"}},
		{path: "spectra/truncated/epoch-1.fits", want: []string{"truncated"}},
		{path: "spectra/garbage-text/epoch-1.txt", want: []string{":2:", "flux", `"abc"`}},
		{path: "spectra/binary/epoch-1.fits", want: []string{"not a spectrum"}},
		{path: filepath.Join(pipeSpectra, "epoch-1.fits"), want: []string{"not a regular file"}},
		{path: filepath.Join(zeroSpectra, "epoch-1.fits"), want: []string{"not a regular file"}},
	}
	for _, c := range spectra {
		dir := filepath.Dir(c.path)
		if !filepath.IsAbs(dir) {
			dir = filepath.Join(corpusRoot, dir)
		}
		runCase(t, c, []string{"measure", "--spectra", dir, "--out", filepath.Join(tmp, "measured.csv")})
	}

	// A manifest naming a star whose data is a named pipe: that star
	// fails with its reason (exit 1), the survey ends.
	pipeManifest := write(t, tmp, "pipe-manifest.csv", "name,data\nGood-1,"+good+"\nPiped,"+fifo+"\n")
	manifests := []malformedCase{
		{path: "manifests/empty.csv", want: []string{"empty"}},
		{path: "manifests/no-data-column.csv", want: []string{":1:", `column "data"`}},
		{path: "manifests/unknown-column.csv", want: []string{":1:", `column "colour"`}},
		{path: "manifests/duplicate-name.csv", want: []string{":3:", `column "name"`}},
		{path: "manifests/bad-period.csv", want: []string{":2:", `column "periods"`}},
		{path: "manifests/syntax.toml", want: []string{":3:"}},
		{path: "manifests/long-name.csv", want: []string{":2:", "255 bytes"}},
		{path: fifo, want: []string{"not a regular file"}},
		{path: pipeManifest, file: "pipe.csv", want: []string{"Piped", "named pipe"}},
	}
	for i, c := range manifests {
		runCase(t, c, []string{"survey", "--manifest", c.path, "--out", filepath.Join(tmp, fmt.Sprintf("survey-%d", i)), "--no-gp", "--workers", "1"})
	}
}

// runCase runs one command on one corpus case as a subtest.
func runCase(t *testing.T, c malformedCase, args []string) {
	t.Helper()
	path := c.path
	if !filepath.IsAbs(path) {
		path = filepath.Join(corpusRoot, path)
	}
	args = append([]string(nil), args...)
	for i, a := range args {
		if a == c.path {
			args[i] = path
		}
	}
	name := args[0] + "/" + strings.TrimPrefix(strings.TrimPrefix(c.path, os.TempDir()), "/")
	t.Run(name, func(t *testing.T) {
		code, stdout, stderr := runBounded(t, 20*time.Second, args...)
		checkMessage(t, c, code, stdout, stderr)
	})
}

// TestSurveyBadStars: a survey with one star whose data is a named pipe
// and one whose spectra are a malformed FITS file (the card NAXIS0 that
// once crashed the whole survey): the other star finishes, those two fail
// with their reasons, and the catalogue is written.
func TestSurveyBadStars(t *testing.T) {
	tmp := t.TempDir()
	good := tinyStar(t, tmp, "good", 40, 5.3, 6, 3)
	fifo := filepath.Join(tmp, "pipe.csv")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Fatalf("mkfifo: %v", err)
	}
	spectra, _ := filepath.Abs(filepath.Join(corpusRoot, "spectra", "card-naxis0"))
	manifest := write(t, tmp, "manifest.csv", "name,data\nGood-1,"+good+"\nPiped,"+fifo+"\nBadSpectra,"+spectra+"\n")
	out := filepath.Join(tmp, "out")
	code, stdout, stderr := runBounded(t, 60*time.Second, "survey", "--manifest", manifest, "--out", out, "--no-gp", "--workers", "2")
	if code != exitFailed {
		t.Errorf("exit %d, want 1 (a partial survey)\n%s\n%s", code, stdout, stderr)
	}
	for _, w := range []string{"1 analysed", "2 failed", "failed: Piped: data " + fifo, "named pipe", "failed: BadSpectra: ", "epoch-1.fits: HDU 0: NAXIS0"} {
		if !strings.Contains(stdout, w) {
			t.Errorf("the summary does not say %q:\n%s", w, stdout)
		}
	}
	checkCatalogue(t, out, 1)
}

// TestBadOptionsAndOutputs: options out of range are bad usage (exit 2)
// with a message in the option's own terms; outputs that cannot be written
// are a failure (exit 1), not bad usage.
func TestBadOptionsAndOutputs(t *testing.T) {
	tmp := t.TempDir()
	good := tinyStar(t, tmp, "good", 40, 5.3, 6, 3)
	manifest := write(t, tmp, "manifest.csv", "name,data\nGood-1,"+good+"\n")
	blocker := write(t, tmp, "a-file", "not a folder\n")
	for _, c := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"vet", "--data", good, "--pmin", "-1"}, exitUsage, "--pmin -1: the shortest period searched must be a positive number of days"},
		{[]string{"vet", "--data", good, "--pmax", "-5"}, exitUsage, "--pmax -5"},
		{[]string{"vet", "--data", good, "--pmin", "10", "--pmax", "5"}, exitUsage, "--pmin 10 is not shorter than --pmax 5"},
		{[]string{"vet", "--data", good, "--max-signals", "-1"}, exitUsage, "--max-signals -1"},
		{[]string{"scan", "--data", good, "--pmin", "-1"}, exitUsage, "--pmin -1"},
		{[]string{"survey", "--manifest", manifest, "--out", filepath.Join(tmp, "s"), "--max-signals", "-1"}, exitUsage, "--max-signals -1"},
		{[]string{"survey", "--manifest", manifest, "--out", filepath.Join(tmp, "s"), "--star-timeout", "-1s"}, exitUsage, "--star-timeout"},
		{[]string{"vet", "--data", good, "--no-gp", "--out", filepath.Join(blocker, "report")}, exitFailed, "a-file"},
		{[]string{"survey", "--manifest", manifest, "--out", filepath.Join(blocker, "survey"), "--no-gp"}, exitFailed, "a-file"},
		{[]string{"survey", "merge", "--out", filepath.Join(blocker, "merged"), filepath.Join(tmp, "nothing")}, exitUsage, "nothing"},
	} {
		code, stdout, stderr := runBounded(t, 60*time.Second, c.args...)
		if code != c.code || !strings.Contains(stderr, c.want) {
			t.Errorf("spotsift %s: exit %d, want %d with %q\n%s%s", strings.Join(c.args, " "), code, c.code, c.want, stdout, stderr)
		}
	}
	// A merge that fails leaves no empty stars/ behind.
	out := filepath.Join(tmp, "merged")
	if code, _, _ := runCmd("survey", "merge", "--out", out, filepath.Join(tmp, "nothing")); code != exitUsage {
		t.Errorf("merge of a missing folder: exit %d", code)
	}
	if _, err := os.Stat(filepath.Join(out, "stars")); !os.IsNotExist(err) {
		t.Errorf("a failed merge left %s/stars (%v)", out, err)
	}
}
