package activity

import (
	"fmt"
	"image/color"
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

	// GLS periodogram against period.
	pp := newPlot("", "period (d)", "GLS power")
	if pg := rot.Periodogram; pg != nil {
		pts := make(plotter.XYs, 0, pg.Grid.N)
		for k := pg.Grid.N - 1; k >= 0; k-- {
			pts = append(pts, plotter.XY{X: 1 / pg.Grid.Freq(k), Y: pg.Power[k]})
		}
		line(pp, pts, inkCurve, 0.7, nil)
		periodAxis(pp, 1/pg.Grid.FMax(), 1/pg.Grid.FMin)
		mark(pp, lcP, adopted, 0, 1, 1/pg.Grid.FMax(), 1/pg.Grid.FMin)
	}

	// ACF.
	pa := newPlot("", "lag (d)", "autocorrelation")
	if a := rot.ACF; a != nil && len(a.Lag) > 1 {
		line(pa, xys(a.Lag, a.Value), inkCurve, 0.7, nil)
		for _, l := range a.Peaks {
			photVline(pa, l, -1, 1, inkAlias, dotted)
		}
		mark(pa, lcP, adopted, -1, 1, 0, a.Lag[len(a.Lag)-1])
	}
	caption := "The light curve (binned in time when long), its GLS periodogram and its autocorrelation function (McQuillan, Aigrain & Mazeh 2013; dotted grey: the peaks used)."
	switch {
	case isFinite(lcP):
		caption += fmt.Sprintf(" Solid teal: the light curve's rotation period, %.3g d; dashed ochre: the period the diagnosis adopted.", lcP)
	default:
		caption += " " + rot.Reason + "."
	}
	for _, p := range []*plot.Plot{pl, pp, pa} {
		safeAxes(p)
	}
	key := []keyItem{
		{label: "rotation period from the light curve", thumb: lineThumb(inkModel, 0.8, nil)},
		{label: "rotation period adopted", thumb: lineThumb(inkRot, 0.8, dashed)},
	}
	return &figure{name: "photometry", title: "Light curve and its rotation period", caption: caption,
		plots: [][]*plot.Plot{{pl}, {pp}, {pa}}, key: key, w: 17 * vg.Centimeter, h: 15 * vg.Centimeter}
}

// photVline adds a vertical line at x spanning [lo, hi].
func photVline(p *plot.Plot, x, lo, hi float64, ink color.Color, dashes []vg.Length) {
	line(p, plotter.XYs{{X: x, Y: lo}, {X: x, Y: hi}}, ink, 0.8, dashes)
}

// mark draws the light curve's period and the adopted period as vertical
// lines, when they fall within [xmin, xmax].
func mark(p *plot.Plot, lcP, adopted, lo, hi, xmin, xmax float64) {
	if lcP >= xmin && lcP <= xmax {
		photVline(p, lcP, lo, hi, inkModel, nil)
	}
	if adopted >= xmin && adopted <= xmax {
		photVline(p, adopted, lo, hi, inkRot, dashed)
	}
}
