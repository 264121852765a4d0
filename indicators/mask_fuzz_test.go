package indicators

import (
	"bytes"
	"math"
	"strings"
	"testing"
)

// FuzzReadMask feeds arbitrary bytes to the mask reader: it never panics,
// an error names the file, and a mask it accepts has finite, positive,
// strictly increasing wavelengths and finite positive weights, one each.
func FuzzReadMask(f *testing.F) {
	f.Add([]byte("# WAVESCAL = air\n5000.12 0.5\n5100.34 0.7\n"))
	f.Add([]byte("# WAVESCAL = vacuum\n# a comment\n\n4000 1\n4000 1\n"))
	f.Add([]byte("5000.12 0.5\n"))
	f.Add([]byte("# WAVESCAL = air\n5000 nan\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		m, err := ReadMask(bytes.NewReader(data), "fuzz.mask", nil)
		if err != nil {
			if !strings.Contains(err.Error(), "fuzz.mask") {
				t.Fatalf("the error does not name the file: %v", err)
			}
			return
		}
		if len(m.Weight) != len(m.Wavelength) {
			t.Fatalf("%d wavelengths, %d weights", len(m.Wavelength), len(m.Weight))
		}
		for i, w := range m.Wavelength {
			if !(w > 0) || math.IsInf(w, 0) || !(m.Weight[i] > 0) || math.IsInf(m.Weight[i], 0) {
				t.Fatalf("line %d: %g Å, weight %g", i, w, m.Weight[i])
			}
			if i > 0 && !(w > m.Wavelength[i-1]) {
				t.Fatalf("wavelengths not strictly increasing: %g after %g", w, m.Wavelength[i-1])
			}
		}
	})
}
