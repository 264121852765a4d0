package rvfit

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
	"unicode/utf16"
)

// Each layout a user meets reads to the same three epochs. The values
// (times, RVs in m/s, errors) are the expected ones, written by hand.
var layoutWant = struct{ t, rv, e []float64 }{
	[]float64{2455000.5, 2455001.5, 2455003.25},
	[]float64{-3.5, 1.25, 4},
	[]float64{1.1, 0.9, 1.3},
}

func TestLayouts(t *testing.T) {
	for _, c := range []struct {
		name, in string
		opts     *ReadOptions
	}{
		{"comma with header", "time,rv,rv_err\n2455000.5,-3.5,1.1\n2455001.5,1.25,0.9\n2455003.25,4,1.3\n", nil},
		{"tab with header", "time\trv\trv_err\n2455000.5\t-3.5\t1.1\n2455001.5\t1.25\t0.9\n2455003.25\t4\t1.3\n", nil},
		{"blanks, no header", "2455000.5  -3.5 1.1\n 2455001.5 1.25  0.9\n2455003.25\t4 1.3\n", nil},
		{"no header, columns by position", "x 1.1 -3.5 2455000.5\n", nil}, // replaced below
		{"rdb: header and dashes", "rjd\tvrad\tsvrad\n---\t----\t-----\n55000\t-3.5\t1.1\n55001\t1.25\t0.9\n55002.75\t4\t1.3\n", &ReadOptions{TimeZero: "2400000.5"}},
		{"VizieR TSV: header, units, dashes", "BJD\tRV\te_RV\nd\tkm/s\tkm/s\n---\t---\t---\n2455000.5\t-0.0035\t0.0011\n2455001.5\t0.00125\t0.0009\n2455003.25\t0.004\t0.0013\n", nil},
		{"comment block and units comment", "# a table\n# units: rv=km/s\n#\nBJD,RV,RV_err\n# inside\n2455000.5,-0.0035,0.0011\n2455001.5,0.00125,0.0009\n2455003.25,0.004,0.0013\n", nil},
		{"quoted fields", "\"time\",\"rv\",\"rv_err\",\"target\"\n2455000.5,-3.5,1.1,\"HD 1, A\"\n2455001.5,1.25,0.9,\"HD 1, A\"\n2455003.25,4,1.3,\"x\"\"y\"\n", nil},
		{"quoted blanks", "time rv rv_err target\n2455000.5 -3.5 1.1 \"HD 1\"\n2455001.5 1.25 0.9 \"HD 1\"\n2455003.25 4 1.3 \"HD  2\"\n", nil},
		{"unnamed index column", ",time,rv,rv_err\n0,2455000.5,-3.5,1.1\n1,2455001.5,1.25,0.9\n2,2455003.25,4,1.3\n", nil},
		{"row names one cell short", "time,rv,rv_err\n\"a\",2455000.5,-3.5,1.1\n\"b\",2455001.5,1.25,0.9\n\"c\",2455003.25,4,1.3\n", nil},
		{"units in the header", "BJD (d),RV [km/s],e_RV [km/s]\n2455000.5,-0.0035,0.0011\n2455001.5,0.00125,0.0009\n2455003.25,0.004,0.0013\n", nil},
		{"CR line endings", "time,rv,rv_err\r2455000.5,-3.5,1.1\r2455001.5,1.25,0.9\r2455003.25,4,1.3\r", nil},
		{"CRLF line endings", "time,rv,rv_err\r\n2455000.5,-3.5,1.1\r\n2455001.5,1.25,0.9\r\n2455003.25,4,1.3\r\n", nil},
		{"VizieR fixed width", `#Title: test
#---Details of Columns:
    BJD (d)     (F10.2) [2455000/2455004] Julian date
    RVel (m/s)  (F6.2)  Radial velocity
    e_RVel (m/s) (F4.1) Uncertainty
---------- ------ ----
                   e_RV
BJD (d)    RVel   el   
---------- ------ ----
2455000.50  -3.50  1.1
2455001.50   1.25  0.9
2455003.25   4.00  1.3
`, nil},
		{"MJD by name", "MJD,rv,rv_err\n55000,-3.5,1.1\n55001,1.25,0.9\n55002.75,4,1.3\n", nil},
		{"offset in the name", "BJD-2450000,RV,sig_RV\n5000.5,-3.5,1.1\n5001.5,1.25,0.9\n5003.25,4,1.3\n", nil},
		{"RJD by values", "date,rv,rv_err\n55000.5,-3.5,1.1\n55001.5,1.25,0.9\n55003.25,4,1.3\n", nil},
	} {
		t.Run(c.name, func(t *testing.T) {
			in, opts := c.in, c.opts
			if c.name == "no header, columns by position" {
				in = "1.1 -3.5 2455000.5\n0.9 1.25 2455001.5\n1.3 4 2455003.25\n"
				opts = &ReadOptions{Columns: map[string]string{"time": "3", "rv": "2", "rv_err": "1"}}
			}
			s, warns, err := ReadTableFrom(strings.NewReader(in), "l.txt", opts)
			if err != nil {
				t.Fatal(err)
			}
			for i := range layoutWant.t {
				if s.Len() != 3 || math.Abs(s.Time[i]-layoutWant.t[i]) > 1e-9 || math.Abs(s.RV[i]-layoutWant.rv[i]) > 1e-9 || math.Abs(s.RVErr[i]-layoutWant.e[i]) > 1e-9 {
					t.Fatalf("read %v %v %v; notes %q warnings %q", s.Time, s.RV, s.RVErr, s.Notes, warns)
				}
			}
			if len(s.Indicators) != 0 {
				t.Errorf("indicators %v from a table without any", indicatorNamesOf(s))
			}
		})
	}
}

// Uncertainty columns pair with their values by every common pattern; the
// paired column is never an indicator of its own.
func TestErrorPairing(t *testing.T) {
	for _, name := range []string{"fwhm_err", "fwhm_error", "fwhmerr", "e_fwhm", "efwhm", "err_fwhm", "sig_fwhm", "sigfwhm", "sigma_fwhm", "dfwhm", "d_fwhm", "sfwhm", "s_fwhm", "FWHM_sig", "fwhm_unc", "E_FWHM"} {
		in := "time,rv,rv_err,FWHM," + name + "\n1,1,1,7000,2\n2,2,1,7010,3\n3,0,1,7005,4\n"
		s, _, err := ReadTableFrom(strings.NewReader(in), "p.csv", nil)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		f := s.Indicator("fwhm")
		if len(s.Indicators) != 1 || f == nil || f.Err == nil || f.Err[2] != 4 {
			t.Errorf("%s: indicators %v (%+v)", name, indicatorNamesOf(s), f)
		}
	}
	// The RV error pairs the same way with a pipeline's RV column name.
	s, _, err := ReadTableFrom(strings.NewReader("BJD,RV_mlc_nzp,e_RV_mlc_nzp,RV_drs,e_RV_drs\n1,1,1,5,9\n2,2,1,6,9\n3,0,2,7,9\n"), "p.csv", nil)
	if err != nil || s.RVErr[2] != 2 || s.RV[0] != 1 {
		t.Fatalf("pipeline RV columns: %v %v", s, err)
	}
	if !strings.Contains(strings.Join(s.Notes, " "), "ignored: RV_drs, e_RV_drs") {
		t.Errorf("notes %q do not list the other RV columns as ignored", s.Notes)
	}
}

// Unrecognised, text and constant columns are ignored and listed; only
// recognised names (or those the user names) become indicators.
func TestColumnRoles(t *testing.T) {
	in := "Num,target,ra,BJD,RVel,e_RVel,SVal,Halpha,weird,mask\n" +
		"1,HD 1,53.2,2455000.5,1,1,0.17,0.031,5,G2\n2,HD 1,53.2,2455001.5,2,1,0.18,0.032,6,G2\n3,HD 1,53.2,2455002.5,0,1,0.19,0.030,7,K5\n"
	s, _, err := ReadTableFrom(strings.NewReader(in), "r.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	if got := indicatorNamesOf(s); got != "s_index,halpha" {
		t.Errorf("indicators %q, want s_index,halpha", got)
	}
	notes := strings.Join(s.Notes, "\n")
	for _, w := range []string{"time=BJD", "rv=RVel", "rv_err=e_RVel", "s_index=SVal", "ignored: Num, target, ra, weird, mask"} {
		if !strings.Contains(notes, w) {
			t.Errorf("notes %q lack %q", notes, w)
		}
	}
	// --indicators names the only indicators, renaming with ours=theirs.
	s, _, err = ReadTableFrom(strings.NewReader(in), "r.csv", &ReadOptions{Indicators: []string{"weird", "halpha=Halpha"}})
	if err != nil || indicatorNamesOf(s) != "weird,halpha" {
		t.Fatalf("with --indicators: %v %v", indicatorNamesOf(s), err)
	}
	// Naming a text column is an error at its first text cell.
	_, _, err = ReadTableFrom(strings.NewReader(in), "r.csv", &ReadOptions{Indicators: []string{"mask"}})
	var te *TableError
	if !errors.Is(err, ErrNotNumber) || !errors.As(err, &te) || te.Line != 2 || te.Column != "mask" {
		t.Errorf("text indicator: %v", err)
	}
	// Naming an absent column says which columns there are.
	_, _, err = ReadTableFrom(strings.NewReader(in), "r.csv", &ReadOptions{Indicators: []string{"bis"}})
	if !errors.Is(err, ErrMissingColumn) || !strings.Contains(err.Error(), "it has Num, target") {
		t.Errorf("absent indicator: %v", err)
	}
}

func TestSentinels(t *testing.T) {
	// -1 in a positive quantity, -9999999 anywhere far outside the spread.
	in := "time,rv,rv_err,halpha,bis\n" +
		"1,1,1,-1,-9999999\n2,2,1,0.031,12\n3,0,1,0.032,-9999999\n4,1,1,-1,13\n5,3,1,0.030,11\n6,2,1,0.033,10\n7,1,1,0.029,14\n8,0,1,0.034,9\n"
	s, warns, err := ReadTableFrom(strings.NewReader(in), "s.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	h, b := s.Indicator("halpha"), s.Indicator("bis")
	if h.Count() != 6 || b.Count() != 6 || !math.IsNaN(h.Value[0]) || !math.IsNaN(b.Value[2]) {
		t.Errorf("halpha %v bis %v", h.Value, b.Value)
	}
	w := strings.Join(warns, "\n")
	for _, want := range []string{`column "halpha": -1 taken as "not measured" in 2 rows (first on line 2`, `column "bis": -9999999 taken as "not measured" in 2 rows`} {
		if !strings.Contains(w, want) {
			t.Errorf("warnings %q lack %q", w, want)
		}
	}
	// A genuine repeated value inside the spread, or at its edge with the
	// rest close by, is kept: no false sentinel.
	in = "time,rv,rv_err,s_index,bis\n" +
		"1,1,1,0.170,5\n2,2,1,0.170,5\n3,0,1,0.171,6\n4,1,1,0.175,7\n5,3,1,0.170,8\n6,2,1,0.180,9\n7,1,1,0.169,-2\n8,0,1,0.172,-2\n"
	s, warns, err = ReadTableFrom(strings.NewReader(in), "s.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	if s.Indicator("s_index").Count() != 8 || s.Indicator("bis").Count() != 8 {
		t.Errorf("genuine values taken as sentinels: %q", warns)
	}
	// Declared missing values are missing, in any column; in a required
	// column the row is left out and said so.
	in = "time,rv,rv_err,bis\n1,1,1,5\n2,-99,1,6\n3,0,1,-99\n4,2,1,7\n"
	s, warns, err = ReadTableFrom(strings.NewReader(in), "m.csv", &ReadOptions{Missing: []string{"-99"}})
	if err != nil || s.Len() != 3 || s.Indicator("bis").Count() != 2 || !strings.Contains(strings.Join(warns, " "), "1 rows left out: column \"rv\" holds a value declared missing (first on line 3)") {
		t.Errorf("declared missing: %v %q %v", s, warns, err)
	}
}

func TestUnitsAndScales(t *testing.T) {
	in := "# units: fwhm=km/s\ntime,rv,rv_err,fwhm,bis,contrast,RHKp,dRHKp,s_index\n" +
		"1,0.001,0.0005,7.1,0.010,45,1e-5,1e-7,0.17\n2,0.002,0.0005,7.2,0.011,46,2e-5,1e-7,0.18\n3,0.0015,0.0005,7.0,0.012,44,1.5e-5,1e-7,0.19\n"
	s, _, err := ReadTableFrom(strings.NewReader(in), "u.csv", &ReadOptions{RVUnit: "km/s", Units: map[string]string{"bis": "km/s"}})
	if err != nil {
		t.Fatal(err)
	}
	// Expected values: km/s × 1000; per cent / 100; log10 of linear R'HK,
	// σ(log R) = σ(R) / (R ln 10) (error propagation).
	if s.RV[1] != 2 || s.RVErr[0] != 0.5 {
		t.Errorf("rv %v rv_err %v", s.RV, s.RVErr)
	}
	if f := s.Indicator("fwhm"); f.Value[0] != 7100 || f.Unit != "m/s" {
		t.Errorf("fwhm %+v", f)
	}
	if b := s.Indicator("bis"); math.Abs(b.Value[2]-12) > 1e-12 {
		t.Errorf("bis %+v", b)
	}
	if c := s.Indicator("contrast"); math.Abs(c.Value[0]-0.45) > 1e-12 || c.Unit != "" {
		t.Errorf("contrast %+v", c)
	}
	r := s.Indicator("log_rhk")
	if r == nil || math.Abs(r.Value[0]+5) > 1e-12 || math.Abs(r.Err[0]-1e-7/(1e-5*math.Ln10)) > 1e-15 || r.Unit != "dex" {
		t.Errorf("log_rhk %+v", r)
	}
	if !strings.Contains(strings.Join(s.Notes, " "), "S-index on the scale the table gives") {
		t.Errorf("notes %q do not state the S-index scale", s.Notes)
	}
	// A FWHM given without unit, near 7, is in km/s; BIS of that table too.
	s, warns, err := ReadTableFrom(strings.NewReader("time,rv,rv_err,FWHM_DRS,BIS\n1,1,1,7.1,0.01\n2,2,1,7.2,0.02\n3,1,1,7.0,0.015\n"), "u.csv", nil)
	if err != nil || s.Indicator("fwhm").Value[1] != 7200 || math.Abs(s.Indicator("bis").Value[1]-20) > 1e-12 || len(warns) != 2 {
		t.Errorf("inferred km/s: %v %q %v", s, warns, err)
	}
}

// Rows flagged bad are left out; splits give a zero point of its own.
func TestRejectAndSplit(t *testing.T) {
	in := "BJD,RV,e_RV,f_RV,prog\n2455000,1,1,0,A\n2455001,2,1,1,B\n2455002,3,1,0,B\n2455003,4,1,0,A\n2455004,5,1,0,A\n"
	s, warns, err := ReadTableFrom(strings.NewReader(in), "f.csv", &ReadOptions{RejectIf: []string{"f_RV!=0", "prog == B"}})
	if err != nil || s.Len() != 3 || s.RV[1] != 4 || len(warns) != 2 {
		t.Fatalf("reject: %v %q %v", s, warns, err)
	}
	if err := s.SplitAt("", 2455003.5); err != nil {
		t.Fatal(err)
	}
	if got := strings.Join(s.Instrument, ","); got != "default,default,default@2455003.5" {
		t.Errorf("split labels %s", got)
	}
	for _, bad := range []struct {
		label string
		at    float64
	}{{"HIRES", 2455000}, {"default", 2456000}, {"default", 2454000}} {
		if err := s.SplitAt(bad.label, bad.at); !errors.Is(err, ErrBadMapping) {
			t.Errorf("SplitAt(%s, %v) = %v", bad.label, bad.at, err)
		}
	}
	for _, spec := range []string{"f_RV", "!=0", "f_RV<x"} {
		if _, _, err := ReadTableFrom(strings.NewReader(in), "f.csv", &ReadOptions{RejectIf: []string{spec}}); !errors.Is(err, ErrBadMapping) {
			t.Errorf("--reject-if %q: %v", spec, err)
		}
	}
	if l, at, err := ParseSplit("HIRES@2453236.5"); err != nil || l != "HIRES" || at != 2453236.5 {
		t.Errorf("ParseSplit: %q %v %v", l, at, err)
	}
}

// Input that is not a table ends with a clear error, never a hang, a
// crash, or raw binary bytes in the message.
func TestHostileInput(t *testing.T) {
	utf16le := func(s string) []byte {
		b := []byte{0xFF, 0xFE}
		for _, u := range utf16.Encode([]rune(s)) {
			b = append(b, byte(u), byte(u>>8))
		}
		return b
	}
	good := "time,rv,rv_err\n1,1,1\n2,2,1\n3,0,1\n"
	// UTF-16 with a byte-order mark is decoded and said so.
	s, _, err := ReadTableFrom(bytes.NewReader(utf16le(good)), "w.csv", nil)
	if err != nil || s.Len() != 3 || !strings.Contains(strings.Join(s.Notes, " "), "UTF-16") {
		t.Fatalf("UTF-16: %v %v", s, err)
	}
	for _, c := range []struct {
		name string
		in   []byte
		want error
		line int
		text string
	}{
		{"NUL byte", []byte("time,rv,rv_err\n1,1\x00,1\n"), ErrBadFormat, 2, "NUL byte"},
		{"UTF-16 without BOM", utf16le(good)[2:], ErrBadFormat, 1, "NUL byte"},
		{"long line", []byte("time,rv,rv_err\n" + strings.Repeat("1", maxLineBytes+10) + "\n"), ErrBadFormat, 2, "longer than"},
		{"binary bytes", []byte("time,rv,rv_err\n1,\x1b[31m\x7f,1\n"), ErrBadFormat, 2, "binary data at byte 3 of the line (control character 0x1b)"},
		{"control characters in the header", []byte("\x16\x16\x16\n1\n"), ErrBadFormat, 1, "binary data at byte 1"},
		{"huge rv", []byte("time,rv,rv_err\n1,1e300,1\n2,-1e300,1\n"), ErrImplausible, 2, "faster than light"},
		{"tiny error", []byte("time,rv,rv_err\n1,1,5e-324\n2,2,1\n"), ErrImplausible, 2, "not a measured one"},
		{"time 1e308", []byte("time,rv,rv_err\n2455000,1,1\n1e308,2,1\n2455002,3,1\n"), ErrImplausible, 3, "Julian date"},
		{"time mixed", []byte("time,rv,rv_err\n2455000,1,1\n2455001,2,1\n1500000,3,1\n"), ErrImplausible, 4, "Julian date"},
		{"huge indicator", []byte("time,rv,rv_err,bis\n1,1,1,1.7e308\n2,2,1,1\n"), ErrImplausible, 2, "bis"},
		{"too many columns", []byte(strings.Repeat("c,", maxColumns) + "c\n"), ErrBadFormat, 1, "columns"},
		{"a million columns", []byte(strings.Repeat("col,", 1000000) + "c\n"), ErrBadFormat, 1, "longer than"},
		{"bad last line", bigThenBad(), ErrNotNumber, 100002, "rv"},
	} {
		_, _, err := ReadTableFrom(bytes.NewReader(c.in), "h.csv", nil)
		var te *TableError
		if !errors.Is(err, c.want) || !errors.As(err, &te) || te.Line != c.line || !strings.Contains(err.Error(), c.text) {
			t.Errorf("%s: %v, want %v on line %d saying %q", c.name, err, c.want, c.line, c.text)
		}
		if err != nil && (strings.ContainsAny(err.Error(), "\x00\x1b\x7f") || strings.Contains(err.Error(), "token too long")) {
			t.Errorf("%s: raw bytes or scanner jargon in %q", c.name, err)
		}
	}
}

// Only regular files are read: a FIFO or a device is refused at once.
func TestReadTableNotRegular(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "pipe.csv")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Skipf("no named pipes here: %v", err)
	}
	for _, p := range []string{fifo, "/dev/zero", dir} {
		done := make(chan error, 1)
		go func() { _, _, err := ReadTable(p, nil); done <- err }()
		select {
		case err := <-done:
			if !errors.Is(err, ErrNotRegular) {
				t.Errorf("%s: %v, want ErrNotRegular", p, err)
			}
		case <-time.After(10 * time.Second):
			t.Fatalf("%s: reading blocks", p)
		}
	}
	if _, err := os.Stat("/dev/zero"); err != nil {
		t.Log("no /dev/zero here")
	}
}

// bigThenBad is a table of 100,000 good rows and a bad last line.
func bigThenBad() []byte {
	var b bytes.Buffer
	b.WriteString("time,rv,rv_err\n")
	for i := 0; i < 100000; i++ {
		b.WriteString(formatFloat(2455000.5+float64(i)*0.01) + ",1,1\n")
	}
	b.WriteString("2456000.5,x,1\n")
	return b.Bytes()
}
