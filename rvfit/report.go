package rvfit

import (
	"bufio"
	"fmt"
	"io"
	"strconv"
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
// (name, value, Laplace one-sigma error), followed by each planet's
// physical parameters and the fit statistics.
func (r *FitResult) WriteParams(w io.Writer) error {
	bw := bufio.NewWriter(w)
	fmt.Fprintf(bw, "%-20s %22s %14s\n", "parameter", "map", "error")
	for i, n := range r.ParamNames {
		fmt.Fprintf(bw, "%-20s %22.12g %14.6g\n", n, r.Params[i], r.Errors[i])
	}
	for i, p := range r.Planets {
		fmt.Fprintf(bw, "planet %d: P %.8g d, K %.6g m/s, e %.4f, omega %.3f deg, Tp %.6f, Tc %.6f", i+1, p.P, p.K, p.E, p.OmegaDeg, p.Tp, p.Tc)
		if p.MinMass > 0 {
			fmt.Fprintf(bw, ", m sin i %.5g M_Jup, a %.5g au", p.MinMass, p.SemiMajorAxis)
		}
		fmt.Fprintln(bw)
	}
	fmt.Fprintf(bw, "ln L %.6f, ln prior %.6f, BIC %.4f, ln Z (Laplace) %.4f, residual rms %.4g m/s, %d epochs\n",
		r.LogLikelihood, r.LogPrior, r.BIC, r.LogEvidence, r.ResidualRMS, r.NObs)
	if !r.HessianOK {
		fmt.Fprintln(bw, "warning: Hessian not positive definite; errors and evidence not available")
	}
	return bw.Flush()
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
