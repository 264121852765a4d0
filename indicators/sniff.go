package indicators

import (
	"bytes"
	"fmt"
	"sort"
	"strconv"
	"strings"
	"unicode/utf8"
)

// maskMarker starts the first line of every mask WriteMask writes.
const maskMarker = "# spotsift line mask"

// notSpectrum looks at the start of a file that is not FITS and says why it
// is not a spectrum ("" when it may be one): binary data, text without
// columns of numbers (notes), a mask written by WriteMask, or a line list,
// whose wavelength steps are as irregular as the spacing of spectral lines
// (the 90th percentile of the steps over 8 times the 10th), where a
// spectrum's pixels are evenly (or log-evenly) spaced, or whose one or two
// columns are wavelengths more than 60 km/s apart (median) with weights in
// (0, 1].
func notSpectrum(data []byte) string {
	head := data
	if len(head) > 1<<20 {
		head = head[:1<<20]
		// Do not cut a UTF-8 sequence or a line in two.
		if i := bytes.LastIndexByte(head, '\n'); i > 0 {
			head = head[:i]
		}
	}
	if bytes.IndexByte(head, 0) >= 0 || !utf8.Valid(head) {
		return "binary data that is neither FITS nor text"
	}
	var wl []float64
	rows := 0
	weights := true // every second column in (0, 1], as a mask's weights
	for _, ln := range strings.Split(string(head), "\n") {
		t := strings.TrimSpace(ln)
		if t == "" {
			continue
		}
		if t[0] == '#' {
			if strings.HasPrefix(t, maskMarker) {
				return "a line mask (its first line says so)"
			}
			continue
		}
		rows++
		f := strings.FieldsFunc(t, func(r rune) bool { return r == ' ' || r == '\t' || r == ',' || r == ';' })
		if len(f) < 1 {
			continue
		}
		w, err := strconv.ParseFloat(f[0], 64)
		if err != nil || w != w {
			continue
		}
		if len(f) >= 2 {
			g, err := strconv.ParseFloat(f[1], 64)
			if err != nil {
				continue
			}
			weights = weights && g > 0 && g <= 1
		}
		if len(f) > 2 {
			weights = false
		}
		wl = append(wl, w)
		if len(wl) == 5000 {
			break
		}
	}
	if len(wl) == 0 {
		if rows == 0 {
			return ""
		}
		return "text without columns of numbers (notes?)"
	}
	if len(wl) < 20 {
		return ""
	}
	steps := make([]float64, 0, len(wl)-1)
	for i := 1; i < len(wl); i++ {
		if d := wl[i] - wl[i-1]; d > 0 {
			steps = append(steps, d)
		}
	}
	if len(steps) < 19 {
		return ""
	}
	sort.Float64s(steps)
	q10, q90 := steps[len(steps)/10], steps[len(steps)*9/10]
	if q90 > 8*q10 {
		return fmt.Sprintf("a line list such as a mask: its wavelength steps vary from %.3g to %.3g (10th to 90th percentile), where a spectrum's pixels are evenly spaced", q10, q90)
	}
	med := steps[len(steps)/2]
	if lam := quickMedian(wl); weights && med > 2e-4*lam {
		return fmt.Sprintf("a line list such as a mask: weights between 0 and 1 at wavelengths %.3g apart (median), too far apart for the pixels of a spectrum (%.0f km/s)", med, C*med/lam/1e3)
	}
	return ""
}
