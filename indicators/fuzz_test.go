package indicators

import (
	"bytes"
	"os"
	"path/filepath"
	"testing"
)

// FuzzReadFITS feeds damaged FITS files to the reader: it must return a
// spectrum that validates or an error, and never panic. Run it with a short
// minimisation time, as the default 60 s per new input stalls on these
// multi-kilobyte seeds:
//
//	go test -run XXX -fuzz FuzzReadFITS -fuzztime 90s -fuzzminimizetime 2s ./indicators
func FuzzReadFITS(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join(fixtureDir, "*.fits"))
	for _, p := range files {
		if b, err := os.ReadFile(p); err == nil {
			f.Add(b)
		}
	}
	var buf bytes.Buffer
	WriteFITS(&buf, echelleSpectrum(2, 40))
	f.Add(buf.Bytes())
	f.Fuzz(func(t *testing.T, data []byte) {
		s, err := ReadFITS(bytes.NewReader(data), "fuzz.fits", &ReadOptions{AllowNegative: true})
		if err != nil {
			return
		}
		if verr := s.validate(true); verr != nil {
			t.Fatalf("reader returned an invalid spectrum: %v", verr)
		}
	})
}

// FuzzReadText does the same for text spectra.
func FuzzReadText(f *testing.F) {
	f.Add([]byte("# WAVESCAL = air\n5000 1 0.1\n5001 2 0.1\n"))
	f.Add([]byte("wave flux\n# WAVESCAL = vacuum\n# BJD_TDB = 2460000.5\n5000,1\n5001,2\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		s, err := ReadText(bytes.NewReader(data), "fuzz.txt", nil)
		if err != nil {
			return
		}
		if verr := s.validate(false); verr != nil {
			t.Fatalf("reader returned an invalid spectrum: %v", verr)
		}
	})
}
