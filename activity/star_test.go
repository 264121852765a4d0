package activity

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

func TestParseStar(t *testing.T) {
	good := `name = "Tessaly-7"
b_v = 0.66
mass = 0.97
teff = 5710
vsini = 2.1
rotation_period = 27.3
rotation_period_err = 1.5
vacuum = true

[s_index]
a = 1.111
b = 0.0153
`
	st, err := ParseStar([]byte(good), "good.toml")
	if err != nil {
		t.Fatal(err)
	}
	if st.Name != "Tessaly-7" || st.BV != 0.66 || st.Mass != 0.97 || st.Teff != 5710 || st.VSinI != 2.1 ||
		st.RotationPeriod != 27.3 || st.RotationPeriodErr != 1.5 || !st.Vacuum || st.SIndex.A != 1.111 || st.SIndex.B != 0.0153 {
		t.Errorf("parsed %+v", st)
	}
	// S_MW = 1.111 S + 0.0153 (the calibration form of Lovis et al. 2011, from memory).
	if got, want := st.SIndex.Apply(0.15), 1.111*0.15+0.0153; got != want {
		t.Errorf("Apply(0.15) = %v, want %v", got, want)
	}
	if got := (SCalibration{}).Apply(0.15); got != 0.15 {
		t.Errorf("zero calibration Apply(0.15) = %v, want 0.15", got)
	}

	for _, tt := range []struct {
		name, in string
		line     int
		key, msg string
	}{
		{"unknown key", "name = \"A\"\nbv = 0.6\n", 2, "bv", "unknown key"},
		{"unknown nested key", "name = \"A\"\n[s_index]\nslope = 1\n", 3, "s_index.slope", "unknown key"},
		{"B-V out of range", "name = \"A\"\nb_v = 3.1\n", 2, "b_v", "out of range"},
		{"negative mass", "name = \"A\"\nmass = -1\n", 2, "mass", "out of range"},
		{"negative period", "name = \"A\"\nrotation_period = -4\n", 2, "rotation_period", "out of range"},
		{"NaN vsini", "name = \"A\"\nvsini = nan\n", 2, "vsini", "out of range"},
		{"no name", "b_v = 0.6\n", 0, "name", "missing"},
		{"syntax", "name = \"A\nb_v = 0.6\n", 1, "", ""},
		{"wrong type", "name = \"A\"\nteff = \"hot\"\n", 0, "", "teff"},
	} {
		t.Run(tt.name, func(t *testing.T) {
			_, err := ParseStar([]byte(tt.in), "bad.toml")
			var se *StarError
			if !errors.As(err, &se) || !errors.Is(err, ErrStar) {
				t.Fatalf("err = %v, want a *StarError", err)
			}
			if (tt.line > 0 && se.Line != tt.line) || se.Key != tt.key || !strings.Contains(err.Error(), tt.msg) {
				t.Errorf("err = %v (line %d key %q), want line %d key %q saying %q", err, se.Line, se.Key, tt.line, tt.key, tt.msg)
			}
		})
	}
}

// TestReadStarNotRegular: a named pipe, a device or a huge file given as
// the star file is refused at once with the file named, never read (a
// pipe without a writer would block forever, /dev/zero never ends).
func TestReadStarNotRegular(t *testing.T) {
	dir := t.TempDir()
	fifo := filepath.Join(dir, "star.toml")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Skipf("no named pipes here: %v", err)
	}
	big := filepath.Join(dir, "big.toml")
	if err := os.WriteFile(big, bytes.Repeat([]byte("# padding\n"), MaxStarFileSize/10+1), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, p := range []string{fifo, "/dev/zero", big} {
		if _, err := os.Stat(p); err != nil {
			t.Logf("%s: %v", p, err)
			continue
		}
		done := make(chan error, 1)
		go func() { _, err := ReadStar(p); done <- err }()
		select {
		case err := <-done:
			if !errors.Is(err, ErrStar) || !strings.Contains(err.Error(), p) {
				t.Errorf("%s: error %v, want a star-file error naming it", p, err)
			}
		case <-time.After(5 * time.Second):
			t.Fatalf("%s: ReadStar still reading after 5 s", p)
		}
	}
}
