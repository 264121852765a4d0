package activity

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

	"github.com/BurntSushi/toml"
)

// Star holds what is known of a star, as read from a star file (TOML).
//
// A star file looks like this (every key is optional but name):
//
//	name = "Tessaly-7"          # any label; escaped wherever it is shown
//	b_v = 0.66                  # B-V colour index, mag
//	mass = 0.97                 # solar masses
//	teff = 5710                 # effective temperature, K
//	vsini = 2.1                 # projected rotation velocity, km/s
//	rotation_period = 27.3      # a known rotation period, days (0: unknown)
//	rotation_period_err = 1.5   # its one-sigma uncertainty, days
//	vacuum = false              # spectra and masks in vacuum (true) or air (false)
//
//	[s_index]                   # instrumental S to Mount Wilson: S_MW = a S + b
//	a = 1.111
//	b = 0.0153
//
// Zero means "not known" for every number.
type Star struct {
	Name              string       `toml:"name"`
	BV                float64      `toml:"b_v"`
	Mass              float64      `toml:"mass"`
	Teff              float64      `toml:"teff"`
	VSinI             float64      `toml:"vsini"`
	RotationPeriod    float64      `toml:"rotation_period"`
	RotationPeriodErr float64      `toml:"rotation_period_err"`
	Vacuum            bool         `toml:"vacuum"`
	SIndex            SCalibration `toml:"s_index"`
}

// SCalibration maps an instrumental S-index onto the Mount Wilson scale,
//
//	S_MW = A·S_inst + B
//
// The zero value means no calibration is known (A is then taken as 1).
type SCalibration struct {
	A float64 `toml:"a"`
	B float64 `toml:"b"`
}

// Apply returns the Mount Wilson S-index for an instrumental one.
func (c SCalibration) Apply(s float64) float64 {
	if c.A == 0 {
		return s + c.B
	}
	return c.A*s + c.B
}

// ErrStar is wrapped by every error in a star file.
var ErrStar = errors.New("activity: bad star file")

// StarError reports a problem in a star file at a key (and line, when the
// TOML decoder knows it).
type StarError struct {
	File string
	Line int
	Key  string
	Msg  string
}

func (e *StarError) Error() string {
	s := e.File
	if e.Line > 0 {
		s += fmt.Sprintf(":%d", e.Line)
	}
	if e.Key != "" {
		s += fmt.Sprintf(": key %q", e.Key)
	}
	return s + ": " + e.Msg
}

func (e *StarError) Unwrap() error { return ErrStar }

// MaxStarFileSize is the largest star file ReadStar reads, in bytes; a star
// file holds a few lines.
const MaxStarFileSize = 1 << 20

// ReadStar reads and checks a star file. Only a regular file (or a
// symbolic link to one) is read: a named pipe or a device such as
// /dev/zero is refused before it is opened, and a file larger than
// MaxStarFileSize is refused unread.
func ReadStar(path string) (*Star, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return nil, err
	}
	if !fi.Mode().IsRegular() {
		return nil, &StarError{File: path, Msg: fmt.Sprintf("not a regular file (%s): give the path of a TOML star file", FileKind(fi.Mode()))}
	}
	if fi.Size() > MaxStarFileSize {
		return nil, &StarError{File: path, Msg: fmt.Sprintf("%d bytes: a star file is a few lines of TOML (at most %d bytes); is this the right file?", fi.Size(), MaxStarFileSize)}
	}
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	// The file may have changed since Stat: check what was opened, and
	// read one byte more than the limit to see whether it is exceeded.
	if fi, err := f.Stat(); err != nil || !fi.Mode().IsRegular() {
		return nil, &StarError{File: path, Msg: "not a regular file: give the path of a TOML star file"}
	}
	b, err := io.ReadAll(io.LimitReader(f, MaxStarFileSize+1))
	if err != nil {
		return nil, err
	}
	if len(b) > MaxStarFileSize {
		return nil, &StarError{File: path, Msg: fmt.Sprintf("more than %d bytes: a star file is a few lines of TOML; is this the right file?", MaxStarFileSize)}
	}
	return ParseStar(b, path)
}

// FileKind names the type of a file that is not regular ("a named pipe",
// "a character device", ...), for messages.
func FileKind(m os.FileMode) string {
	switch {
	case m&os.ModeNamedPipe != 0:
		return "a named pipe"
	case m&os.ModeCharDevice != 0:
		return "a character device"
	case m&os.ModeDevice != 0:
		return "a device"
	case m&os.ModeSocket != 0:
		return "a socket"
	case m.IsDir():
		return "a folder"
	}
	return "not a plain file"
}

// ParseStar parses star-file text; name is used in error messages. An
// unknown key, a value of the wrong type or out of range is an error that
// names the key.
func ParseStar(b []byte, name string) (*Star, error) {
	var st Star
	md, err := toml.NewDecoder(bytes.NewReader(b)).Decode(&st)
	if err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, &StarError{File: name, Line: pe.Position.Line, Msg: pe.Message}
		}
		return nil, &StarError{File: name, Msg: err.Error()}
	}
	if und := md.Undecoded(); len(und) > 0 {
		key := und[0].String()
		return nil, &StarError{File: name, Line: lineOfKey(b, und[0][len(und[0])-1]), Key: key, Msg: "unknown key"}
	}
	check := func(key string, v, lo, hi float64, what string) error {
		if math.IsNaN(v) || math.IsInf(v, 0) || v < lo || v > hi {
			return &StarError{File: name, Line: lineOfKey(b, key), Key: key, Msg: fmt.Sprintf("%g is out of range: %s", v, what)}
		}
		return nil
	}
	for _, c := range []struct {
		key       string
		v, lo, hi float64
		what      string
	}{
		{"b_v", st.BV, -0.5, 2.5, "B-V must lie in [-0.5, 2.5] mag"},
		{"mass", st.Mass, 0, 150, "mass must lie in [0, 150] solar masses"},
		{"teff", st.Teff, 0, 60000, "Teff must lie in [0, 60000] K"},
		{"vsini", st.VSinI, 0, 500, "v sin i must lie in [0, 500] km/s"},
		{"rotation_period", st.RotationPeriod, 0, 1e4, "rotation period must lie in [0, 10000] days"},
		{"rotation_period_err", st.RotationPeriodErr, 0, 1e4, "must lie in [0, 10000] days"},
		{"a", st.SIndex.A, 0, 100, "calibration slope must lie in [0, 100]"},
		{"b", st.SIndex.B, -10, 10, "calibration offset must lie in [-10, 10]"},
	} {
		if err := check(c.key, c.v, c.lo, c.hi, c.what); err != nil {
			return nil, err
		}
	}
	if strings.TrimSpace(st.Name) == "" {
		return nil, &StarError{File: name, Key: "name", Msg: "missing: every star needs a name"}
	}
	return &st, nil
}

// lineOfKey returns the first line on which key is assigned, or 0.
func lineOfKey(b []byte, key string) int {
	for i, line := range strings.Split(string(b), "\n") {
		f := strings.TrimSpace(line)
		if rest, ok := strings.CutPrefix(f, key); ok {
			if r := strings.TrimSpace(rest); strings.HasPrefix(r, "=") {
				return i + 1
			}
		}
	}
	return 0
}
