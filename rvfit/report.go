package rvfit

import (
	"bufio"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

func fmtG(x float64) string { return strconv.FormatFloat(x, 'g', 10, 64) }

// WritePeriodograms writes every periodogram of r as CSV, one row per grid
// frequency: freq (c/d), period (d), window, rv, then one column per
// prewhitening step (rv-residual-N) and per indicator, all GLS powers in
// [0, 1] on the shared grid. Lines starting with # describe the columns.
func (r *ScanResult) WritePeriodograms(w io.Writer) error {
	bw := bufio.NewWriter(w)
	cols := []*Periodogram{r.RV.Periodogram}
	names := []string{"rv"}
	for i := range r.Prewhitening {
		cols = append(cols, r.Prewhitening[i].Periodogram)
		names = append(names, r.Prewhitening[i].Name)
	}
	for i := range r.Indicators {
		cols = append(cols, r.Indicators[i].Periodogram)
		names = append(names, r.Indicators[i].Name)
	}
	fmt.Fprintf(bw, "# generalised Lomb-Scargle power (Zechmeister & Kuerster 2009) with per-instrument offsets; window with unit weights\n")
	fmt.Fprintf(bw, "# grid: fmin %s c/d, df %s c/d, %d frequencies\n", fmtG(r.Grid.FMin), fmtG(r.Grid.DF), r.Grid.N)
	fmt.Fprint(bw, "freq,period,window")
	for _, n := range names {
		fmt.Fprint(bw, ",", n)
	}
	fmt.Fprintln(bw)
	for k := 0; k < r.Grid.N; k++ {
		f := r.Grid.Freq(k)
		fmt.Fprint(bw, fmtG(f), ",", fmtG(1/f), ",", fmtG(r.Window[k]))
		for _, c := range cols {
			fmt.Fprint(bw, ",", fmtG(c.Power[k]))
		}
		fmt.Fprintln(bw)
	}
	return bw.Flush()
}

// WritePeaks writes the peak lists of r as an aligned text table, one row
// per peak: the series, its rank, period (d), frequency (c/d), power,
// Baluev FAP, bootstrap FAP ("-" when not computed), fitted semi-amplitude
// and, for a peak that is an alias of a stronger one, "alias of #n via …".
func (r *ScanResult) WritePeaks(w io.Writer) error {
	bw := bufio.NewWriter(w)
	fmt.Fprintf(bw, "%-16s %4s %14s %12s %9s %11s %9s %11s  %s\n", "series", "rank", "period_d", "freq_cd", "power", "fap", "boot_fap", "amplitude", "note")
	all := []SeriesPeriodogram{r.RV}
	all = append(all, r.Prewhitening...)
	all = append(all, r.Indicators...)
	for _, sp := range all {
		for i, p := range sp.Peaks {
			boot := "-"
			if p.BootstrapFAP != nil {
				boot = fmt.Sprintf("%.3g", *p.BootstrapFAP)
			}
			note := ""
			if p.AliasOf >= 0 {
				note = fmt.Sprintf("alias of #%d via %s", p.AliasOf+1, p.AliasVia)
			}
			fmt.Fprintf(bw, "%-16s %4d %14.6f %12.8f %9.5f %11.3g %9s %11.4g  %s\n", sp.Name, i+1, p.Period, p.Freq, p.Power, p.FAP, boot, p.Amplitude, note)
		}
	}
	return bw.Flush()
}

// WriteParams writes the MAP parameters of r as an aligned text table
// (name, value rounded to its error, Laplace one-sigma error or "—" when
// unknown, a note for a parameter at a prior bound), followed by each
// planet's physical parameters, the fit statistics and the optimiser's
// status and agreement of starts.
func (r *FitResult) WriteParams(w io.Writer) error {
	bw := bufio.NewWriter(w)
	fmt.Fprintf(bw, "%-20s %20s %12s %12s %12s  %s\n", "parameter", "map", "error", "-1 sigma", "+1 sigma", "note")
	for i, n := range r.ParamNames {
		v, e := RoundToError(r.Params[i], r.Errors[i])
		lo, hi := "—", "—"
		if i < len(r.Median) {
			// The Laplace interval's 16th and 84th percentiles about the
			// MAP, rounded as the error.
			lo, hi = intervalSide(r.Params[i]-r.Lo[i], r.Errors[i]), intervalSide(r.Hi[i]-r.Params[i], r.Errors[i])
		}
		note := ""
		if i < len(r.AtBound) && r.AtBound[i] != "" {
			note = "at " + r.AtBound[i] + " of its prior"
		}
		if i < len(r.Marginal) && r.Marginal[i] {
			// Percentiles of the marginal (the Gaussian failed): its own
			// median, which need not be the MAP.
			med, _ := RoundToError(r.Median[i], r.Errors[i])
			note += "; marginal, median " + med
			if r.Params[i] < r.Lo[i] || r.Params[i] > r.Hi[i] {
				a, _ := RoundToError(r.Lo[i], r.Errors[i])
				b, _ := RoundToError(r.Hi[i], r.Errors[i])
				note += ", 68% " + a + " to " + b
				lo, hi = "—", "—"
			}
		} else if i < len(r.Median) && (r.Params[i] < r.Lo[i] || r.Params[i] > r.Hi[i]) {
			// A MAP outside its own 68% interval (on a bound): the
			// interval itself.
			note += fmt.Sprintf("; Laplace 68%%: %.3g to %.3g", r.Lo[i], r.Hi[i])
			lo, hi = "—", "—"
		}
		fmt.Fprintf(bw, "%-20s %20s %12s %12s %12s  %s\n", n, v, e, lo, hi, strings.TrimPrefix(note, "; "))
	}
	for i, p := range r.Planets {
		fmt.Fprintf(bw, "planet %d: P %.8g d, K %.6g m/s, e %.4f, omega %.3f deg, Tp %.6f, Tc %.6f", i+1, p.P, p.K, p.E, p.OmegaDeg, p.Tp, p.Tc)
		if p.MinMass > 0 {
			fmt.Fprintf(bw, ", m sin i %.5g M_Jup, a %.5g au", p.MinMass, p.SemiMajorAxis)
		}
		fmt.Fprintln(bw)
	}
	lnz := "—"
	if !math.IsNaN(r.LogEvidence) {
		lnz = fmt.Sprintf("%.4f", r.LogEvidence)
	}
	fmt.Fprintf(bw, "ln L %.6f, ln prior %.6f, BIC %.4f, ln Z (Laplace) %s, residual rms %.4g m/s (after the full model), %d epochs\n",
		r.LogLikelihood, r.LogPrior, r.BIC, lnz, r.ResidualRMS, r.NObs)
	conv := "converged"
	if !r.Converged {
		conv = "NOT converged"
	}
	fmt.Fprintf(bw, "optimiser: %s (%s, largest gradient %.2g); %d of %d starts reached the best optimum\n", conv, r.Status, r.GradNorm, r.StartsAgree, len(r.StartLogPosteriors))
	if !r.HessianOK {
		fmt.Fprintln(bw, "warning: the Hessian is not positive definite; errors shown as — are unknown and the evidence is not available")
	}
	for i, b := range r.AtBound {
		if b != "" {
			fmt.Fprintf(bw, "warning: %s sits at the %s of its prior\n", r.ParamNames[i], b)
		}
	}
	return bw.Flush()
}

// intervalSide formats one side of an asymmetric interval, d, with the
// decimals of the symmetric error e ("—" when either is unknown).
func intervalSide(d, e float64) string {
	if math.IsNaN(d) || math.IsInf(d, 0) {
		return "—"
	}
	if !(e > 0) || math.IsInf(e, 0) {
		e = math.Abs(d)
	}
	if !(e > 0) {
		return "0"
	}
	if dec := 1 - int(math.Floor(math.Log10(e))); dec > 0 {
		return strconv.FormatFloat(d, 'f', dec, 64)
	}
	scale := math.Pow(10, float64(int(math.Floor(math.Log10(e)))-1))
	return strconv.FormatFloat(math.Round(d/scale)*scale, 'f', 0, 64)
}

// RoundToError formats v and its one-sigma error e rounded alike: e to
// two significant figures and v to the same decimal place (common
// practice); an unknown error (NaN, infinite or not positive) gives v to
// six significant figures and "—".
func RoundToError(v, e float64) (string, string) {
	if math.IsNaN(v) {
		return "—", "—"
	}
	if !(e > 0) || math.IsInf(e, 0) {
		return strconv.FormatFloat(v, 'g', 6, 64), "—"
	}
	dec := 1 - int(math.Floor(math.Log10(e)))
	if dec < 0 {
		scale := math.Pow(10, float64(-dec))
		return strconv.FormatFloat(math.Round(v/scale)*scale, 'f', 0, 64), strconv.FormatFloat(math.Round(e/scale)*scale, 'f', 0, 64)
	}
	return strconv.FormatFloat(v, 'f', dec, 64), strconv.FormatFloat(e, 'f', dec, 64)
}

// WriteResiduals writes the residuals of r as CSV with columns time
// (BJD_TDB d), instrument, residual and rv_err (m/s), one row per epoch in
// time order.
func (r *FitResult) WriteResiduals(w io.Writer) error {
	bw := bufio.NewWriter(w)
	fmt.Fprintln(bw, "time,instrument,residual,rv_err")
	for i, t := range r.Time {
		in := ""
		if r.model != nil {
			in = r.model.instr[r.model.inst[i]]
		}
		fmt.Fprintf(bw, "%s,%s,%s,%s\n", strconv.FormatFloat(t, 'f', 6, 64), in, fmtG(r.Residuals[i]), fmtG(r.RVErr[i]))
	}
	return bw.Flush()
}
