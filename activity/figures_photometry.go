package activity

import (
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"spotsift/activity/photometry"
)

// lcFigureBins is the most points of the light curve drawn (binned in
// time beyond it), to keep the figure light.
const lcFigureBins = 2000

// figPhotometry draws the light curve, its GLS periodogram and its
// autocorrelation function, with the rotation period the light curve gives
// (solid) and the one the diagnosis adopted (dashed) marked. Nil when the
// light curve cannot be analysed.
func figPhotometry(lc *photometry.LightCurve, dg *Diagnosis) *figure {
	rot, err := photometry.EstimateRotation(lc, &photometry.RotationOptions{SkipGP: true})
	if err != nil {
		return nil
	}
	lcP := math.NaN()
	for _, e := range dg.Rotation.Estimates {
		if strings.HasPrefix(e.Method, lightCurveMethod) {
			lcP = e.Period
		}
	}
	adopted := float64(dg.Rotation.Period)

	// The light curve, binned.
	t0 := timeOrigin(lc.Time)
	n := lc.Len()
	span := lc.Time[n-1] - lc.Time[0]
	var x, y []float64
	if n <= lcFigureBins {
		for i := range lc.Time {
			x, y = append(x, lc.Time[i]-t0), append(y, lc.Flux[i])
		}
	} else {
		w := span / lcFigureBins
		var st, sf, cnt float64
		k := 0
		flush := func() {
			if cnt > 0 {
				x, y = append(x, st/cnt-t0), append(y, sf/cnt)
			}
			st, sf, cnt = 0, 0, 0
		}
		for i, t := range lc.Time {
			if kk := int((t - lc.Time[0]) / w); kk != k {
				flush()
				k = kk
			}
			st += t
			sf += lc.Flux[i]
			cnt++
		}
		flush()
	}
	pl := newPlot("", timeLabel(t0), "relative flux")
	scatterErr(pl, x, y, nil, photStyle)

	// GLS periodogram against period, with its own power scale and the
	// periods as short ticks above the curve (labelled, staggered).
	pp := newPlot("", "period (d)", "GLS power")
	if pg := rot.Periodogram; pg != nil {
		pts := make(plotter.XYs, 0, pg.Grid.N)
		peak := 0.0
		for k := pg.Grid.N - 1; k >= 0; k-- {
			pts = append(pts, plotter.XY{X: 1 / pg.Grid.Freq(k), Y: pg.Power[k]})
			if isFinite(pg.Power[k]) {
				peak = math.Max(peak, pg.Power[k])
			}
		}
		pmin, pmax := 1/pg.Grid.FMax(), 1/pg.Grid.FMin
		scale := 1.05 * peak
		if !(scale > 0) {
			scale = 1
		}
		line(pp, pts, inkCurve, 0.7, nil)
		periodAxis(pp, pmin, pmax)
		pp.Y.Min, pp.Y.Max = 0, 1.75*scale
		pp.Y.Tick.Marker = cappedTicks{max: scale}
		drawMarkers(pp, photMarkers(lcP, adopted, nil, pmin, pmax), pmin, pmax, 1.08*scale, 1.22*scale, 1.3*scale, 0.14*scale)
	}

	// ACF, with the peaks it used and the periods as ticks above it.
	pa := newPlot("", "lag (d)", "autocorrelation")
	if a := rot.ACF; a != nil && len(a.Lag) > 1 {
		line(pa, xys(a.Lag, a.Value), inkCurve, 0.7, nil)
		lmax := a.Lag[len(a.Lag)-1]
		pa.Y.Min, pa.Y.Max = -1, 1.35
		pa.Y.Tick.Marker = cappedTicks{max: 1}
		drawMarkers(pa, photMarkers(lcP, adopted, a.Peaks, 0, lmax), 0, lmax, 1.08, 1.28, 0, 0)
	}
	caption := "The light curve (binned in time when long), its GLS periodogram and its autocorrelation function (McQuillan, Aigrain & Mazeh 2013). Ochre ticks above the panels: the light curve's rotation period (\"Prot LC\", thick), the period the diagnosis adopted (\"Prot\") and, above the autocorrelation, the peaks it used (thin)."
	switch {
	case isFinite(lcP):
		caption += fmt.Sprintf(" The light curve gives %.3g d.", lcP)
	default:
		caption += " " + rot.Reason + "."
	}
	for _, p := range []*plot.Plot{pl, pp, pa} {
		safeAxes(p)
	}
	key := []keyItem{
		{label: "rotation period (ticks above the panels)", thumb: lineThumb(inkRot, 1.6, nil)},
	}
	return &figure{name: "photometry", title: "Light curve and its rotation period", caption: caption,
		plots: [][]*plot.Plot{{pl}, {pp}, {pa}}, key: key, w: 17 * vg.Centimeter, h: 15 * vg.Centimeter}
}

// photMarkers returns the light curve's rotation period (thick, "Prot
// LC"), the adopted one (thinner, "Prot") and the ACF peaks (thin,
// unlabelled) that fall within [xmin, xmax], all in the rotation's ink.
func photMarkers(lcP, adopted float64, peaks []float64, xmin, xmax float64) []marker {
	in := func(x float64) bool { return x >= xmin && x <= xmax && plottable(x) }
	var out []marker
	for _, l := range peaks {
		if in(l) {
			out = append(out, marker{l, "", inkRot, 0.7})
		}
	}
	if in(adopted) {
		out = append(out, marker{adopted, "Prot", inkRot, 1.2})
	}
	if in(lcP) {
		out = append(out, marker{lcP, "Prot LC", inkRot, 2})
	}
	return out
}
