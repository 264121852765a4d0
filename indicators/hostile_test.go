package indicators

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// headerCard returns a FITS header card: keyword, "= " and the value.
func headerCard(key, value string) []byte {
	c := []byte(strings.Repeat(" ", 80))
	copy(c, key)
	if value != "" {
		copy(c[8:], "= "+value)
	}
	return c
}

// withCard returns the FITS file data with the primary header's card i
// (0-based, among the cards before END) replaced.
func withCard(data []byte, i int, card []byte) []byte {
	out := append([]byte(nil), data...)
	copy(out[80*i:80*i+80], card)
	return out
}

// TestHeaderAxisKeywords: NAXIS0, NAXIS-1 and other malformed axis
// keywords are bad input naming the keyword, never a panic.
func TestHeaderAxisKeywords(t *testing.T) {
	var buf bytes.Buffer
	if err := WriteFITS(&buf, linGridSpectrum(200)); err != nil {
		t.Fatal(err)
	}
	data := buf.Bytes()
	// Card 3 is NAXIS1 in what WriteFITS writes for one order.
	if !bytes.HasPrefix(data[240:], []byte("NAXIS1  =")) {
		t.Fatalf("card 3 is %q", data[240:250])
	}
	for _, tc := range []struct{ key, value, want string }{
		{"NAXIS0", "100", "NAXIS0: indicators: bad keyword value: axis keywords run from NAXIS1 to NAXIS999"},
		{"NAXIS1", "-5", "NAXIS1: indicators: bad keyword value"},
		{"NAXIS1", "99999999999999999999", "NAXIS1: indicators: bad keyword value"},
	} {
		_, err := ReadFITS(bytes.NewReader(withCard(data, 3, headerCard(tc.key, tc.value))), "x.fits", nil)
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s = %s: err = %v, want %q", tc.key, tc.value, err, tc.want)
		}
	}
	// NAXIS-1 is not an axis keyword (the digits are not a number from 1):
	// it is ignored like any other keyword, and NAXIS1 is then missing.
	_, err := ReadFITS(bytes.NewReader(withCard(data, 3, headerCard("NAXIS-1", "100"))), "x.fits", nil)
	if !errors.Is(err, ErrMissingKeyword) || !strings.Contains(err.Error(), "NAXIS1") {
		t.Errorf("NAXIS-1: err = %v", err)
	}
}

// TestReadNotRegular: a FIFO or a device is refused at once, without
// reading or blocking.
func TestReadNotRegular(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "pipe.fits")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Skipf("cannot make a FIFO: %v", err)
	}
	link := filepath.Join(dir, "zero.fits")
	if err := os.Symlink("/dev/zero", link); err != nil {
		t.Fatal(err)
	}
	mask := filepath.Join(dir, "mask.txt")
	if err := os.Symlink("/dev/zero", mask); err != nil {
		t.Fatal(err)
	}
	done := make(chan struct{})
	go func() {
		defer close(done)
		for _, p := range []string{fifo, link, dir} {
			if _, err := ReadFile(p, nil); !errors.Is(err, ErrNotRegular) || !strings.Contains(err.Error(), p) {
				t.Errorf("%s: err = %v, want ErrNotRegular naming the file", p, err)
			}
		}
		if _, err := ReadMaskFile(mask, nil); !errors.Is(err, ErrNotRegular) {
			t.Errorf("mask on /dev/zero: err = %v", err)
		}
	}()
	select {
	case <-done:
	case <-time.After(10 * time.Second):
		t.Fatal("reading a FIFO or /dev/zero did not return within 10 s")
	}
}

// FuzzReadFITSHeader mutates one header card of valid spectra (the
// keyword and the value separately) and checks that the reader returns a
// valid spectrum or an error, never panics. Seeds cover the axis, size,
// WCS, scale and barycentric keywords.
//
//	go test -run XXX -fuzz FuzzReadFITSHeader -fuzztime 60s ./indicators
func FuzzReadFITSHeader(f *testing.F) {
	var one, ech bytes.Buffer
	WriteFITS(&one, linGridSpectrum(200))
	WriteFITS(&ech, echelleSpectrum(2, 40))
	files := [][]byte{one.Bytes(), ech.Bytes()}
	for i, kv := range [][2]string{
		{"NAXIS0", "10"}, {"NAXIS-1", "10"}, {"NAXIS1", "-1"}, {"NAXIS2", "0"}, {"NAXIS", "3"},
		{"BITPIX", "12"}, {"CDELT1", "0"}, {"CRVAL1", "-5"}, {"CTYPE1", "'WAVE-LOG'"},
		{"BERV", "1e300"}, {"BARYZ", "0.5"}, {"BJD_TDB", "'x'"}, {"PCOUNT", "99999999"},
		{"GCOUNT", "-3"}, {"BSCALE", "1e308"}, {"CUNIT1", "'furlong'"}, {"WAVESCAL", "'both'"},
		{"NAXIS1", "4611686018427387904"}, {"CRPIX1", "NaN"}, {"END", ""},
	} {
		f.Add(uint8(i%2), uint8(3+i%6), kv[0], kv[1])
	}
	f.Fuzz(func(t *testing.T, which, card uint8, key, value string) {
		data := files[int(which)%len(files)]
		ncards := bytes.Index(data, []byte("END     ")) / 80
		if ncards <= 0 || len(key) > 8 || len(value) > 70 {
			return
		}
		c := headerCard(key, value)
		data = withCard(data, int(card)%ncards, c)
		s, err := ReadFITS(bytes.NewReader(data), "fuzz.fits", &ReadOptions{AllowNegative: true})
		if err != nil {
			if strings.Contains(err.Error(), "runtime error") {
				t.Fatalf("error shows a runtime error: %v", err)
			}
			return
		}
		if verr := s.validate(true); verr != nil {
			t.Fatalf("reader returned an invalid spectrum: %v", verr)
		}
	})
}
