package activity

import (
	"bytes"
	"strings"
	"testing"
)

// FuzzParseStar feeds arbitrary bytes to the star-file parser: it never
// panics, an error names the file, and a star it accepts passes its own
// range checks (parsing it again gives no error).
func FuzzParseStar(f *testing.F) {
	f.Add([]byte("name = \"Veyla-9\"\nb_v = 0.68\nteff = 5680.0\nrotation_period = 27.5\n\n[s_index]\na = 1.1\nb = 0.01\n"))
	f.Add([]byte("temperature = 5000\n"))
	f.Add([]byte("mass = \"heavy\"\n"))
	f.Add([]byte("[s_index\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		st, err := ParseStar(data, "fuzz.toml")
		if err != nil {
			if !strings.Contains(err.Error(), "fuzz.toml") {
				t.Fatalf("the error does not name the file: %v", err)
			}
			return
		}
		if st == nil {
			t.Fatal("no star and no error")
		}
		if _, err := ParseStar(data, "again.toml"); err != nil {
			t.Fatalf("accepted once, refused the second time: %v", err)
		}
	})
}

// FuzzReadSideTable feeds arbitrary bytes to the side-table reader (epochs
// and barycentric corrections per spectrum file): it never panics and an
// error names the table.
func FuzzReadSideTable(f *testing.F) {
	f.Add([]byte("file,bjd,berv\na.fits,2460000.5,1200.5\nb.fits,2460001.5,-300\n"))
	f.Add([]byte("file bjd\na.fits 2460000.5\n"))
	f.Add([]byte("file,bjd\na.fits,nan\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		_, err := ReadSideTable(bytes.NewReader(data), "side.csv")
		if err != nil && !strings.Contains(err.Error(), "side.csv") {
			t.Fatalf("the error does not name the table: %v", err)
		}
	})
}
