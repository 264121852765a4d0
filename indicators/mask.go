package indicators

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"
)

// Mask is a weighted binary line mask for the cross-correlation function
// (Baranne et al. 1996, A&AS 119, 373; weights: Pepe et al. 2002, A&A 388,
// 632; from memory).
type Mask struct {
	// Name says where the mask came from; it is used in error messages.
	Name string
	// Wavelength holds the rest wavelengths of the lines in Å, strictly
	// increasing, on the scale Vacuum says.
	Wavelength []float64
	// Weight holds one positive weight per line, usually the line's
	// relative depth.
	Weight []float64
	// Vacuum reports whether the wavelengths are vacuum wavelengths.
	Vacuum bool
	// Relative reports whether the wavelengths are not rest wavelengths
	// but in the frame of one spectrum (a mask BuildMask could not give a
	// zero point): velocities measured with it are relative, and Measure
	// does not place the chromospheric bands with them.
	Relative bool
	// Build, for a mask made by BuildMask, says how: the spectra used and
	// left out, and the systemic velocity found.
	Build *MaskBuild
}

// NewMask returns a mask of the lines (wavelength in Å, weight), sorted by
// wavelength. The slices are copied. It returns an error wrapping ErrNoData
// for no lines, ErrMismatch for slices of unequal length, ErrNotFinite for
// NaN or infinite values or a wavelength ≤ 0, ErrBadParameter for a weight
// ≤ 0 and ErrNotIncreasing for a repeated wavelength.
func NewMask(wavelength, weight []float64, vacuum bool) (*Mask, error) {
	if len(wavelength) == 0 {
		return nil, fmt.Errorf("%w: mask has no lines", ErrNoData)
	}
	if len(weight) != len(wavelength) {
		return nil, fmt.Errorf("%w: %d wavelengths, %d weights", ErrMismatch, len(wavelength), len(weight))
	}
	idx := make([]int, len(wavelength))
	for i := range idx {
		idx[i] = i
		w, g := wavelength[i], weight[i]
		if math.IsNaN(w) || math.IsInf(w, 0) || w <= 0 || math.IsNaN(g) || math.IsInf(g, 0) {
			return nil, fmt.Errorf("%w: line %d (%v, %v)", ErrNotFinite, i+1, w, g)
		}
		if g <= 0 {
			return nil, fmt.Errorf("%w: line %d has weight %v, want > 0", ErrBadParameter, i+1, g)
		}
	}
	sort.Slice(idx, func(a, b int) bool { return wavelength[idx[a]] < wavelength[idx[b]] })
	m := &Mask{Wavelength: make([]float64, len(idx)), Weight: make([]float64, len(idx)), Vacuum: vacuum}
	for k, i := range idx {
		m.Wavelength[k], m.Weight[k] = wavelength[i], weight[i]
		if k > 0 && m.Wavelength[k] == m.Wavelength[k-1] {
			return nil, fmt.Errorf("%w: line at %v Å given twice", ErrNotIncreasing, m.Wavelength[k])
		}
	}
	return m, nil
}

// Len returns the number of lines.
func (m *Mask) Len() int { return len(m.Wavelength) }

// onScale returns m with wavelengths on the vacuum (true) or air scale,
// converting a copy when needed.
func (m *Mask) onScale(vacuum bool) *Mask {
	if m.Vacuum == vacuum {
		return m
	}
	c := &Mask{Name: m.Name, Wavelength: make([]float64, len(m.Wavelength)), Weight: append([]float64(nil), m.Weight...), Vacuum: vacuum, Relative: m.Relative, Build: m.Build}
	for i, w := range m.Wavelength {
		c.Wavelength[i] = onScale(w, m.Vacuum, vacuum)
	}
	return c
}

// ReadMask reads a line mask from text: one line per row, wavelength in Å
// and weight, separated by blanks or commas; a single column means weight 1.
// Empty lines and lines starting with '#' are skipped; a comment line
// "# WAVESCAL = air" or "# WAVESCAL = vacuum" declares the scale, which
// opts.Scale (nil: from the file) overrides. A mask that declares neither is
// an error wrapping ErrUnknownScale. Errors are *FileError values with the
// line number.
func ReadMask(r io.Reader, name string, opts *ReadOptions) (*Mask, error) {
	if opts == nil {
		opts = &ReadOptions{}
	}
	var wl, wt []float64
	scale := ""
	sc := bufio.NewScanner(r)
	line := 0
	for sc.Scan() {
		line++
		t := strings.TrimSpace(sc.Text())
		if t == "" {
			continue
		}
		if t[0] == '#' {
			if k, v, ok := strings.Cut(t[1:], "="); ok && strings.EqualFold(strings.TrimSpace(k), "WAVESCAL") {
				scale = strings.ToLower(strings.Trim(strings.TrimSpace(v), "'\""))
			}
			continue
		}
		f := strings.FieldsFunc(t, func(r rune) bool { return r == ' ' || r == '\t' || r == ',' || r == ';' })
		if len(f) == 0 {
			continue // separators only: an empty line
		}
		bad := func(what string, err error) error {
			return &FileError{File: name, HDU: -1, Line: line, Keyword: what, Order: -1, Pixel: -1, Err: err}
		}
		w, err := strconv.ParseFloat(f[0], 64)
		if err != nil {
			return nil, bad("wavelength", fmt.Errorf("%w: %q", ErrParse, f[0]))
		}
		g := 1.0
		if len(f) > 1 {
			if g, err = strconv.ParseFloat(f[1], 64); err != nil {
				return nil, bad("weight", fmt.Errorf("%w: %q", ErrParse, f[1]))
			}
		}
		if math.IsNaN(w) || math.IsInf(w, 0) || w <= 0 || math.IsNaN(g) || math.IsInf(g, 0) || g <= 0 {
			return nil, bad("", fmt.Errorf("%w: wavelength %v, weight %v", ErrBadParameter, w, g))
		}
		wl = append(wl, w)
		wt = append(wt, g)
	}
	if err := sc.Err(); err != nil {
		if errors.Is(err, bufio.ErrTooLong) {
			return nil, &FileError{File: name, HDU: -1, Line: line + 1, Order: -1, Pixel: -1, Err: fmt.Errorf("%w: line longer than %d bytes (a mask has short lines of a wavelength and a weight; is this a binary file?)", ErrParse, bufio.MaxScanTokenSize)}
		}
		return nil, fileErr(name, -1, "", err)
	}
	var vac bool
	switch opts.Scale {
	case ScaleAir:
	case ScaleVacuum:
		vac = true
	default:
		switch scale {
		case "air":
		case "vacuum", "vac":
			vac = true
		default:
			return nil, &FileError{File: name, HDU: -1, Line: 1, Order: -1, Pixel: -1, Err: fmt.Errorf("%w: a mask says whether its wavelengths are in air or vacuum in a header line of its own: add the line \"# WAVESCAL = air\" (or \"# WAVESCAL = vacuum\") at the top of the file, before the first wavelength", ErrUnknownScale)}
		}
	}
	m, err := NewMask(wl, wt, vac)
	if err != nil {
		return nil, fileErr(name, -1, "", err)
	}
	m.Name = name
	return m, nil
}

// ReadMaskFile reads the mask in the text file at path with ReadMask.
// Only a regular file is read (see ReadRegularFile), of at most
// MaxFileSize bytes.
func ReadMaskFile(path string, opts *ReadOptions) (*Mask, error) {
	data, err := ReadRegularFile(path, MaxFileSize)
	if err != nil {
		return nil, err
	}
	return ReadMask(bytes.NewReader(data), path, opts)
}

// WriteMask writes m as text that ReadMask reads back exactly.
func WriteMask(w io.Writer, m *Mask) error {
	bw := bufio.NewWriter(w)
	scale := "air"
	if m.Vacuum {
		scale = "vacuum"
	}
	fmt.Fprintf(bw, "%s: wavelength [Angstrom], weight\n# WAVESCAL = %s\n", maskMarker, scale)
	for i := range m.Wavelength {
		fmt.Fprintf(bw, "%s %s\n", strconv.FormatFloat(m.Wavelength[i], 'g', -1, 64), strconv.FormatFloat(m.Weight[i], 'g', -1, 64))
	}
	return bw.Flush()
}
