package activity

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"

	"spotsift/rvfit"
)

// The report's palette: five hues that stay apart for the common forms of
// colour blindness and in greyscale (they differ in lightness), always
// paired with distinct glyphs and dash patterns, so no figure relies on
// colour alone.
var (
	inkDark   = color.RGBA{0x1f, 0x2a, 0x44, 0xff} // near-black blue: data, candidate periods
	inkOchre  = color.RGBA{0xc0, 0x7a, 0x00, 0xff} // ochre: rotation and its harmonics
	inkTeal   = color.RGBA{0x00, 0x7a, 0x78, 0xff} // teal: models
	inkPlum   = color.RGBA{0x8a, 0x3f, 0x7c, 0xff} // plum: a second instrument
	inkGrey   = color.RGBA{0x8c, 0x8c, 0x8c, 0xff} // grey: aliases, bands
	bandColor = color.NRGBA{0x00, 0x7a, 0x78, 0x48}
	seriesInk = []color.Color{inkDark, inkPlum, inkOchre, inkTeal, inkGrey}
	glyphs    = []draw.GlyphDrawer{draw.CircleGlyph{}, draw.TriangleGlyph{}, draw.SquareGlyph{}, draw.CrossGlyph{}, draw.PlusGlyph{}, draw.RingGlyph{}}
)

// figure is one figure of the report: a grid of plots drawn on one canvas.
type figure struct {
	name    string // file name without extension
	title   string
	caption string
	plots   [][]*plot.Plot
	w, h    vg.Length
}

func (f *figure) render(c vg.CanvasWriterTo) ([]byte, error) {
	dc := draw.New(c)
	rows, cols := len(f.plots), 0
	for _, r := range f.plots {
		cols = max(cols, len(r))
	}
	tiles := draw.Tiles{Rows: rows, Cols: cols, PadX: vg.Millimeter * 4, PadY: vg.Millimeter * 3, PadTop: vg.Millimeter * 2, PadBottom: vg.Millimeter * 2, PadLeft: vg.Millimeter * 2, PadRight: vg.Millimeter * 2}
	// Pad short rows so Align sees a full grid.
	grid := make([][]*plot.Plot, rows)
	for i, r := range f.plots {
		grid[i] = append(append([]*plot.Plot(nil), r...), make([]*plot.Plot, cols-len(r))...)
	}
	canv := plot.Align(grid, tiles, dc)
	for i := range grid {
		for j, p := range grid[i] {
			if p != nil {
				p.Draw(canv[i][j])
			}
		}
	}
	var b bytes.Buffer
	if _, err := c.WriteTo(&b); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}

// svg returns the figure as SVG text.
func (f *figure) svg() ([]byte, error) { return f.render(vgsvg.New(f.w, f.h)) }

// png returns the figure as a PNG image at 110 dots per inch.
func (f *figure) png() ([]byte, error) {
	c := vgimg.PngCanvas{Canvas: vgimg.NewWith(vgimg.UseWH(f.w, f.h), vgimg.UseDPI(110))}
	return f.render(c)
}

// newPlot returns a plot in the report's style.
func newPlot(title, xlabel, ylabel string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.Title.TextStyle.Font.Size = vg.Points(10)
	p.X.Label.Text = xlabel
	p.Y.Label.Text = ylabel
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font.Size = vg.Points(9)
		a.Tick.Label.Font.Size = vg.Points(8)
	}
	p.Legend.TextStyle.Font.Size = vg.Points(8)
	p.Legend.Top = true
	return p
}

// safeLabel keeps figure labels that come from input (column and
// instrument names) to plain characters.
func safeLabel(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9', strings.ContainsRune(" _-.+/'()", r):
			b.WriteRune(r)
		default:
			b.WriteRune('?')
		}
	}
	if b.Len() > 40 {
		return b.String()[:40]
	}
	return b.String()
}

// xys copies finite points.
func xys(x, y []float64) plotter.XYs {
	var out plotter.XYs
	for i := range x {
		if isFinite(x[i]) && isFinite(y[i]) {
			out = append(out, plotter.XY{X: x[i], Y: y[i]})
		}
	}
	return out
}

// scatterErr adds points with vertical error bars in style k.
func scatterErr(p *plot.Plot, x, y, e []float64, k int, label string) {
	var pts plotter.XYs
	var errs plotter.YErrors
	for i := range x {
		if isFinite(x[i]) && isFinite(y[i]) {
			pts = append(pts, plotter.XY{X: x[i], Y: y[i]})
			ee := 0.0
			if e != nil && isFinite(e[i]) {
				ee = e[i]
			}
			errs = append(errs, struct{ Low, High float64 }{ee, ee})
		}
	}
	if len(pts) == 0 {
		return
	}
	ink := seriesInk[k%len(seriesInk)]
	if e != nil {
		if eb, err := plotter.NewYErrorBars(struct {
			plotter.XYs
			plotter.YErrors
		}{pts, errs}); err == nil {
			eb.LineStyle.Color = color.RGBA{0xb0, 0xb0, 0xb0, 0xff}
			eb.LineStyle.Width = vg.Points(0.5)
			eb.CapWidth = 0
			p.Add(eb)
		}
	}
	sc, err := plotter.NewScatter(pts)
	if err != nil {
		return
	}
	sc.GlyphStyle.Color = ink
	sc.GlyphStyle.Shape = glyphs[k%len(glyphs)]
	sc.GlyphStyle.Radius = vg.Points(1.8)
	p.Add(sc)
	if label != "" {
		p.Legend.Add(safeLabel(label), sc)
	}
}

// line adds a polyline.
func line(p *plot.Plot, pts plotter.XYs, ink color.Color, width float64, dashes []vg.Length, label string) {
	if len(pts) < 2 {
		return
	}
	l, err := plotter.NewLine(pts)
	if err != nil {
		return
	}
	l.LineStyle.Color = ink
	l.LineStyle.Width = vg.Points(width)
	l.LineStyle.Dashes = dashes
	p.Add(l)
	if label != "" {
		p.Legend.Add(label, l)
	}
}

// vline adds a vertical line at x spanning [lo, hi].
func vline(p *plot.Plot, x, lo, hi float64, ink color.Color, dashes []vg.Length) {
	line(p, plotter.XYs{{X: x, Y: lo}, {X: x, Y: hi}}, ink, 0.8, dashes, "")
}

var (
	dashed = []vg.Length{vg.Points(4), vg.Points(2)}
	dotted = []vg.Length{vg.Points(1), vg.Points(2)}
)

// timeOrigin is the whole day subtracted from epochs on time axes.
func timeOrigin(t []float64) float64 { return math.Floor(t[0]/100) * 100 }

// figTimeSeries draws RV and every indicator against time, instruments
// marked by glyph and colour.
func figTimeSeries(s *rvfit.Series) *figure {
	t0 := timeOrigin(s.Time)
	xl := fmt.Sprintf("BJD_TDB - %.0f (d)", t0)
	insts := s.Instruments()
	rel := make([]float64, s.Len())
	for i, t := range s.Time {
		rel[i] = t - t0
	}
	panel := func(name, unit string, v, e []float64) *plot.Plot {
		yl := name
		if unit != "" {
			yl += " (" + unit + ")"
		}
		p := newPlot("", "", safeLabel(yl))
		for k, in := range insts {
			var x, y, ee []float64
			for i := range v {
				if s.Instrument[i] == in {
					x, y = append(x, rel[i]), append(y, v[i])
					if e != nil {
						ee = append(ee, e[i])
					}
				}
			}
			if e == nil {
				ee = nil
			}
			lab := ""
			if len(insts) > 1 && name == "rv" {
				lab = in
			}
			scatterErr(p, x, y, ee, k, lab)
		}
		return p
	}
	rows := [][]*plot.Plot{{panel("rv", "m/s", s.RV, s.RVErr)}}
	for _, ind := range s.Indicators {
		rows = append(rows, []*plot.Plot{panel(ind.Name, ind.Unit, ind.Value, ind.Err)})
	}
	rows[len(rows)-1][0].X.Label.Text = xl
	return &figure{name: "timeseries", title: "Time series",
		caption: "Radial velocities and every indicator on one time axis; each instrument has its own symbol.",
		plots:   rows, w: 17 * vg.Centimeter, h: vg.Length(3.2*float64(len(rows))+1) * vg.Centimeter}
}

// periodAxis makes a logarithmic period axis with readable ticks.
func periodAxis(p *plot.Plot, pmin, pmax float64) {
	p.X.Scale = plot.LogScale{}
	p.X.Min, p.X.Max = pmin, pmax
	var ticks []plot.Tick
	for _, dec := range []float64{1, 10, 100, 1000, 10000} {
		for _, m := range []float64{1, 2, 5} {
			v := m * dec
			if v >= pmin && v <= pmax {
				ticks = append(ticks, plot.Tick{Value: v, Label: fmt.Sprintf("%g", v)})
			}
		}
	}
	p.X.Tick.Marker = plot.ConstantTicks(ticks)
}

// figPeriodograms stacks the periodograms of RV, residuals, every
// indicator and the window on one period axis, with the candidate periods,
// the rotation period, its harmonics and the 1-day aliases marked.
func figPeriodograms(s *rvfit.Series, dg *Diagnosis) (*figure, error) {
	g := dg.details.grid
	pmin, pmax := 1/g.FMax(), 1/g.FMin
	periods := make([]float64, g.N)
	for k := range periods {
		periods[k] = 1 / g.Freq(k)
	}
	curve := func(pow []float64) plotter.XYs {
		pts := make(plotter.XYs, 0, len(pow))
		for k := len(pow) - 1; k >= 0; k-- {
			pts = append(pts, plotter.XY{X: periods[k], Y: pow[k]})
		}
		return pts
	}
	marks := func(p *plot.Plot, labels bool) {
		for _, sg := range dg.Signals {
			vline(p, float64(sg.Period), 0, 1, inkDark, nil)
		}
		if pr := float64(dg.Rotation.Period); pr > 0 {
			for n := 1; n <= 3; n++ {
				if q := pr / float64(n); q >= pmin && q <= pmax {
					vline(p, q, 0, 1, inkOchre, dashed)
				}
			}
		}
		for _, sg := range dg.Signals {
			if a := 1 / math.Abs(float64(sg.Freq)-1.0027379); a >= pmin && a <= pmax {
				vline(p, a, 0, 1, inkGrey, dotted)
			}
		}
		if labels {
			var lx, ly []float64
			var lt []string
			for i, sg := range dg.Signals {
				lx, ly, lt = append(lx, float64(sg.Period)), append(ly, 1.02), append(lt, fmt.Sprintf("S%d", i+1))
			}
			if pr := float64(dg.Rotation.Period); pr > 0 && pr <= pmax {
				lx, ly, lt = append(lx, pr), append(ly, 0.9), append(lt, "Prot")
			}
			if l, err := plotter.NewLabels(plotter.XYLabels{XYs: xys(lx, ly), Labels: lt}); err == nil {
				for i := range l.TextStyle {
					l.TextStyle[i].Font.Size = vg.Points(7)
				}
				p.Add(l)
			}
		}
	}
	panel := func(name string, pow []float64, top bool) *plot.Plot {
		p := newPlot("", "", safeLabel(name))
		periodAxis(p, pmin, pmax)
		p.Y.Min, p.Y.Max = 0, 1.08
		marks(p, top)
		line(p, curve(pow), inkDark, 0.6, nil, "")
		return p
	}
	opt := &rvfit.GLSOptions{Instrument: s.Instrument}
	rvPg, err := rvfit.GLS(s.Time, s.RV, s.RVErr, g, opt)
	if err != nil {
		return nil, err
	}
	rows := [][]*plot.Plot{{panel("RV power", rvPg.Power, true)}}
	// Residuals: the RVs less every signal's sinusoid and the offsets.
	if len(dg.Signals) > 0 {
		var freqs []float64
		for _, sg := range dg.Signals {
			freqs = append(freqs, float64(sg.Freq))
		}
		inst, ninst := groupIndex(s.Instrument)
		if fit, err := fitSines(s.Time, s.RV, s.RVErr, inst, ninst, freqs, s.Time[0]); err == nil {
			res := make([]float64, s.Len())
			for i, t := range s.Time {
				res[i] = s.RV[i] - fit.model(i, t)
			}
			if pg, err := rvfit.GLS(s.Time, res, s.RVErr, g, opt); err == nil {
				rows = append(rows, []*plot.Plot{panel("residual power", pg.Power, false)})
			}
		}
	}
	for _, ind := range s.Indicators {
		var t, y, e []float64
		var in []string
		sig := indicatorErrors(&ind)
		for i := range ind.Value {
			if ind.Valid(i) {
				t, y, e, in = append(t, s.Time[i]), append(y, ind.Value[i]), append(e, sig[i]), append(in, s.Instrument[i])
			}
		}
		if len(t) < MinEpochs {
			continue
		}
		if pg, err := rvfit.GLS(t, y, e, g, &rvfit.GLSOptions{Instrument: in}); err == nil {
			rows = append(rows, []*plot.Plot{panel(ind.Name+" power", pg.Power, false)})
		}
	}
	if w, err := rvfit.Window(s.Time, nil, g, nil); err == nil {
		rows = append(rows, []*plot.Plot{panel("window", w, false)})
	}
	rows[len(rows)-1][0].X.Label.Text = "period (d)"
	return &figure{name: "periodograms", title: "Periodograms",
		caption: "Generalised Lomb-Scargle power of RV, residuals after removing every signal, each indicator, and the spectral window, on one period axis. Solid lines: the signals (S1, S2, ...); dashed: the rotation period and its harmonics P/2, P/3; dotted: the 1-day aliases of the signals.",
		plots:   rows, w: 17 * vg.Centimeter, h: vg.Length(2.8*float64(len(rows))+1) * vg.Centimeter}, nil
}

// figCorrelations draws RV against each indicator.
func figCorrelations(s *rvfit.Series) *figure {
	var ps []*plot.Plot
	for _, ind := range s.Indicators {
		c := Pearson(s.RV, ind.Value)
		p := newPlot(fmt.Sprintf("%s: r = %.2f, p = %.2g", safeLabel(ind.Name), c.R, c.P), safeLabel(ind.Name), "rv (m/s)")
		for k, in := range s.Instruments() {
			var x, y []float64
			for i := range ind.Value {
				if s.Instrument[i] == in && ind.Valid(i) {
					x, y = append(x, ind.Value[i]), append(y, s.RV[i])
				}
			}
			scatterErr(p, x, y, nil, k, "")
		}
		ps = append(ps, p)
	}
	if len(ps) == 0 {
		return nil
	}
	const perRow = 3
	var rows [][]*plot.Plot
	for i := 0; i < len(ps); i += perRow {
		rows = append(rows, ps[i:min(i+perRow, len(ps))])
	}
	return &figure{name: "correlations", title: "RV against the indicators",
		caption: "Each indicator against the radial velocities, with Pearson's r and its p-value (before any correction for the number of tests).",
		plots:   rows, w: 17 * vg.Centimeter, h: vg.Length(5.5*float64(len(rows))) * vg.Centimeter}
}

// gpMean returns the GP's predictive mean at the data epochs and on a
// grid, with its standard deviation on the grid, for the model comparison
// fit of a signal (data: the signal's own RVs less offsets and sinusoid).
func gpMean(det *signalDetails, grid []float64) (atData, mean, sd []float64, ok bool) {
	m, r := det.gp, det.gpFit
	if m == nil || r == nil || !r.ok {
		return nil, nil, nil, false
	}
	cols := m.design()
	res := append([]float64(nil), m.y...)
	for j, c := range cols {
		for i := range res {
			res[i] -= r.beta[j] * c[i]
		}
	}
	variance := make([]float64, len(m.sigma))
	for i, s := range m.sigma {
		variance[i] = s * s
	}
	sol, err := m.noise(r.theta).Factor(m.t, variance, m.inst)
	if err != nil || sol == nil {
		return nil, nil, nil, false
	}
	atData, _, err = sol.Predict(res, m.t, false)
	if err != nil {
		return nil, nil, nil, false
	}
	mean, v, err := sol.Predict(res, grid, true)
	if err != nil {
		return nil, nil, nil, false
	}
	sd = make([]float64, len(v))
	for i := range v {
		sd[i] = math.Sqrt(math.Max(v[i], 0))
	}
	return atData, mean, sd, true
}

// figFolded draws each signal folded at its period with the fitted
// sinusoid, raw and with the GP activity model subtracted.
func figFolded(s *rvfit.Series, dg *Diagnosis) *figure {
	var rows [][]*plot.Plot
	for k, sg := range dg.Signals {
		det := &dg.details.signals[k]
		P := float64(sg.Period)
		phase := make([]float64, s.Len())
		for i, t := range s.Time {
			phase[i] = math.Mod((t-s.Time[0])/P, 1)
		}
		model := func() plotter.XYs {
			// The sinusoid over one cycle from the fitted components.
			type pt struct{ ph, v float64 }
			var pts []pt
			for i := range phase {
				pts = append(pts, pt{phase[i], det.comp[i]})
			}
			sort.Slice(pts, func(a, b int) bool { return pts[a].ph < pts[b].ph })
			out := make(plotter.XYs, len(pts))
			for i, q := range pts {
				out[i] = plotter.XY{X: q.ph, Y: q.v}
			}
			return out
		}()
		p1 := newPlot(fmt.Sprintf("S%d: P = %.5g d, %s", k+1, P, sg.Verdict), "phase", "rv (m/s)")
		scatterErr(p1, phase, det.own, s.RVErr, 0, "")
		line(p1, model, inkTeal, 1.4, nil, "")
		row := []*plot.Plot{p1}
		if atData, _, _, ok := gpMean(det, nil); ok {
			corr := make([]float64, len(det.own))
			for i := range corr {
				corr[i] = det.own[i] - atData[i]
			}
			p2 := newPlot(fmt.Sprintf("S%d with the GP activity model removed", k+1), "phase", "rv (m/s)")
			scatterErr(p2, phase, corr, s.RVErr, 1, "")
			line(p2, model, inkTeal, 1.4, nil, "")
			row = append(row, p2)
		}
		rows = append(rows, row)
	}
	if len(rows) == 0 {
		return nil
	}
	return &figure{name: "folded", title: "Signals folded at their periods",
		caption: "Each signal's own RVs (the data less the instrument offsets and the other signals) folded at its period (circles), with the fitted sinusoid (line); on the right (triangles), the same after subtracting the Gaussian-process activity model of the model comparison.",
		plots:   rows, w: 17 * vg.Centimeter, h: vg.Length(5.5*float64(len(rows))) * vg.Centimeter}
}

// figGP draws the GP activity model of the first signal that has one over
// time, with its one-sigma band, and the residuals.
func figGP(s *rvfit.Series, dg *Diagnosis) *figure {
	for k := range dg.Signals {
		det := &dg.details.signals[k]
		t0 := timeOrigin(s.Time)
		// A grid inside the observed stretches only (no band across gaps).
		var grid []float64
		for i := 0; i+1 < s.Len(); i++ {
			a, b := s.Time[i], s.Time[i+1]
			if b-a > 10 {
				grid = append(grid, a)
				continue
			}
			for x := a; x < b; x += 0.25 {
				grid = append(grid, x)
			}
		}
		grid = append(grid, s.Time[s.Len()-1])
		atData, mean, sd, ok := gpMean(det, grid)
		if !ok {
			continue
		}
		y := make([]float64, s.Len())
		res := make([]float64, s.Len())
		rel := make([]float64, s.Len())
		for i := range y {
			y[i] = det.own[i] - det.comp[i]
			res[i] = y[i] - atData[i]
			rel[i] = s.Time[i] - t0
		}
		p := newPlot(fmt.Sprintf("GP activity model (with S%d's sinusoid removed)", k+1), "", "rv (m/s)")
		// The band, drawn segment by segment.
		seg := func(lo, hi int) {
			var poly plotter.XYs
			for j := lo; j < hi; j++ {
				poly = append(poly, plotter.XY{X: grid[j] - t0, Y: mean[j] + sd[j]})
			}
			for j := hi - 1; j >= lo; j-- {
				poly = append(poly, plotter.XY{X: grid[j] - t0, Y: mean[j] - sd[j]})
			}
			if pg, err := plotter.NewPolygon(poly); err == nil && len(poly) > 2 {
				pg.Color = bandColor
				pg.LineStyle.Width = 0
				p.Add(pg)
			}
			var ml plotter.XYs
			for j := lo; j < hi; j++ {
				ml = append(ml, plotter.XY{X: grid[j] - t0, Y: mean[j]})
			}
			line(p, ml, inkTeal, 1, nil, "")
		}
		lo := 0
		for j := 1; j <= len(grid); j++ {
			if j == len(grid) || grid[j]-grid[j-1] > 10 {
				if j-lo > 1 {
					seg(lo, j)
				}
				lo = j
			}
		}
		scatterErr(p, rel, y, s.RVErr, 0, "")
		pr := newPlot("residuals", fmt.Sprintf("BJD_TDB - %.0f (d)", t0), "rv (m/s)")
		scatterErr(pr, rel, res, s.RVErr, 0, "")
		return &figure{name: "gp", title: "Gaussian-process activity model",
			caption: fmt.Sprintf("The RVs less S%d's sinusoid and the offsets, with the mean and one-sigma band of the Gaussian-process activity model (two-oscillator rotation kernel) fitted with it; below, the residuals.", k+1),
			plots:   [][]*plot.Plot{{p}, {pr}}, w: 17 * vg.Centimeter, h: 10 * vg.Centimeter}
	}
	return nil
}

// figCoherence draws, per signal, the amplitude and phase fitted season by
// season and the growth of the power with epochs against the strictly
// periodic band.
func figCoherence(s *rvfit.Series, dg *Diagnosis) *figure {
	t0 := timeOrigin(s.Time)
	var rows [][]*plot.Plot
	for k := range dg.Signals {
		det := &dg.details.signals[k]
		var row []*plot.Plot
		if len(det.seasons) > 0 {
			pa := newPlot(fmt.Sprintf("S%d amplitude by season", k+1), fmt.Sprintf("BJD_TDB - %.0f (d)", t0), "K (m/s)")
			pp := newPlot(fmt.Sprintf("S%d phase by season", k+1), fmt.Sprintf("BJD_TDB - %.0f (d)", t0), "phase (rad)")
			var x, a, ae, ph, phe []float64
			for _, sp := range det.seasons {
				x, a, ae, ph, phe = append(x, sp.tMid-t0), append(a, sp.amp), append(ae, sp.ampErr), append(ph, sp.phase), append(phe, sp.phaseErr)
			}
			scatterErr(pa, x, a, ae, 0, "")
			scatterErr(pp, x, ph, phe, 0, "")
			pa.Y.Min = 0
			row = append(row, pa, pp)
		}
		if sc := det.stacked; sc != nil {
			p := newPlot(fmt.Sprintf("S%d power as epochs are added", k+1), "epochs used", "power")
			var band plotter.XYs
			var med, obs plotter.XYs
			for j := range sc.obs {
				n := float64(sc.n0 + j)
				band = append(band, plotter.XY{X: n, Y: sc.hi[j]})
				med = append(med, plotter.XY{X: n, Y: sc.med[j]})
				obs = append(obs, plotter.XY{X: n, Y: sc.obs[j]})
			}
			for j := len(sc.obs) - 1; j >= 0; j-- {
				band = append(band, plotter.XY{X: float64(sc.n0 + j), Y: sc.lo[j]})
			}
			if pg, err := plotter.NewPolygon(band); err == nil {
				pg.Color = bandColor
				pg.LineStyle.Width = 0
				p.Add(pg)
				p.Legend.Add("periodic, 16-84%", pg)
			}
			line(p, med, inkTeal, 1, dashed, "periodic, median")
			line(p, obs, inkDark, 1.2, nil, "observed")
			p.Legend.Left = true
			row = append(row, p)
		}
		if len(row) > 0 {
			rows = append(rows, row)
		}
	}
	if len(rows) == 0 {
		return nil
	}
	return &figure{name: "coherence", title: "Coherence over time",
		caption: "For each signal: the amplitude and phase fitted season by season (or in halves), and the power at its frequency as epochs are added in time order, against the band of a strictly periodic signal of the same amplitude with the data's own residuals as noise.",
		plots:   rows, w: 17 * vg.Centimeter, h: vg.Length(5*float64(len(rows))) * vg.Centimeter}
}

// reportFigures returns every figure the data allow, in report order.
func reportFigures(r *Report) ([]*figure, error) {
	s, dg := r.Series, r.Diagnosis
	figs := []*figure{figTimeSeries(s)}
	if dg.details != nil {
		pf, err := figPeriodograms(s, dg)
		if err != nil {
			return nil, err
		}
		figs = append(figs, pf)
	}
	if f := figCorrelations(s); f != nil {
		figs = append(figs, f)
	}
	if dg.details != nil {
		for _, f := range []*figure{figFolded(s, dg), figGP(s, dg), figCoherence(s, dg)} {
			if f != nil {
				figs = append(figs, f)
			}
		}
	}
	return figs, nil
}
