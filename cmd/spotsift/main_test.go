package main

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spotsift/activity"
)

// runCmd runs the program with args and returns the exit code and output.
func runCmd(args ...string) (code int, stdout, stderr string) {
	var o, e bytes.Buffer
	code = run(args, &o, &e)
	return code, o.String(), e.String()
}

// shortRows returns twelve epochs within half a day.
func shortRows() string {
	var b strings.Builder
	for i := 0; i < 12; i++ {
		fmt.Fprintf(&b, "%.2f,%d,1\n", 2460000+0.04*float64(i), i%3)
	}
	return b.String()
}

// write puts content into a file in dir and returns its path.
func write(t *testing.T, dir, name, content string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestHelp(t *testing.T) {
	for _, c := range commands {
		code, _, stderr := runCmd(c.name, "-h")
		if code != exitOK {
			t.Errorf("%s -h: exit %d, want 0", c.name, code)
		}
		if !strings.Contains(stderr, "Usage: spotsift "+c.name) || !strings.Contains(stderr, "Flags:") {
			t.Errorf("%s -h: usage text missing:\n%s", c.name, stderr)
		}
	}
	if code, _, stderr := runCmd("help"); code != exitOK || !strings.Contains(stderr, "vet") {
		t.Errorf("help: exit %d\n%s", code, stderr)
	}
	if code, stdout, _ := runCmd("version"); code != exitOK || !strings.HasPrefix(stdout, "spotsift ") {
		t.Errorf("version: exit %d, %q", code, stdout)
	}
}

// TestVersionNamesTheBuild: the version carries the running executable's
// digest beside the release (outputs of two builds of one release are not
// taken for each other), the same at every call.
func TestVersionNamesTheBuild(t *testing.T) {
	exe, err := os.Executable()
	if err != nil {
		t.Skipf("the executable cannot be located here (%v): the version is the release alone", err)
	}
	sum, err := activity.HashFile(exe)
	if err != nil {
		t.Skipf("the executable cannot be read here (%v): the version is the release alone", err)
	}
	if got, want := version(), release+"+"+sum[:12]; got != want {
		t.Errorf("version %q, want %q (the release and the SHA-256 of %s)", got, want, exe)
	}
	if version() != version() {
		t.Error("the version changes between calls")
	}
}

// TestBadInput runs the command line on malformed inputs: each must exit 2
// with its own message naming what is wrong, never panic.
func TestBadInput(t *testing.T) {
	dir := t.TempDir()
	good := "time,rv,rv_err,fwhm\n" +
		"1,1,1,7000\n2,2,1,7001\n3,0,1,7003\n4,1,1,7002\n5,3,1,7004\n6,2,1,7000\n7,1,1,7001\n8,0,1,7005\n9,2,1,7003\n"
	goodPath := write(t, dir, "good.csv", good)
	good20 := "time,rv,rv_err\n"
	for i := 0; i < 20; i++ {
		good20 += fmt.Sprintf("%d,%d,1\n", 2460000+i, (i*7)%5)
	}
	good20Path := write(t, dir, "good20.csv", good20)
	table := func(name, content string) string { return write(t, dir, name, content) }
	star := func(name, content string) string { return write(t, dir, name, content) }
	for _, tt := range []struct {
		name string
		args []string
		want string // a fragment of stderr
	}{
		{"no command", nil, "Usage: spotsift"},
		{"unknown command", []string{"frobnicate"}, `unknown command "frobnicate"`},
		{"unknown flag", []string{"scan", "--bogus"}, "flag provided but not defined: -bogus"},
		{"stray argument", []string{"scan", "--data", goodPath, "extra"}, `unexpected argument "extra"`},
		{"no data flag", []string{"scan"}, "--data is required"},
		{"data file absent", []string{"scan", "--data", filepath.Join(dir, "nope.csv")}, "no such file or directory"},
		{"data is a folder", []string{"vet", "--data", dir}, "a folder, not a file"},
		{"empty table", []string{"scan", "--data", table("empty.csv", "")}, "the file is empty"},
		{"no rows", []string{"scan", "--data", table("hdr.csv", "time,rv,rv_err\n")}, "header but no rows"},
		{"missing column", []string{"scan", "--data", table("nocol.csv", "time,rv\n1,2\n")}, `column "rv_err": rvfit: missing required column`},
		{"non-numeric cell", []string{"model", "--data", table("txt.csv", "time,rv,rv_err\n1,2,1\n2,x7,1\n")}, `txt.csv:3: column "rv": rvfit: not a number: "x7"`},
		{"NaN cell", []string{"scan", "--data", table("nan.csv", "time,rv,rv_err\n1,2,1\n2,NaN,1\n")}, `nan.csv:3: column "rv": rvfit: value is NaN or infinite`},
		{"Inf cell", []string{"scan", "--data", table("inf.csv", "time,rv,rv_err\n1,2,1\n+Inf,3,1\n")}, `inf.csv:3: column "time"`},
		{"zero error", []string{"scan", "--data", table("zero.csv", "time,rv,rv_err\n1,2,0\n2,3,1\n")}, `zero.csv:2: column "rv_err": rvfit: uncertainty is zero or negative`},
		{"negative indicator error", []string{"scan", "--data", table("negi.csv", "time,rv,rv_err,bis,bis_err\n1,2,1,3,-2\n2,3,1,4,1\n")}, `negi.csv:2: column "bis_err"`},
		{"duplicate epoch", []string{"scan", "--data", table("dup.csv", "time,rv,rv_err\n1,2,1\n1,3,1\n")}, `dup.csv:3: column "time": rvfit: duplicate epoch: time 1 for instrument "default" already on line 2`},
		{"constant rv", []string{"scan", "--data", table("const.csv", "time,rv,rv_err\n1,2,1\n2,2,1\n3,2,1\n4,2,1\n")}, `column "rv": rvfit: column is constant`},
		{"field count", []string{"scan", "--data", table("fc.csv", "time,rv,rv_err\n1,2,1\n2,3\n")}, "fc.csv:3: rvfit: wrong number of fields"},
		{"too few epochs", []string{"vet", "--data", table("few.csv", "time,rv,rv_err\n1,2,1\n2,3,1\n3,1,1\n")}, "rvfit: too few epochs: vet needs at least 12, have 3"},
		{"too few for planets", []string{"model", "--data", goodPath, "--planets", "2"}, "model needs at least 13"},
		{"negative planets", []string{"model", "--data", goodPath, "--planets", "-1"}, "--planets must be 0 or more"},
		{"bad column map", []string{"scan", "--data", goodPath, "--columns", "rv"}, `--columns: rvfit: bad column mapping: "rv" is not of the form ours=theirs`},
		{"mapped column absent", []string{"scan", "--data", goodPath, "--columns", "rv=vrad"}, `column "vrad": rvfit: missing required column: --columns maps "rv" onto it`},
		{"bad rv unit", []string{"scan", "--data", goodPath, "--rv-unit", "mph"}, `rvfit: unknown unit "mph" for a velocity`},
		{"truncated FITS", []string{"scan", "--data", table("trunc.fits", "SIMPLE  =                    T / truncated")}, "trunc.fits: rvfit: bad table format: HDU 1: header is truncated (no END card)"},
		{"star unknown key", []string{"vet", "--data", goodPath, "--star", star("s1.toml", "name = \"A\"\nbv = 0.6\n")}, `s1.toml:2: key "bv": unknown key`},
		{"star out of range", []string{"vet", "--data", goodPath, "--star", star("s2.toml", "name = \"A\"\nb_v = 9.5\n")}, `s2.toml:2: key "b_v": 9.5 is out of range`},
		{"star syntax", []string{"vet", "--data", goodPath, "--star", star("s3.toml", "name = \"A\nb_v = 0.6\n")}, "s3.toml:1:"},
		{"star wrong type", []string{"vet", "--data", goodPath, "--star", star("s4.toml", "name = \"A\"\nmass = \"heavy\"\n")}, "s4.toml"},
		{"star without name", []string{"vet", "--data", goodPath, "--star", star("s5.toml", "b_v = 0.6\n")}, `key "name": missing`},
		{"star file absent", []string{"vet", "--data", goodPath, "--star", filepath.Join(dir, "none.toml")}, "none.toml: no such file"},
		{"bad seed", []string{"vet", "--data", goodPath, "--seed", "-3"}, `invalid value "-3" for flag -seed`},
		{"bad fap", []string{"vet", "--data", good20Path, "--fap", "2"}, "activity: bad option: false-alarm threshold 2"},
		{"bad period list", []string{"vet", "--data", good20Path, "--period", "12,x"}, `--period: "x" is not a number of days`},
		{"period out of reach", []string{"vet", "--data", good20Path, "--period", "500"}, "activity: period outside the data's reach"},
		{"half-day baseline", []string{"vet", "--data", table("short.csv", "time,rv,rv_err\n"+shortRows())}, "are an empty range"},
	} {
		t.Run(tt.name, func(t *testing.T) {
			code, stdout, stderr := runCmd(tt.args...)
			if code != exitUsage {
				t.Errorf("exit %d, want %d; stderr:\n%s", code, exitUsage, stderr)
			}
			if !strings.Contains(stderr, tt.want) {
				t.Errorf("stderr does not say %q:\n%s", tt.want, stderr)
			}
			if strings.Contains(stderr, "goroutine ") || strings.Contains(stderr, "panic") {
				t.Errorf("stack trace on stderr:\n%s", stderr)
			}
			if stdout != "" && tt.args != nil && tt.args[0] != "help" {
				t.Errorf("bad input wrote to stdout: %q", stdout)
			}
		})
	}
}
