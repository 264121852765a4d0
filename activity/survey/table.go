package survey

import (
	"encoding/csv"
	"io"
	"math"
	"strconv"
	"strings"

	"spotsift/rvfit"
)

// summaryRow is one signal of the summary table.
type summaryRow struct {
	star, verdict, source, rotSource    string
	idx                                 int
	period, amp, ampErr, fap, power     float64
	score, coverage, rot, rotErr, ratio float64
	prob                                float64
	nEpochs                             int
	baseline, rvRMS                     float64
}

// summaryColumns name the summary table's columns, with their units.
var summaryColumns = []struct{ name, unit string }{
	{"star", ""}, {"signal", ""}, {"period", "d"}, {"amplitude", "m/s"}, {"amplitude_err", "m/s"},
	{"fap", ""}, {"power", ""}, {"verdict", ""}, {"score", ""}, {"probability", ""}, {"coverage", ""}, {"source", ""},
	{"rotation_period", "d"}, {"rotation_err", "d"}, {"rotation_source", ""}, {"p_over_prot", ""},
	{"n_epochs", ""}, {"baseline", "d"}, {"rv_rms", "m/s"},
}

// summaryRows lists every signal of the finished stars, in star-name and
// signal order.
func summaryRows(recs []record) []summaryRow {
	var rows []summaryRow
	for _, r := range recs {
		if r.Diag == nil {
			continue
		}
		rot := float64(r.Diag.Rotation.Period)
		for k, s := range r.Diag.Signals {
			rows = append(rows, summaryRow{star: r.Name, idx: k + 1, verdict: s.Verdict, source: s.Source, rotSource: r.Diag.Rotation.Source,
				period: float64(s.Period), amp: float64(s.K), ampErr: float64(s.KErr), fap: float64(s.FAP), power: float64(s.Power),
				score: s.Score, prob: float64(s.Probability), coverage: s.Coverage, rot: rot, rotErr: float64(r.Diag.Rotation.Err), ratio: float64(s.Period) / rot,
				nEpochs: r.Diag.NEpochs, baseline: float64(r.Diag.Baseline), rvRMS: float64(r.State.RVRMS)})
		}
	}
	return rows
}

func fmtNum(x float64) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return ""
	}
	return strconv.FormatFloat(x, 'g', 10, 64)
}

// writeSummaryCSV writes the summary table as CSV: a comment line with
// the units, a header row, one row per signal; unknown numbers are empty.
func writeSummaryCSV(w io.Writer, rows []summaryRow, creator string) error {
	var units []string
	for _, c := range summaryColumns {
		if c.unit != "" {
			units = append(units, c.name+"="+c.unit)
		}
	}
	if _, err := io.WriteString(w, "# spotsift survey summary, one row per signal; written by "+creator+"\n# units: "+strings.Join(units, " ")+"\n# amplitude: the signal's adopted K (the Keplerian fit of the orbital solution for planet-like and inconclusive signals, the joint sinusoid fit for activity-like ones), as in its report\n"); err != nil {
		return err
	}
	cw := csv.NewWriter(w)
	var head []string
	for _, c := range summaryColumns {
		head = append(head, c.name)
	}
	cw.Write(head)
	for _, r := range rows {
		cw.Write([]string{r.star, strconv.Itoa(r.idx), fmtNum(r.period), fmtNum(r.amp), fmtNum(r.ampErr), fmtNum(r.fap), fmtNum(r.power),
			r.verdict, fmtNum(r.score), fmtNum(r.prob), fmtNum(r.coverage), r.source, fmtNum(r.rot), fmtNum(r.rotErr), r.rotSource, fmtNum(r.ratio),
			strconv.Itoa(r.nEpochs), fmtNum(r.baseline), fmtNum(r.rvRMS)})
	}
	cw.Flush()
	return cw.Error()
}

// ascii replaces every character outside printable ASCII by '?', for FITS
// text columns.
func ascii(s string) string {
	b := make([]byte, 0, len(s))
	for _, r := range s {
		if r < 32 || r > 126 {
			b = append(b, '?')
		} else {
			b = append(b, byte(r))
		}
	}
	return string(b)
}

// writeSummaryFITS writes the summary table as a FITS binary table named
// SIGNALS (rvfit.WriteFITSColumns); integers are written as doubles, star
// names with non-ASCII characters replaced by '?'.
func writeSummaryFITS(w io.Writer, rows []summaryRow, creator string) error {
	n := len(rows)
	text := func(f func(r summaryRow) string) []string {
		out := make([]string, n)
		for i, r := range rows {
			out[i] = ascii(f(r))
		}
		return out
	}
	float := func(f func(r summaryRow) float64) []float64 {
		out := make([]float64, n)
		for i, r := range rows {
			out[i] = f(r)
		}
		return out
	}
	var cols []rvfit.FITSColumn
	for _, c := range summaryColumns {
		fc := rvfit.FITSColumn{Name: c.name, Unit: c.unit}
		switch c.name {
		case "star":
			fc.Text = text(func(r summaryRow) string { return r.star })
		case "verdict":
			fc.Text, fc.Width = text(func(r summaryRow) string { return r.verdict }), 13
		case "source":
			fc.Text, fc.Width = text(func(r summaryRow) string { return r.source }), 11
		case "rotation_source":
			fc.Text = text(func(r summaryRow) string { return r.rotSource })
		case "signal":
			fc.Float = float(func(r summaryRow) float64 { return float64(r.idx) })
		case "period":
			fc.Float = float(func(r summaryRow) float64 { return r.period })
		case "amplitude":
			fc.Float = float(func(r summaryRow) float64 { return r.amp })
		case "amplitude_err":
			fc.Float = float(func(r summaryRow) float64 { return r.ampErr })
		case "fap":
			fc.Float = float(func(r summaryRow) float64 { return r.fap })
		case "power":
			fc.Float = float(func(r summaryRow) float64 { return r.power })
		case "score":
			fc.Float = float(func(r summaryRow) float64 { return r.score })
		case "probability":
			fc.Float = float(func(r summaryRow) float64 { return r.prob })
		case "coverage":
			fc.Float = float(func(r summaryRow) float64 { return r.coverage })
		case "rotation_period":
			fc.Float = float(func(r summaryRow) float64 { return r.rot })
		case "rotation_err":
			fc.Float = float(func(r summaryRow) float64 { return r.rotErr })
		case "p_over_prot":
			fc.Float = float(func(r summaryRow) float64 { return r.ratio })
		case "n_epochs":
			fc.Float = float(func(r summaryRow) float64 { return float64(r.nEpochs) })
		case "baseline":
			fc.Float = float(func(r summaryRow) float64 { return r.baseline })
		case "rv_rms":
			fc.Float = float(func(r summaryRow) float64 { return r.rvRMS })
		}
		if fc.Text == nil && fc.Float == nil {
			fc.Float = make([]float64, n)
		}
		if fc.Text != nil && len(fc.Text) == 0 && fc.Width == 0 {
			fc.Width = 1
		}
		cols = append(cols, fc)
	}
	return rvfit.WriteFITSColumns(w, "SIGNALS", "one row per signal of the survey", cols, nil, &rvfit.WriteOptions{Creator: creator})
}
