package rvfit

import (
	"bytes"
	"errors"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// awkward holds values whose shortest decimal form is long or unusual, so
// that a lossy writer shows up in the round trip.
var awkward = []float64{0.1 + 0.2, 1e-300, -2.5e-7, 5e-324, 123456789.123456789, 1.0 / 3, math.Nextafter(1, 2)}

// roundTripSeries is a series with every kind of column: instruments,
// an indicator with errors and a missing value, and one without errors.
func roundTripSeries() *Series {
	n := len(awkward)
	s := &Series{Name: "mem"}
	for i := 0; i < n; i++ {
		s.Time = append(s.Time, 2460000.5+float64(i)*1.0000000001+awkward[i]*1e-12)
		s.RV = append(s.RV, -1234.5678901234+awkward[i])
		s.RVErr = append(s.RVErr, 0.5+math.Abs(awkward[i]))
		s.Instrument = append(s.Instrument, []string{"NORTH-1", "south 2", `q"uote,comma`}[i%3])
	}
	fwhm := Indicator{Name: "fwhm", Unit: "m/s", Value: make([]float64, n), Err: make([]float64, n)}
	sidx := Indicator{Name: "s_index", Value: make([]float64, n)}
	for i := 0; i < n; i++ {
		fwhm.Value[i] = 7100 + awkward[(i+1)%n]
		fwhm.Err[i] = 2 + awkward[(i+2)%n]*1e-3
		sidx.Value[i] = 0.17 + awkward[(i+3)%n]
	}
	fwhm.Value[2], fwhm.Err[2] = math.NaN(), math.NaN()
	sidx.Value[4] = math.NaN()
	s.Indicators = []Indicator{fwhm, sidx}
	return s
}

// sameSeries reports the first difference between two series, bit for bit.
func sameSeries(t *testing.T, got, want *Series) {
	t.Helper()
	eq := func(what string, a, b []float64) {
		t.Helper()
		if len(a) != len(b) {
			t.Fatalf("%s: %d values, want %d", what, len(a), len(b))
		}
		for i := range a {
			if math.Float64bits(a[i]) != math.Float64bits(b[i]) && !(math.IsNaN(a[i]) && math.IsNaN(b[i])) {
				t.Fatalf("%s[%d] = %v, want %v (bits differ)", what, i, a[i], b[i])
			}
		}
	}
	eq("time", got.Time, want.Time)
	eq("rv", got.RV, want.RV)
	eq("rv_err", got.RVErr, want.RVErr)
	if strings.Join(got.Instrument, "|") != strings.Join(want.Instrument, "|") {
		t.Fatalf("instruments %q, want %q", got.Instrument, want.Instrument)
	}
	if len(got.Indicators) != len(want.Indicators) {
		t.Fatalf("%d indicators, want %d", len(got.Indicators), len(want.Indicators))
	}
	for k := range want.Indicators {
		g, w := got.Indicators[k], want.Indicators[k]
		if g.Name != w.Name || g.Unit != w.Unit {
			t.Fatalf("indicator %d is %q [%s], want %q [%s]", k, g.Name, g.Unit, w.Name, w.Unit)
		}
		eq(w.Name, g.Value, w.Value)
		if (g.Err == nil) != (w.Err == nil) {
			t.Fatalf("%s: has errors %v, want %v", w.Name, g.Err != nil, w.Err != nil)
		}
		if w.Err != nil {
			eq(w.Name+"_err", g.Err, w.Err)
		}
	}
}

func TestRoundTripCSVFITSCSV(t *testing.T) {
	want := roundTripSeries()
	var csv1 bytes.Buffer
	if err := WriteCSV(&csv1, want, &WriteOptions{Creator: "spotsift test"}); err != nil {
		t.Fatal(err)
	}
	s1, warns, err := ReadCSV(bytes.NewReader(csv1.Bytes()), "one.csv", nil)
	if err != nil || len(warns) != 0 {
		t.Fatalf("read CSV: %v %v", err, warns)
	}
	sameSeries(t, s1, want)
	var fits bytes.Buffer
	if err := WriteFITSTable(&fits, s1, &WriteOptions{Creator: "spotsift test"}); err != nil {
		t.Fatal(err)
	}
	if fits.Len()%2880 != 0 {
		t.Errorf("FITS file is %d bytes, not whole 2880-byte blocks", fits.Len())
	}
	s2, _, err := ReadTableFrom(bytes.NewReader(fits.Bytes()), "two.fits", nil)
	if err != nil {
		t.Fatal(err)
	}
	sameSeries(t, s2, want)
	var csv2 bytes.Buffer
	if err := WriteCSV(&csv2, s2, &WriteOptions{Creator: "spotsift test"}); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(csv1.Bytes(), csv2.Bytes()) {
		t.Errorf("CSV after the FITS round trip differs:\n%s\nwant\n%s", csv2.Bytes(), csv1.Bytes())
	}
}

func TestWriteTableAtomic(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "epochs.fits")
	if err := WriteTable(path, roundTripSeries(), nil); err != nil {
		t.Fatal(err)
	}
	before, _ := os.ReadFile(path)
	bad := roundTripSeries()
	bad.RV = bad.RV[:2] // mismatched: the write must fail and leave the file alone
	if err := WriteTable(path, bad, nil); !errors.Is(err, ErrMismatch) {
		t.Fatalf("writing a broken series: err = %v, want ErrMismatch", err)
	}
	after, _ := os.ReadFile(path)
	if !bytes.Equal(before, after) {
		t.Error("a failed write changed the existing file")
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 {
		t.Errorf("folder holds %d entries after a failed write, want 1 (no temporary left)", len(ents))
	}
}

// TestFitsverify runs the FITS validator of HEASARC (Debian package
// fitsverify) on a table we write: no errors and no warnings allowed.
func TestFitsverify(t *testing.T) {
	exe, err := exec.LookPath("fitsverify")
	if err != nil {
		t.Skip("fitsverify not installed (Debian package fitsverify); .ci/run installs it")
	}
	path := filepath.Join(t.TempDir(), "epochs.fits")
	if err := WriteTable(path, roundTripSeries(), &WriteOptions{Creator: "spotsift test"}); err != nil {
		t.Fatal(err)
	}
	out, _ := exec.Command(exe, path).CombinedOutput()
	if !strings.Contains(string(out), "Verification found 0 warning(s) and 0 error(s)") {
		t.Errorf("fitsverify:\n%s", out)
	}
}

// TestReadAstropyTable reads a table written by astropy 5.2.1 (Debian
// python3-astropy) with testdata/table/make_astropy_table.py; the expected
// values are the script's own numbers, in m/s.
func TestReadAstropyTable(t *testing.T) {
	s, warns, err := ReadTable("../testdata/table/astropy_epochs.fits", nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(warns) != 0 {
		t.Errorf("warnings: %v", warns)
	}
	km := func(x float64) float64 { return x * 1000 } // at run time, as the reader does
	want := &Series{
		Time:       []float64{2460100.5, 2460101.52, 2460103.49, 2460104.51},
		RV:         []float64{km(-12.3405), km(-12.3391), km(-12.3412), km(-12.3398)},
		RVErr:      []float64{km(0.0011), km(0.0012), km(0.0010), km(0.0013)},
		Instrument: []string{"NORTH-1", "NORTH-1", "SOUTH-2", "NORTH-1"},
		Indicators: []Indicator{
			// float32 in the file: the values are float32(x) widened, times 1000.
			{Name: "fwhm", Unit: "m/s", Value: []float64{km(float64(float32(7.12))), km(float64(float32(7.15))), km(float64(float32(7.11))), km(float64(float32(7.18)))}},
			{Name: "s_index", Value: []float64{0.171, math.NaN(), 0.169, 0.175}},
		},
	}
	sameSeries(t, s, want)
	// NIGHT is not a recognised indicator: listed as ignored, not read.
	if !strings.Contains(strings.Join(s.Notes, "\n"), "ignored: NIGHT") {
		t.Errorf("notes %q do not list NIGHT as ignored", s.Notes)
	}
}

// TestAstropyReadsOurs has astropy read a table we write, when Debian's
// python3-astropy is at hand.
func TestAstropyReadsOurs(t *testing.T) {
	py := "/usr/bin/python3"
	if err := exec.Command(py, "-c", "import astropy.table").Run(); err != nil {
		t.Skip("python3-astropy not installed; .ci/run installs it")
	}
	path := filepath.Join(t.TempDir(), "epochs.fits")
	s := roundTripSeries()
	if err := WriteTable(path, s, nil); err != nil {
		t.Fatal(err)
	}
	script := `
import sys, numpy as np
from astropy.table import Table
t = Table.read(sys.argv[1], hdu="EPOCHS")
print(repr(float(t["rv"][3])), t["instrument"][2], str(t["rv"].unit), int(bool(np.ma.is_masked(t["fwhm"][2]) or np.isnan(t["fwhm"][2]))))
`
	out, err := exec.Command(py, "-c", script, path).CombinedOutput()
	if err != nil {
		t.Fatalf("astropy: %v\n%s", err, out)
	}
	want := formatFloat(s.RV[3]) + " " + s.Instrument[2] + " m / s 1"
	if got := strings.TrimSpace(string(out)); got != want {
		t.Errorf("astropy read %q, want %q", got, want)
	}
}

func TestColumnsAndUnits(t *testing.T) {
	in := "# units: vrad=km/s, svrad=km/s, fwhm=km/s\n" +
		"bjd\tvrad\tsvrad\tfwhm\tfwhm_err\n" +
		"10.0\t1.0\t0.002\t7.0\t0.003\n" +
		"11.0\t1.001\t0.002\t7.1\t0.003\n"
	cols, err := ParseColumnMap("time=bjd, rv=vrad,rv_err=svrad")
	if err != nil {
		t.Fatal(err)
	}
	s, _, err := ReadCSV(strings.NewReader(in), "t.tsv", &ReadOptions{Columns: cols})
	if err != nil {
		t.Fatal(err)
	}
	// Expected: km/s times 1000 (definition of the units).
	km := func(x float64) float64 { return x * 1000 }
	if s.RV[1] != km(1.001) || s.RVErr[0] != km(0.002) || s.Indicator("fwhm").Value[1] != km(7.1) || s.Indicator("fwhm").Err[0] != km(0.003) {
		t.Errorf("units not applied: rv %v rv_err %v fwhm %+v", s.RV, s.RVErr, s.Indicator("fwhm"))
	}
	if s.Instrument[0] != DefaultInstrument {
		t.Errorf("instrument = %q, want %q", s.Instrument[0], DefaultInstrument)
	}
	// The flag overrides the file's comment.
	s, _, err = ReadCSV(strings.NewReader(in), "t.tsv", &ReadOptions{Columns: cols, RVUnit: "m/s"})
	if err != nil || s.RV[1] != 1.001 {
		t.Errorf("RVUnit m/s: rv %v, err %v", s.RV, err)
	}
}

// A constant indicator is left out with a warning naming it (it used to
// fail the table; archive files often hold such columns).
func TestConstantIndicatorLeftOut(t *testing.T) {
	s, warns, err := ReadCSV(strings.NewReader("time,rv,rv_err,fwhm\n1,5,1,7000\n2,6,1,7000\n3,4,1,\n"), "c.csv", nil)
	if err != nil || s.Indicator("fwhm") != nil || len(warns) != 1 || !strings.Contains(warns[0], `column "fwhm" left out: rvfit: column is constant: every value is 7000`) {
		t.Errorf("constant indicator: %v %q %v", s, warns, err)
	}
	// "-NaN" (as some C libraries print NaN) is NaN: missing in an
	// indicator, an error in a required column.
	s, _, err = ReadCSV(strings.NewReader("time,rv,rv_err,fwhm\n1,5,1,-NaN\n2,6,1,7\n3,4,1,8\n"), "c.csv", nil)
	if err != nil || s.Indicator("fwhm").Count() != 2 {
		t.Errorf("-NaN in an indicator: %v", err)
	}
	if _, _, err = ReadCSV(strings.NewReader("time,rv,rv_err\n1,-nan,1\n2,6,1\n"), "c.csv", nil); !errors.Is(err, ErrNotFinite) {
		t.Errorf("-nan in rv: %v", err)
	}
}

func TestUnsortedIsSortedWithWarning(t *testing.T) {
	in := "time,rv,rv_err,bis\n3,1,1,5\n1,2,1,6\n2,3,1,\n"
	s, warns, err := ReadCSV(strings.NewReader(in), "u.csv", nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(warns) != 1 || !strings.Contains(warns[0], "sorted") {
		t.Errorf("warnings %q, want one about sorting", warns)
	}
	b := s.Indicator("bis")
	if s.Time[0] != 1 || s.RV[0] != 2 || b.Value[0] != 6 || !math.IsNaN(b.Value[1]) || b.Value[2] != 5 {
		t.Errorf("not sorted with its columns: %v %v %v", s.Time, s.RV, b.Value)
	}
}

// badTables are malformed inputs; each must give its own sentinel, the
// line and the column.
var badTables = []struct {
	name, in string
	opts     *ReadOptions
	want     error
	line     int
	col      string
}{
	{"empty file", "", nil, ErrNoObservations, 0, ""},
	{"comments only", "# nothing\n# here\n", nil, ErrNoObservations, 0, ""},
	{"header only", "time,rv,rv_err\n", nil, ErrNoObservations, 0, ""},
	{"missing rv", "time,rv_err\n1,1\n2,1\n", nil, ErrMissingColumn, 0, "rv"},
	{"missing rv_err", "time,rv\n1,1\n2,2\n", nil, ErrMissingColumn, 0, "rv_err"},
	{"missing time", "rv,rv_err\n1,1\n2,1\n", nil, ErrMissingColumn, 0, "time"},
	{"text in rv", "time,rv,rv_err\n1,1,1\n2,abc,1\n", nil, ErrNotNumber, 3, "rv"},
	{"empty rv cell", "time,rv,rv_err\n1,1,1\n2,,1\n", nil, ErrNotNumber, 3, "rv"},
	{"NaN rv", "time,rv,rv_err\n1,1,1\n2,NaN,1\n", nil, ErrNotFinite, 3, "rv"},
	{"Inf time", "time,rv,rv_err\n1,1,1\ninf,2,1\n", nil, ErrNotFinite, 3, "time"},
	{"overflow", "time,rv,rv_err\n1,1,1\n2,1e999,1\n", nil, ErrNotFinite, 3, "rv"},
	{"zero error", "time,rv,rv_err\n1,1,1\n2,2,0\n", nil, ErrBadUncertainty, 3, "rv_err"},
	{"negative error", "time,rv,rv_err\n1,1,-1\n2,2,1\n", nil, ErrBadUncertainty, 2, "rv_err"},
	{"duplicate epoch", "time,rv,rv_err\n1,1,1\n2,2,1\n# gap\n1,3,1\n", nil, ErrDuplicateEpoch, 5, "time"},
	{"constant rv", "time,rv,rv_err\n1,5,1\n2,5,1\n3,5,1\n", nil, ErrConstantColumn, 0, "rv"},
	{"too many fields", "time,rv,rv_err\n1,1,1\n2,2,1,9\n", nil, ErrFieldCount, 3, ""},
	{"too few fields", "time,rv,rv_err\n1,1\n", nil, ErrFieldCount, 2, ""},
	{"duplicate column", "time,rv,rv,rv_err\n1,1,1,1\n", nil, ErrDuplicateColumn, 1, "rv"},
	{"unnamed column", "time,,rv_err\n1,1,1\n", nil, ErrMissingColumn, 1, ""},
	{"bad quote", "time,rv,rv_err\n1,\"1,1\n", nil, ErrBadFormat, 2, ""},
	{"Inf indicator", "time,rv,rv_err,bis\n1,1,1,inf\n2,2,1,3\n", nil, ErrNotFinite, 2, "bis"},
	{"value without error", "time,rv,rv_err,bis,bis_err\n1,1,1,2,\n2,2,1,3,1\n", nil, ErrNotNumber, 2, "bis_err"},
	{"error without value", "time,rv,rv_err,bis,bis_err\n1,1,1,,1\n2,2,1,3,1\n", nil, ErrNotNumber, 2, "bis"},
	{"zero indicator error", "time,rv,rv_err,bis,bis_err\n1,1,1,2,0\n2,2,1,3,1\n", nil, ErrBadUncertainty, 2, "bis_err"},
	{"text indicator", "time,rv,rv_err,note\n1,1,1,good\n2,2,1,bad\n", &ReadOptions{Indicators: []string{"note"}}, ErrNotNumber, 2, "note"},
	{"empty instrument", "time,rv,rv_err,instrument\n1,1,1,A\n2,2,1,\n", nil, ErrNotNumber, 3, "instrument"},
	{"bad rv unit", "# units: rv=furlong/fortnight\ntime,rv,rv_err\n1,1,1\n2,2,1\n", nil, ErrBadUnit, 0, "rv"},
	{"bad units comment", "# units: rv\ntime,rv,rv_err\n1,1,1\n", nil, ErrBadUnit, 1, ""},
	{"mapped column absent", "time,rv,rv_err\n1,1,1\n2,2,1\n", &ReadOptions{Columns: map[string]string{"rv": "vrad"}}, ErrMissingColumn, 0, "vrad"},
	{"bad RVUnit option", "time,rv,rv_err\n1,1,1\n2,2,1\n", &ReadOptions{RVUnit: "pc/s"}, ErrBadUnit, 0, "rv"},
	{"binary junk", "time,rv,rv_err\n1,1,\xff\xfe\n", nil, ErrBadFormat, 2, ""},
	{"bad format option", "time,rv,rv_err\n1,1,1\n", &ReadOptions{Format: "xlsx"}, ErrBadFormat, 0, ""},
	{"truncated FITS", "SIMPLE  =                    T", nil, ErrBadFormat, 0, ""},
}

func TestBadTables(t *testing.T) {
	for _, tt := range badTables {
		t.Run(tt.name, func(t *testing.T) {
			_, _, err := ReadTableFrom(strings.NewReader(tt.in), "bad.csv", tt.opts)
			if !errors.Is(err, tt.want) {
				t.Fatalf("err = %v, want %v", err, tt.want)
			}
			var te *TableError
			if !errors.As(err, &te) {
				t.Fatalf("err %v is not a *TableError", err)
			}
			if te.File != "bad.csv" || te.Line != tt.line || te.Column != tt.col {
				t.Errorf("error at %s:%d column %q, want line %d column %q (%v)", te.File, te.Line, te.Column, tt.line, tt.col, err)
			}
		})
	}
}

func TestParseColumnMap(t *testing.T) {
	for _, tt := range []struct {
		in   string
		want map[string]string
		err  bool
	}{
		{"", map[string]string{}, false},
		{"rv=vrad", map[string]string{"rv": "vrad"}, false},
		{" rv = vrad , time=bjd ", map[string]string{"rv": "vrad", "time": "bjd"}, false},
		{"rv", nil, true},
		{"rv=", nil, true},
		{"=vrad", nil, true},
		{"rv=a,rv=b", nil, true},
		{"rv=a,time=a", nil, true},
	} {
		got, err := ParseColumnMap(tt.in)
		if (err != nil) != tt.err {
			t.Errorf("ParseColumnMap(%q) err = %v, want error %v", tt.in, err, tt.err)
			continue
		}
		if err != nil {
			if !errors.Is(err, ErrBadMapping) {
				t.Errorf("ParseColumnMap(%q) err = %v, want ErrBadMapping", tt.in, err)
			}
			continue
		}
		if len(got) != len(tt.want) {
			t.Errorf("ParseColumnMap(%q) = %v, want %v", tt.in, got, tt.want)
		}
		for k, v := range tt.want {
			if got[k] != v {
				t.Errorf("ParseColumnMap(%q)[%q] = %q, want %q", tt.in, k, got[k], v)
			}
		}
	}
}

func TestRequire(t *testing.T) {
	s := roundTripSeries()
	if err := s.Require(s.Len(), "x"); err != nil {
		t.Error(err)
	}
	if err := s.Require(s.Len()+1, "a fit"); !errors.Is(err, ErrTooFewEpochs) {
		t.Errorf("err = %v, want ErrTooFewEpochs", err)
	}
}

// fuzzSeeds returns the seed inputs of the table fuzzers: the bad tables
// above, a good CSV and a good FITS table.
func fuzzSeeds(t testing.TB) [][]byte {
	var seeds [][]byte
	for _, tt := range badTables {
		seeds = append(seeds, []byte(tt.in))
	}
	var csv, fits bytes.Buffer
	if err := WriteCSV(&csv, roundTripSeries(), nil); err != nil {
		t.Fatal(err)
	}
	if err := WriteFITSTable(&fits, roundTripSeries(), nil); err != nil {
		t.Fatal(err)
	}
	seeds = append(seeds, csv.Bytes(), fits.Bytes())
	if b, err := os.ReadFile("../testdata/table/astropy_epochs.fits"); err == nil {
		seeds = append(seeds, b)
	}
	return seeds
}

// checkReadResult is what every fuzzed read must satisfy: an error, or a
// consistent, sorted series that writes and reads back.
func checkReadResult(t *testing.T, s *Series, err error) {
	if err != nil {
		var te *TableError
		if !errors.As(err, &te) {
			t.Fatalf("error %v is not a *TableError", err)
		}
		for _, p := range []string{"runtime error", "goroutine", "panic", "token too long"} {
			if strings.Contains(err.Error(), p) {
				t.Fatalf("error shows %q: %v", p, err)
			}
		}
		return
	}
	if s.checkWritable() != nil {
		t.Fatalf("inconsistent series: %v", s.checkWritable())
	}
	for i := 1; i < s.Len(); i++ {
		if s.Time[i] < s.Time[i-1] {
			t.Fatalf("epochs not sorted")
		}
	}
	for i := range s.RVErr {
		if !(s.RVErr[i] > 0) || math.IsInf(s.RV[i], 0) || math.IsNaN(s.RV[i]) {
			t.Fatalf("invalid epoch %d passed validation", i)
		}
	}
	var buf bytes.Buffer
	if err := WriteCSV(&buf, s, nil); err != nil {
		t.Fatalf("valid series does not write: %v", err)
	}
}

func FuzzReadCSV(f *testing.F) {
	for _, s := range fuzzSeeds(f) {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, b []byte) {
		s, _, err := ReadCSV(bytes.NewReader(b), "fuzz.csv", nil)
		checkReadResult(t, s, err)
	})
}

// FuzzReadText reads fuzzed text with each set of options a user may give:
// none, columns by position, named indicators, declared missing values,
// rejected rows, a time zero, averaged duplicates, and each forced layout.
func FuzzReadText(f *testing.F) {
	for _, s := range fuzzSeeds(f) {
		if !bytes.HasPrefix(s, []byte("SIMPLE")) {
			f.Add(s, uint8(0))
		}
	}
	for _, s := range []string{
		"rjd\tvrad\tsvrad\n---\t----\t-----\n55000\t1\t1\n55001\t2\t1\n",
		"BJD\tRV\te_RV\nd\tkm/s\tkm/s\n---\t---\t---\n2455000\t1\t1\n2455001\t2\t1\n",
		"2455000.1 1.0 1.0 0.17 -1 100 3\n2455001.1 2.0 1.0 0.18 0.03 100 3\n",
		",target,BJD,RV_mlc,e_RV_mlc,f_RV,FWHM_DRS,RHKp,dRHKp\n0,HD,2455000,1,1,0,7.1,1e-5,1e-7\n1,HD,2455001,2,1,1,-9999999,-9999999,-9999999\n",
		"    BJD (d) (F10.2) date\n    RV (m/s) (F6.2) rv\n    e_RV (m/s) (F4.1) err\n---------- ------ ----\nBJD        RV     e_RV\n---------- ------ ----\n2455000.50  -3.50  1.1\n",
	} {
		for o := range uint8(8) {
			f.Add([]byte(s), o)
		}
	}
	options := []*ReadOptions{
		nil,
		{Columns: map[string]string{"time": "1", "rv": "2", "rv_err": "3", "s_index": "4"}},
		{Indicators: []string{"4", "FWHM_DRS"}},
		{Missing: []string{"-1", "-9999999", ""}},
		{RejectIf: []string{"f_RV!=0"}, Duplicates: "mean"},
		{TimeZero: "rjd", Units: map[string]string{"rv": "km/s", "fwhm": "%"}},
		{Format: "text"},
		{Format: "tsv", Instrument: "X"},
	}
	f.Fuzz(func(t *testing.T, b []byte, o uint8) {
		opts := options[int(o)%len(options)]
		s, _, err := ReadTableFrom(bytes.NewReader(b), "fuzz.txt", opts)
		var te *TableError
		if err != nil && errors.Is(err, ErrMissingColumn) && errors.As(err, &te) {
			return // a mapped column the fuzzed table lacks
		}
		checkReadResult(t, s, err)
	})
}

// FuzzParseDataSet parses fuzzed data-set files: an error naming the file,
// or tables with checked options.
func FuzzParseDataSet(f *testing.F) {
	if b, err := os.ReadFile("../testdata/realdata/eps-eri.toml"); err == nil {
		f.Add(b)
	}
	f.Add([]byte("[[table]]\npath = \"a.csv\"\nlabel = \"A\"\nsplit_at = [2455000.5]\nreject_if = [\"f!=0\"]\n"))
	f.Add([]byte("[[table]]\npath = \"a.csv\"\n[[table]]\npath = \"a.csv\"\n"))
	f.Fuzz(func(t *testing.T, b []byte) {
		tables, err := ParseDataSet(b, "fuzz.toml", "")
		if err != nil {
			var te *TableError
			if !errors.As(err, &te) || te.File != "fuzz.toml" {
				t.Fatalf("error %v does not name the file", err)
			}
			return
		}
		for _, dt := range tables {
			if dt.Path == "" || dt.Options.Check() != nil {
				t.Fatalf("table %+v passed with bad options", dt)
			}
		}
	})
}

func FuzzReadFITSTable(f *testing.F) {
	for _, s := range fuzzSeeds(f) {
		if bytes.HasPrefix(s, []byte("SIMPLE")) {
			f.Add(s)
		}
	}
	f.Fuzz(func(t *testing.T, b []byte) {
		s, _, err := ReadFITSTable(bytes.NewReader(b), "fuzz.fits", nil)
		checkReadResult(t, s, err)
	})
}

func BenchmarkReadCSV(b *testing.B) {
	for _, n := range []int{200, 10000} {
		s := &Series{}
		for i := 0; i < n; i++ {
			s.Time = append(s.Time, 2460000+float64(i)*0.7)
			s.RV = append(s.RV, math.Sin(float64(i)))
			s.RVErr = append(s.RVErr, 1)
			s.Instrument = append(s.Instrument, "A")
		}
		var buf bytes.Buffer
		WriteCSV(&buf, s, nil)
		b.Run("n="+formatFloat(float64(n)), func(b *testing.B) {
			for b.Loop() {
				if _, _, err := ReadCSV(bytes.NewReader(buf.Bytes()), "b.csv", nil); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// Velocities given with no unit whose uncertainties are below any
// spectrograph's reach in m/s (0.6 mm/s here) are km/s, as in many
// archive tables: converted, with a warning that names the columns and
// the flag that says otherwise. Uncertainties of 1.2 m/s stay in m/s, and
// a declared unit is never second-guessed.
func TestUndeclaredKmsVelocities(t *testing.T) {
	kms := "RJD RV e_RV\n56451.84 -33.14602 0.00063\n56452.84 -33.14632 0.00061\n56453.84 -33.14683 0.00060\n"
	s, warns, err := ReadCSV(strings.NewReader(kms), "kms.txt", nil)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(s.RV[1]+33146.32) > 1e-6 || math.Abs(s.RVErr[0]-0.63) > 1e-9 {
		t.Errorf("not converted from km/s: rv %v, rv_err %v", s.RV, s.RVErr)
	}
	if w := strings.Join(warns, "\n"); !strings.Contains(w, `"RV" and "e_RV"`) || !strings.Contains(w, "km/s") || !strings.Contains(w, "--rv-unit m/s") {
		t.Errorf("warnings %q: want the columns, the unit and the flag named", warns)
	}
	s, _, err = ReadCSV(strings.NewReader(kms), "kms.txt", &ReadOptions{RVUnit: "m/s"})
	if err != nil || s.RV[1] != -33.14632 {
		t.Errorf("declared m/s: rv %v, err %v", s.RV, err)
	}
	ms := "time rv rv_err\n56451.84 -12.5 1.2\n56452.84 3.1 1.1\n56453.84 7.4 1.3\n"
	s, warns, err = ReadCSV(strings.NewReader(ms), "ms.txt", nil)
	if err != nil || s.RV[0] != -12.5 || strings.Contains(strings.Join(warns, " "), "km/s") {
		t.Errorf("m/s table: rv %v, warnings %q, err %v", s.RV, warns, err)
	}
}
