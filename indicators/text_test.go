package indicators

import (
	"bytes"
	"errors"
	"math"
	"strings"
	"testing"
)

func TestReadText(t *testing.T) {
	for _, tc := range []struct {
		name    string
		in      string
		opts    *ReadOptions
		n       int
		vacuum  bool
		bjd     float64
		berv    float64
		first   float64 // first wavelength, Å
		hasErr  bool
		wantErr error
		line    string // expected line reference in the error
	}{
		{name: "three columns", in: "# WAVESCAL = vacuum\n# BJD_TDB = 2460000.25\n# BERV = 1.5\n5000 10 1\n5001 11 1\n5002 12 1\n",
			n: 3, vacuum: true, bjd: 2460000.25, berv: 1500, first: 5000, hasErr: true},
		{name: "header row and commas, nm", in: "wave,flux\n# WAVESCAL = air\n# CUNIT1 = nm\n500.0,1\n500.1,2\n",
			n: 2, first: 5000},
		{name: "MJD epoch keyword", in: "# WAVESCAL = air\n# MYTIME = 60000.5\n5000 1\n5001 1\n",
			opts: &ReadOptions{EpochKeyword: "mytime"}, n: 2, bjd: 2460001, first: 5000},
		{name: "BERV in m/s", in: "# WAVESCAL = air\n# VBARY = -250\n5000 1\n5001 1\n",
			opts: &ReadOptions{BERVKeyword: "VBARY", BERVUnit: 1}, n: 2, berv: -250, first: 5000},
		{name: "scale declared by option", in: "5000 1\n5001 1\n", opts: &ReadOptions{Scale: ScaleVacuum}, n: 2, vacuum: true, first: 5000},
		{name: "no scale", in: "5000 1\n5001 1\n", wantErr: ErrUnknownScale},
		{name: "decreasing", in: "# WAVESCAL = air\n5001 1\n5000 1\n", wantErr: ErrNotIncreasing},
		{name: "NaN flux", in: "# WAVESCAL = air\n5000 1\n5001 NaN\n", wantErr: ErrNotFinite},
		{name: "negative flux", in: "# WAVESCAL = air\n5000 1\n5001 -3\n", wantErr: ErrNegativeFlux},
		{name: "bad number", in: "# WAVESCAL = air\n5000 1\n5001 x\n", wantErr: ErrParse, line: ":3"},
		{name: "short row", in: "# WAVESCAL = air\n5000 1\n5001\n", wantErr: ErrMismatch, line: ":3"},
		{name: "zero error", in: "# WAVESCAL = air\n5000 1 0\n5001 1 1\n", wantErr: ErrBadError},
		{name: "empty", in: "# WAVESCAL = air\n", wantErr: ErrNoData},
		{name: "missing named epoch", in: "# WAVESCAL = air\n5000 1\n", opts: &ReadOptions{EpochKeyword: "T0"}, wantErr: ErrMissingKeyword},
		{name: "bad unit", in: "# WAVESCAL = air\n# CUNIT1 = furlong\n5000 1\n", wantErr: ErrBadUnit},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s, err := ReadText(strings.NewReader(tc.in), "spec.txt", tc.opts)
			if tc.wantErr != nil {
				if !errors.Is(err, tc.wantErr) {
					t.Fatalf("err = %v, want %v", err, tc.wantErr)
				}
				if !strings.Contains(err.Error(), "spec.txt"+tc.line) {
					t.Errorf("error %q should name spec.txt%s", err, tc.line)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			o := s.Orders[0]
			if len(o.Flux) != tc.n || s.Vacuum != tc.vacuum || math.Abs(s.BJD-tc.bjd) > 1e-9 || s.BERV != tc.berv || o.Wavelength[0] != tc.first || (o.Err != nil) != tc.hasErr {
				t.Errorf("got n=%d vacuum=%v bjd=%v berv=%v first=%v err=%v", len(o.Flux), s.Vacuum, s.BJD, s.BERV, o.Wavelength[0], o.Err != nil)
			}
		})
	}
}

func TestReadFITSOptions(t *testing.T) {
	s := logGridSpectrum(100, 5000, 1e-5)
	s.Header["TMID"] = "60123.5"
	s.Header["BARYCORR"] = "-321.5"
	var buf bytes.Buffer
	if err := WriteFITS(&buf, s); err != nil {
		t.Fatal(err)
	}
	raw := buf.Bytes()
	got, err := ReadFITS(bytes.NewReader(raw), "o.fits", &ReadOptions{EpochKeyword: "TMID", BERVKeyword: "BARYCORR", BERVUnit: 1, Scale: ScaleAir})
	if err != nil {
		t.Fatal(err)
	}
	if got.BJD != 60123.5+2400000.5 || got.BERV != -321.5 || got.Vacuum {
		t.Errorf("BJD %v, BERV %v, vacuum %v", got.BJD, got.BERV, got.Vacuum)
	}
	if _, err := ReadFITS(bytes.NewReader(raw), "o.fits", &ReadOptions{EpochKeyword: "NOPE"}); !errors.Is(err, ErrMissingKeyword) || !strings.Contains(err.Error(), "NOPE") {
		t.Errorf("missing epoch keyword: err = %v", err)
	}
	if _, err := ReadFITS(bytes.NewReader(raw), "o.fits", &ReadOptions{WavelengthUnit: "nm"}); err != nil {
		t.Fatal(err)
	}
	if _, err := ReadFITS(bytes.NewReader([]byte("hello")), "o.fits", nil); !errors.Is(err, ErrNotFITS) {
		t.Errorf("not FITS: err = %v", err)
	}
	// ReadFile falls back to text for a non-FITS file.
	if _, err := ReadFITS(bytes.NewReader(raw[:2880+100]), "o.fits", nil); !errors.Is(err, ErrTruncated) {
		t.Errorf("truncated: err = %v", err)
	}
}
