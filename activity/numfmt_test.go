package activity

import (
	"math"
	"testing"
)

// TestNumberFormats checks the report's rounding conventions
// (docs/methods.md §15, common practice): errors to two significant digits
// when they start with 1 or 2, else one; values to the error's place;
// unknowns as "—"; Monte Carlo floors as upper limits rounded up.
func TestNumberFormats(t *testing.T) {
	for _, c := range []struct {
		v, e float64
		want string
	}{
		{7.3015, 0.0016, "7.3015 ± 0.0016"},
		{2460327.3512, 0.0712, "2460327.35 ± 0.07"}, // Tc: no digits beyond the error
		{224.5, 48, "220 ± 50"},
		{27.5, 2.75, "27.5 ± 2.8"},
		{0.0386, 0.052, "0.04 ± 0.05"},
		{129.764, 0.1, "129.76 ± 0.10"},
		{3.2, math.NaN(), "3.2 ± —"}, // an unknown error is not 0
		{math.NaN(), 1, "—"},
		{325, 12, "325 ± 12"}, // not 325.00
	} {
		if got := fmtValErr(c.v, c.e); got != c.want {
			t.Errorf("fmtValErr(%g, %g) = %q, want %q", c.v, c.e, got, c.want)
		}
	}
	for _, c := range []struct {
		p     float64
		upper bool
		want  string
	}{
		{1.0 / 201, true, "< 0.005"}, // 200 draws, none beyond the observation
		{1.0 / 1001, true, "< 0.001"},
		{0.0123, false, "0.012"},
		{1e-300, false, "< 1e-16"},
		{math.NaN(), false, "—"},
	} {
		if got := fmtP(c.p, c.upper); got != c.want {
			t.Errorf("fmtP(%g, %v) = %q, want %q", c.p, c.upper, got, c.want)
		}
	}
	for _, c := range []struct {
		x    float64
		want string
	}{{325.0, "325"}, {0.000123, "0.000123"}, {2460327.3512, "2460327"}, {-0.0, "0"}, {math.Inf(1), "—"}} {
		if got := fmtSig(c.x, 6); got != c.want {
			t.Errorf("fmtSig(%g, 6) = %q, want %q", c.x, got, c.want)
		}
	}
	// A calibrated probability: two decimals, unknown as "—", never 0.
	for _, c := range []struct {
		p    float64
		want string
	}{{0.549, "0.55"}, {0.0004, "0.00"}, {1, "1.00"}, {math.NaN(), "—"}} {
		if got := fmtProb(c.p); got != c.want {
			t.Errorf("fmtProb(%g) = %q, want %q", c.p, got, c.want)
		}
	}
}
