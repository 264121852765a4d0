package activity

import (
	"math"
	"strconv"
	"strings"
)

// Number formatting for the report (docs/methods.md §15): values rounded
// to their errors, unknowns as "—", upper limits as "< x".

// fmtSig formats x with at most n significant digits and no trailing
// zeros; NaN and infinities give "—".
func fmtSig(x float64, n int) string {
	if !isFinite(x) {
		return "—"
	}
	if x == 0 {
		return "0"
	}
	a := math.Abs(x)
	if a >= 1e9 || a < 1e-4 {
		return strconv.FormatFloat(x, 'g', n, 64)
	}
	dec := max(0, n-1-int(math.Floor(math.Log10(a))))
	s := strconv.FormatFloat(x, 'f', dec, 64)
	if strings.Contains(s, ".") {
		s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	}
	if s == "-0" {
		s = "0"
	}
	return s
}

// errDecimals returns the decimal place an error e rounds to: two
// significant digits when its leading digit is 1 or 2, one otherwise
// (common practice). Negative results mean tens, hundreds...
func errDecimals(e float64) int {
	exp := int(math.Floor(math.Log10(e)))
	lead := e / math.Pow(10, float64(exp))
	if lead < 3 {
		return 1 - exp
	}
	return -exp
}

// roundTo rounds x to dec decimals (dec < 0 rounds to tens, hundreds...)
// and formats it.
func roundTo(x float64, dec int) string {
	if dec >= 0 {
		s := strconv.FormatFloat(x, 'f', dec, 64)
		if s == "-0" || strings.Trim(s, "-0.") == "" {
			return strings.TrimPrefix(s, "-")
		}
		return s
	}
	p := math.Pow(10, float64(-dec))
	s := strconv.FormatFloat(math.Round(x/p)*p, 'f', 0, 64)
	if s == "-0" {
		s = "0"
	}
	return s
}

// FormatValErr formats a value with its one-sigma error as the report
// does (see fmtValErr), for the commands' terminal output.
func FormatValErr(v, e float64) string { return fmtValErr(v, e) }

// fmtValErr formats a value with its one-sigma error, both rounded to the
// error's precision: "7.43 ± 0.21". An unknown or zero error gives the
// value to six significant digits (whole units for larger numbers, such
// as a BJD) and "± —"; an unknown value gives "—".
func fmtValErr(v, e float64) string {
	v1, e1 := fmtValErrParts(v, e)
	if v1 == "—" {
		return "—"
	}
	return v1 + " ± " + e1
}

// fmtValErrParts returns the rounded value and error separately.
func fmtValErrParts(v, e float64) (string, string) {
	if !isFinite(v) {
		return "—", "—"
	}
	if !isFinite(e) || e <= 0 || math.Abs(v) > 1e15 || e > 1e15 {
		return fmtSig(v, 6), "—"
	}
	dec := errDecimals(e)
	if dec > 12 {
		return strconv.FormatFloat(v, 'g', 4, 64), strconv.FormatFloat(e, 'g', 2, 64)
	}
	return roundTo(v, dec), roundTo(e, dec)
}

// fmtP formats a probability: two significant digits, "< x" when it is an
// upper limit (a Monte Carlo estimate with no draw beyond the observation
// is bounded by its resolution, not equal to it), "< 1e-16" below double
// precision's resolution of 1 − p, "—" when unknown.
func fmtP(p float64, upper bool) string {
	switch {
	case !isFinite(p):
		return "—"
	case upper:
		return "< " + fmtSig(roundUp(p), 2)
	case p < 1e-16:
		return "< 1e-16"
	}
	return strconv.FormatFloat(p, 'g', 2, 64)
}

// FormatProbability formats a calibrated probability (Signal.Probability)
// as the report does: fmtProb.
func FormatProbability(p float64) string { return fmtProb(p) }

// fmtProb formats a calibrated probability to two decimals ("0.55"; the
// calibration is no finer), "—" when unknown.
func fmtProb(p float64) string {
	if !isFinite(p) {
		return "—"
	}
	return strconv.FormatFloat(p, 'f', 2, 64)
}

// roundUp rounds p up to two significant digits (an upper limit must not
// shrink when rounded): 1/201 = 0.004975 → 0.005.
func roundUp(p float64) float64 {
	if !(p > 0) {
		return p
	}
	exp := math.Floor(math.Log10(p)) - 1
	q := math.Pow(10, exp)
	return math.Ceil(p/q-1e-9) * q
}

// pText writes "p = 0.012", or "p < 0.005" for an upper limit, for the
// evidence's reasons.
func pText(p float64, upper bool) string {
	if upper {
		return "p " + fmtP(p, true)
	}
	return "p = " + fmtP(p, false)
}

// FormatValueError formats a value with its one-sigma error, both rounded
// to the error's precision ("27.5 ± 2.8"); an unknown error gives "± —" and
// an unknown value "—". Other packages' pages use it to print numbers the
// way the report does.
func FormatValueError(v, e float64) string { return fmtValErr(v, e) }

// AxisTicks returns the labelled tick values of a linear axis over
// [lo, hi] with their labels, as the report's figures draw them: 1, 2 or
// 5 times a power of ten apart, distinct labels without needless
// decimals, and a bounded number of ticks for any input (NaN, infinities
// and ranges at the float64 limit included).
func AxisTicks(lo, hi float64) ([]float64, []string) {
	lo, hi = safeRange(lo, hi, false)
	var vals []float64
	var labs []string
	for _, t := range (niceTicks{}).Ticks(lo, hi) {
		if t.Label != "" {
			vals, labs = append(vals, t.Value), append(labs, t.Label)
		}
	}
	return vals, labs
}
