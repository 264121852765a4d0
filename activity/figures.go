package activity

import (
	"bytes"
	"fmt"
	"image/color"
	"math"
	"sort"
	"strconv"
	"strings"
	"unicode/utf8"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"

	"spotsift/rvfit"
)

// The report's visual vocabulary. Every colour and glyph has one meaning in
// every figure, and none relies on colour alone (glyphs, dash patterns and
// labels differ too; the hues differ in lightness for greyscale and the
// common forms of colour blindness):
//
//   - instruments: instrument k is drawn with instInk[k] and instGlyph[k]
//     wherever its data appear, whatever was subtracted from them;
//   - black lines: periodogram power and other computed curves of the data;
//   - blue (inkSignal) solid ticks: the signals S1, S2, ...;
//   - ochre (inkRot) ticks: the rotation period and its harmonics;
//   - grey (inkAlias) ticks: the one-day aliases of the signals;
//   - teal (inkModel): models (fitted sinusoid, GP mean and band, the band
//     of a strictly periodic signal);
//   - dark grey dashed lines (inkLevel): false-alarm levels;
//   - small dark grey dots (photStyle): photometry.
var (
	inkCurve  = color.RGBA{0x22, 0x22, 0x22, 0xff}
	inkSignal = color.RGBA{0x1f, 0x5a, 0xa6, 0xff}
	inkRot    = color.RGBA{0xc0, 0x7a, 0x00, 0xff}
	inkAlias  = color.RGBA{0x9a, 0x9a, 0x9a, 0xff}
	inkModel  = color.RGBA{0x00, 0x7a, 0x78, 0xff}
	inkLevel  = color.RGBA{0x55, 0x55, 0x55, 0xff}
	bandColor = color.NRGBA{0x00, 0x7a, 0x78, 0x48}
	errColor  = color.RGBA{0xb0, 0xb0, 0xb0, 0xff}
	instInk   = []color.Color{
		color.RGBA{0x00, 0x00, 0x00, 0xff}, // black
		color.RGBA{0x8a, 0x3f, 0x7c, 0xff}, // plum
		color.RGBA{0x5e, 0x60, 0x00, 0xff}, // olive
		color.RGBA{0x8c, 0x3b, 0x1a, 0xff}, // brown
		color.RGBA{0x4d, 0x4d, 0x80, 0xff}, // slate
	}
	instGlyph = []draw.GlyphDrawer{draw.CircleGlyph{}, draw.TriangleGlyph{}, draw.SquareGlyph{}, draw.CrossGlyph{}, draw.PlusGlyph{}, draw.RingGlyph{}}
)

// plotLimit bounds the values drawn: a point beyond ±plotLimit is left out
// like a NaN, and error bars are cut at it, so that no axis range or span
// overflows float64 (a span of ±MaxFloat64 is infinite, and tick and axis
// arithmetic on it never ends).
const plotLimit = math.MaxFloat64 / 4

// plottable reports whether x can be drawn.
func plottable(x float64) bool { return isFinite(x) && math.Abs(x) <= plotLimit }

// keyItem is one entry of a figure's key.
type keyItem struct {
	label string
	thumb plot.Thumbnailer
}

// figure is one figure of the report: a grid of plots drawn on one canvas,
// with a key drawn above the plots, outside every data area.
type figure struct {
	name    string // file name without extension
	title   string
	caption string
	plots   [][]*plot.Plot
	key     []keyItem
	w, h    vg.Length
}

const keyHeight = 6 * vg.Millimeter

func (f *figure) render(c vg.CanvasWriterTo) ([]byte, error) {
	dc := draw.New(c)
	if len(f.key) > 0 {
		height := dc.Max.Y - dc.Min.Y
		f.drawKey(draw.Crop(dc, 0, 0, height-keyHeight, 0))
		dc = draw.Crop(dc, 0, 0, 0, -keyHeight)
	}
	rows, cols := len(f.plots), 0
	for _, r := range f.plots {
		cols = max(cols, len(r))
	}
	tiles := draw.Tiles{Rows: rows, Cols: cols, PadX: vg.Millimeter * 5, PadY: vg.Millimeter * 3, PadTop: vg.Millimeter * 2, PadBottom: vg.Millimeter * 2, PadLeft: vg.Millimeter * 2, PadRight: vg.Millimeter * 3}
	// Pad short rows so Align sees a full grid.
	grid := make([][]*plot.Plot, rows)
	for i, r := range f.plots {
		grid[i] = append(append([]*plot.Plot(nil), r...), make([]*plot.Plot, cols-len(r))...)
		for _, p := range r {
			if p != nil {
				safeAxes(p)
			}
		}
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

// drawKey draws the key entries side by side in c.
func (f *figure) drawKey(c draw.Canvas) {
	x := vg.Millimeter * 4
	for _, it := range f.key {
		l := plot.NewLegend()
		l.TextStyle.Font.Size = vg.Points(8)
		l.Top, l.Left = true, true
		l.XOffs, l.YOffs = x, -vg.Millimeter
		l.Add(it.label, it.thumb)
		l.Draw(c)
		x += l.Rectangle(c).Size().X + vg.Millimeter*6
	}
}

// svg returns the figure as SVG text.
func (f *figure) svg() ([]byte, error) { return f.render(vgsvg.New(f.w, f.h)) }

// png returns the figure as a PNG image at 120 dots per inch.
func (f *figure) png() ([]byte, error) {
	c := vgimg.PngCanvas{Canvas: vgimg.NewWith(vgimg.UseWH(f.w, f.h), vgimg.UseDPI(120))}
	return f.render(c)
}

// newPlot returns a plot in the report's style, with tick marks that
// terminate and never repeat a label for any range.
func newPlot(title, xlabel, ylabel string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.Title.TextStyle.Font.Size = vg.Points(9)
	p.X.Label.Text = xlabel
	p.Y.Label.Text = ylabel
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font.Size = vg.Points(9)
		a.Tick.Label.Font.Size = vg.Points(8)
		a.Tick.Marker = niceTicks{}
	}
	return p
}

// safeLabel returns a label from the inputs (column, instrument, star
// names) as it may appear in a figure: VisibleText, at most 40 characters.
func safeLabel(s string) string {
	s = VisibleText(s)
	if utf8.RuneCountInString(s) > 40 {
		r := []rune(s)
		s = string(r[:39]) + "…"
	}
	return s
}

// safeAxes makes both axes of p drawable whatever the data: finite limits
// within ±plotLimit, a span that is finite and large enough for distinct
// ticks, positive limits on a logarithmic axis.
func safeAxes(p *plot.Plot) {
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		_, isLog := a.Scale.(plot.LogScale)
		a.Min, a.Max = safeRange(a.Min, a.Max, isLog)
	}
}

// safeRange returns a drawable range for [lo, hi].
func safeRange(lo, hi float64, isLog bool) (float64, float64) {
	if isLog {
		if !(lo > 0) || !plottable(lo) {
			lo = math.SmallestNonzeroFloat64
		}
		if !(hi > 0) || !plottable(hi) {
			hi = lo * 10
		}
		if lo < 1e-300 {
			lo = 1e-300
		}
		if !(hi > lo*1.000001) {
			hi = lo * 10
		}
		return lo, hi
	}
	clamp := func(x, dflt float64) float64 {
		switch {
		case math.IsNaN(x):
			return dflt
		case x > plotLimit:
			return plotLimit
		case x < -plotLimit:
			return -plotLimit
		}
		return x
	}
	lo, hi = clamp(lo, 0), clamp(hi, 1)
	if lo > hi {
		lo, hi = hi, lo
	}
	// Values all within 1e-290 of zero (subnormal arithmetic loses the
	// digits ticks need) are drawn on [−1, 1].
	if math.Max(math.Abs(lo), math.Abs(hi)) < 1e-290 {
		return -1, 1
	}
	// A span too small to hold distinct ticks at this magnitude is widened
	// around its centre.
	mid := lo/2 + hi/2
	if hi-lo <= 1e-9*math.Max(math.Abs(lo), math.Abs(hi)) || hi == lo {
		d := math.Max(math.Abs(mid)*1e-3, 1)
		lo, hi = mid-d, mid+d
		if hi > plotLimit {
			lo, hi = plotLimit-2*d, plotLimit
		}
		if lo < -plotLimit {
			lo, hi = -plotLimit, -plotLimit+2*d
		}
	}
	return lo, hi
}

// niceTicks marks a linear axis at 1, 2 or 5 times a power of ten, with
// labels that carry no needless decimals and are all distinct. It works
// by index, not by repeated addition, so it ends for any range.
type niceTicks struct{}

// Ticks implements plot.Ticker.
func (niceTicks) Ticks(lo, hi float64) []plot.Tick {
	if !isFinite(lo) || !isFinite(hi) || !(hi > lo) {
		if isFinite(lo) {
			return []plot.Tick{{Value: lo, Label: tickLabels([]float64{lo}, 1)[0]}}
		}
		return nil
	}
	half := hi/2 - lo/2 // half the span cannot overflow
	raw := half * 0.6   // three to five major ticks: labels fit narrow panels
	mag := math.Pow(10, math.Floor(math.Log10(raw)))
	nice := []float64{mag, 2 * mag, 5 * mag, 10 * mag}
	k := 0
	for k < 3 && nice[k] < raw {
		k++
	}
	// At least two labelled ticks: a smaller step when the range holds
	// fewer.
	for ; k > 0 && math.Floor(hi/nice[k])-math.Ceil(lo/nice[k]) < 1; k-- {
	}
	step := nice[k]
	if !(step > 0) || !isFinite(step) || lo+step == lo || hi-step == hi {
		return []plot.Tick{{Value: lo, Label: tickLabels([]float64{lo}, hi-lo)[0]}}
	}
	i0, i1 := math.Ceil(lo/step), math.Floor(hi/step)
	var major []float64
	for k := i0; k <= i1 && len(major) < 40; k++ {
		major = append(major, k*step)
	}
	labels := tickLabels(major, step)
	var ticks []plot.Tick
	minor := step / 5
	if step/mag == 2 {
		minor = step / 4
	}
	for j, v := range major {
		ticks = append(ticks, plot.Tick{Value: v, Label: labels[j]})
	}
	for k := math.Ceil(lo / minor); k <= math.Floor(hi/minor) && len(ticks) < 240; k++ {
		if v := k * minor; math.Abs(math.Remainder(v, step)) > minor/2 {
			ticks = append(ticks, plot.Tick{Value: v})
		}
	}
	return ticks
}

// cappedTicks labels a linear axis only up to max: the space above it holds
// markers, not data.
type cappedTicks struct{ max float64 }

// Ticks implements plot.Ticker.
func (c cappedTicks) Ticks(lo, hi float64) []plot.Tick {
	var out []plot.Tick
	for _, t := range (niceTicks{}).Ticks(lo, math.Min(hi, c.max)) {
		if t.Value <= c.max {
			out = append(out, t)
		}
	}
	return out
}

// tickLabels formats tick values spaced by step: fixed decimals when the
// values are of ordinary size, otherwise the shortest exponent form; the
// precision grows until every label is distinct.
func tickLabels(vals []float64, step float64) []string {
	maxAbs := 0.0
	for _, v := range vals {
		maxAbs = math.Max(maxAbs, math.Abs(v))
	}
	out := make([]string, len(vals))
	fixed := maxAbs < 1e6 && (maxAbs == 0 || step >= 1e-4)
	dec := 0
	if fixed && step > 0 && step < 1 {
		dec = int(math.Ceil(-math.Log10(step) - 1e-9))
	}
	sig := 1
	if !fixed && step > 0 && maxAbs > 0 {
		sig = max(1, int(math.Floor(math.Log10(maxAbs))-math.Floor(math.Log10(step)))+1)
	}
	for try := 0; try < 17; try++ {
		seen := map[string]bool{}
		dup := false
		for i, v := range vals {
			if v == 0 {
				out[i] = "0"
			} else if fixed {
				out[i] = strconv.FormatFloat(v, 'f', dec, 64)
			} else {
				out[i] = strconv.FormatFloat(v, 'g', sig, 64)
			}
			if out[i] == "-0" || strings.Trim(out[i], "-0.") == "" {
				out[i] = "0"
			}
			dup = dup || seen[out[i]]
			seen[out[i]] = true
		}
		if !dup {
			break
		}
		dec++
		sig++
	}
	return out
}

// xys copies the drawable points.
func xys(x, y []float64) plotter.XYs {
	var out plotter.XYs
	for i := range x {
		if plottable(x[i]) && plottable(y[i]) {
			out = append(out, plotter.XY{X: x[i], Y: y[i]})
		}
	}
	return out
}

// instStyle returns the glyph style of instrument k.
func instStyle(k int) draw.GlyphStyle {
	return draw.GlyphStyle{Color: instInk[k%len(instInk)], Shape: instGlyph[k%len(instGlyph)], Radius: vg.Points(1.8)}
}

// photStyle draws photometry: small dark-grey dots, a glyph no instrument
// uses.
var photStyle = draw.GlyphStyle{Color: color.RGBA{0x55, 0x55, 0x55, 0xff}, Shape: draw.CircleGlyph{}, Radius: vg.Points(0.9)}

// fitStyle draws values fitted to a signal (season by season): blue, the
// signals' colour, as rings.
var fitStyle = draw.GlyphStyle{Color: inkSignal, Shape: draw.RingGlyph{}, Radius: vg.Points(2.4)}

// scatterErr adds the drawable points with vertical error bars (e may be
// nil) in glyph style st and returns the scatter (nil if no point could be
// drawn).
func scatterErr(p *plot.Plot, x, y, e []float64, st draw.GlyphStyle) *plotter.Scatter {
	var pts plotter.XYs
	var errs plotter.YErrors
	for i := range x {
		if !plottable(x[i]) || !plottable(y[i]) {
			continue
		}
		pts = append(pts, plotter.XY{X: x[i], Y: y[i]})
		ee := 0.0
		if e != nil && isFinite(e[i]) && e[i] > 0 {
			ee = math.Min(e[i], plotLimit-math.Abs(y[i]))
		}
		errs = append(errs, struct{ Low, High float64 }{ee, ee})
	}
	if len(pts) == 0 {
		return nil
	}
	if e != nil {
		if eb, err := plotter.NewYErrorBars(struct {
			plotter.XYs
			plotter.YErrors
		}{pts, errs}); err == nil {
			eb.LineStyle.Color = errColor
			eb.LineStyle.Width = vg.Points(0.5)
			eb.CapWidth = 0
			p.Add(eb)
		}
	}
	sc, err := plotter.NewScatter(pts)
	if err != nil {
		return nil
	}
	sc.GlyphStyle = st
	p.Add(sc)
	return sc
}

// line adds a polyline through the drawable points and returns it (nil
// when fewer than two points remain).
func line(p *plot.Plot, pts plotter.XYs, ink color.Color, width float64, dashes []vg.Length) *plotter.Line {
	var ok plotter.XYs
	for _, q := range pts {
		if plottable(q.X) && plottable(q.Y) {
			ok = append(ok, q)
		}
	}
	if len(ok) < 2 {
		return nil
	}
	l, err := plotter.NewLine(ok)
	if err != nil {
		return nil
	}
	l.LineStyle.Color = ink
	l.LineStyle.Width = vg.Points(width)
	l.LineStyle.Dashes = dashes
	p.Add(l)
	return l
}

// labels adds text labels centred on the given points.
func labels(p *plot.Plot, x, y []float64, text []string, ink color.Color, size float64) {
	var pts plotter.XYs
	var txt []string
	for i := range x {
		if plottable(x[i]) && plottable(y[i]) {
			pts = append(pts, plotter.XY{X: x[i], Y: y[i]})
			txt = append(txt, text[i])
		}
	}
	if len(pts) == 0 {
		return
	}
	l, err := plotter.NewLabels(plotter.XYLabels{XYs: pts, Labels: txt})
	if err != nil {
		return
	}
	for i := range l.TextStyle {
		l.TextStyle[i].Font.Size = vg.Points(size)
		l.TextStyle[i].XAlign = draw.XCenter
		l.TextStyle[i].Color = ink
	}
	p.Add(l)
}

var (
	dashed = []vg.Length{vg.Points(4), vg.Points(2)}
	dotted = []vg.Length{vg.Points(1), vg.Points(2)}
)

// lineThumb and glyphThumb are key entries.
func lineThumb(ink color.Color, width float64, dashes []vg.Length) plot.Thumbnailer {
	l := &plotter.Line{LineStyle: draw.LineStyle{Color: ink, Width: vg.Points(width), Dashes: dashes}}
	return l
}

func instKey(insts []string) []keyItem {
	var out []keyItem
	for k, in := range insts {
		out = append(out, keyItem{label: safeLabel(in), thumb: &plotter.Scatter{GlyphStyle: instStyle(k)}})
	}
	return out
}

// timeOrigin is the whole hundred of days subtracted from epochs on time
// axes.
func timeOrigin(t []float64) float64 {
	if len(t) == 0 || !plottable(t[0]) {
		return 0
	}
	return math.Floor(t[0]/100) * 100
}

func timeLabel(t0 float64) string {
	if t0 == 0 {
		return "BJD_TDB (d)"
	}
	return fmt.Sprintf("BJD_TDB − %s (d)", strconv.FormatFloat(t0, 'f', -1, 64))
}

// indicatorUnit is the unit shown for an indicator: the chromatic slope
// is a velocity per unit ln λ.
func indicatorUnit(ind *rvfit.Indicator) string {
	if ind.Name == chromaticColumn {
		return "m/s per unit ln λ"
	}
	return ind.Unit
}

// zeroPoints holds what the figures subtract from the data: each
// instrument's fitted RV offset and each indicator's per-instrument zero
// point, both from a fit of offsets plus every signal's sinusoid (the fit
// the diagnosis makes), so that instruments share one scale.
type zeroPoints struct {
	inst    []int
	insts   []string
	rv      []float64            // offset per instrument (m/s)
	ind     map[string][]float64 // indicator name → zero point per instrument
	signals []float64            // frequencies used
}

// fitZeroPoints fits the offsets. Without signals the offsets are the
// weighted means per instrument.
func fitZeroPoints(s *rvfit.Series, dg *Diagnosis) *zeroPoints {
	z := &zeroPoints{insts: s.Instruments(), ind: map[string][]float64{}}
	var ninst int
	z.inst, ninst = groupIndex(s.Instrument)
	if dg != nil {
		for _, sg := range dg.Signals {
			if f := float64(sg.Freq); f > 0 && isFinite(f) {
				z.signals = append(z.signals, f)
			}
		}
	}
	offsets := func(y, e []float64) []float64 {
		var off []float64
		if fit, err := fitSines(s.Time, y, e, z.inst, ninst, z.signals, s.Time[0]); err == nil {
			off = fit.Offset
		} else if fit, err := fitSines(s.Time, y, e, z.inst, ninst, nil, s.Time[0]); err == nil {
			off = fit.Offset
		} else {
			off = make([]float64, ninst)
			for k := range off {
				off[k] = math.NaN()
			}
		}
		// A fit that overflowed (values near the float64 limit) falls back
		// to the instrument's median.
		for k := range off {
			if !plottable(off[k]) {
				var v []float64
				for i := range y {
					if z.inst[i] == k && plottable(y[i]) {
						v = append(v, y[i])
					}
				}
				off[k] = 0
				if len(v) > 0 {
					sort.Float64s(v)
					off[k] = v[len(v)/2]
				}
			}
		}
		return off
	}
	z.rv = offsets(s.RV, s.RVErr)
	for k := range s.Indicators {
		ind := &s.Indicators[k]
		z.ind[ind.Name] = offsets(validValues(ind), indicatorErrors(ind))
	}
	return z
}

// validValues returns an indicator's values with NaN where not valid.
func validValues(ind *rvfit.Indicator) []float64 {
	out := make([]float64, len(ind.Value))
	for i := range out {
		out[i] = math.NaN()
		if ind.Valid(i) {
			out[i] = ind.Value[i]
		}
	}
	return out
}

// correctedRV returns the RVs less each instrument's offset.
func (z *zeroPoints) correctedRV(s *rvfit.Series) []float64 {
	out := make([]float64, s.Len())
	for i := range out {
		out[i] = s.RV[i] - z.rv[z.inst[i]]
	}
	return out
}

// correctedIndicator returns an indicator less its zero points.
func (z *zeroPoints) correctedIndicator(ind *rvfit.Indicator) []float64 {
	out := validValues(ind)
	zp := z.ind[ind.Name]
	for i := range out {
		if zp != nil {
			out[i] -= zp[z.inst[i]]
		}
	}
	return out
}

// offsetText lists the offsets removed, for captions.
func (z *zeroPoints) offsetText() string {
	var parts []string
	for k, in := range z.insts {
		if k < len(z.rv) {
			parts = append(parts, fmt.Sprintf("%s %s m/s", VisibleText(in), roundTo(z.rv[k], 1)))
		}
	}
	return strings.Join(parts, ", ")
}

// byInstrument splits x, y, e by instrument and draws them.
func byInstrument(p *plot.Plot, z *zeroPoints, x, y, e []float64) {
	for k := range z.insts {
		var xs, ys, es []float64
		for i := range x {
			if z.inst[i] == k {
				xs, ys = append(xs, x[i]), append(ys, y[i])
				if e != nil {
					es = append(es, e[i])
				}
			}
		}
		if e == nil {
			es = nil
		}
		scatterErr(p, xs, ys, es, instStyle(k))
	}
}

// figTimeSeries draws RV and every indicator against time, each
// instrument's offset or zero point removed.
func figTimeSeries(s *rvfit.Series, z *zeroPoints) *figure {
	t0 := timeOrigin(s.Time)
	rel := make([]float64, s.Len())
	for i, t := range s.Time {
		rel[i] = t - t0
	}
	panel := func(name, unit string, v, e []float64) *plot.Plot {
		yl := name
		if unit != "" {
			yl += " (" + unit + ")"
		}
		p := newPlot("", "", yl)
		byInstrument(p, z, rel, v, e)
		return p
	}
	rows := [][]*plot.Plot{{panel("rv − offset", "m/s", z.correctedRV(s), s.RVErr)}}
	for k := range s.Indicators {
		ind := &s.Indicators[k]
		rows = append(rows, []*plot.Plot{panel(safeLabel(ind.Name)+" − zero point", safeLabel(indicatorUnit(ind)), z.correctedIndicator(ind), ind.Err)})
	}
	rows[len(rows)-1][0].X.Label.Text = timeLabel(t0)
	return &figure{name: "timeseries", title: "Time series",
		caption: "Radial velocities and every indicator on one time axis, with each instrument's fitted offset (RV: " + z.offsetText() + ") and each indicator's per-instrument zero point removed (offsets fitted together with the signals' sinusoids); each instrument has its own symbol.",
		plots:   rows, key: instKey(z.insts), w: 17 * vg.Centimeter, h: vg.Length(3.4*float64(len(rows))+1.6) * vg.Centimeter}
}

// periodAxis makes a logarithmic period axis with readable ticks.
func periodAxis(p *plot.Plot, pmin, pmax float64) {
	pmin, pmax = safeRange(pmin, pmax, true)
	p.X.Scale = plot.LogScale{}
	p.X.Min, p.X.Max = pmin, pmax
	var ticks []plot.Tick
	lo, hi := math.Floor(math.Log10(pmin)), math.Ceil(math.Log10(pmax))
	for e := lo; e <= hi && e-lo < 40; e++ {
		dec := math.Pow(10, e)
		for _, m := range []float64{1, 2, 5} {
			if v := m * dec; v >= pmin && v <= pmax {
				ticks = append(ticks, plot.Tick{Value: v, Label: strconv.FormatFloat(v, 'g', -1, 64)})
			}
		}
	}
	p.X.Tick.Marker = plot.ConstantTicks(ticks)
}

// fapLevels are the false-alarm probabilities drawn on periodograms.
var fapLevels = []struct {
	p     float64
	label string
}{{0.1, "FAP 10%"}, {0.01, "1%"}, {0.001, "0.1%"}}

// marker is a period marked above a periodogram.
type marker struct {
	period float64
	label  string
	ink    color.Color
	width  float64
}

// periodMarkers returns the signals, the rotation period and harmonics and
// the signals' one-day aliases inside [pmin, pmax].
func periodMarkers(dg *Diagnosis, pmin, pmax float64) []marker {
	var out []marker
	in := func(p float64) bool { return p >= pmin && p <= pmax && plottable(p) }
	for _, sg := range dg.Signals {
		f := float64(sg.Freq)
		for _, a := range []float64{math.Abs(f - siderealFreq), f + siderealFreq} {
			if a > 0 && in(1/a) {
				out = append(out, marker{1 / a, "", inkAlias, 1})
			}
		}
	}
	if pr := float64(dg.Rotation.Period); pr > 0 {
		for n, lab := range []string{"Prot", "Prot/2", "Prot/3"} {
			if q := pr / float64(n+1); in(q) {
				out = append(out, marker{q, lab, inkRot, 1.6})
			}
		}
	}
	for i, sg := range dg.Signals {
		if p := float64(sg.Period); in(p) {
			out = append(out, marker{p, fmt.Sprintf("S%d", i+1), inkSignal, 1.8})
		}
	}
	return out
}

// drawMarkers draws the markers as short ticks between y0 and y1 (above
// the curve) and, when labelAt > 0, their labels above, staggered on up
// to three rows so that none overlaps (labels closer than 5% of the log
// period axis go to the next row).
func drawMarkers(p *plot.Plot, ms []marker, pmin, pmax, y0, y1, labelAt, labelStep float64) {
	for _, m := range ms {
		line(p, plotter.XYs{{X: m.period, Y: y0}, {X: m.period, Y: y1}}, m.ink, m.width, nil)
	}
	if labelAt <= 0 {
		return
	}
	var lab []marker
	for _, m := range ms {
		if m.label != "" {
			lab = append(lab, m)
		}
	}
	sort.Slice(lab, func(a, b int) bool { return lab[a].period < lab[b].period })
	// A 7-point character is about 0.9% of a full-width panel.
	width := math.Log10(pmax / pmin)
	char := 0.009 * width
	lastEnd := []float64{math.Inf(-1), math.Inf(-1), math.Inf(-1)}
	for _, m := range lab {
		x := math.Log10(m.period / pmin)
		half := char * float64(utf8.RuneCountInString(m.label)) / 2
		row := 0
		for row < len(lastEnd)-1 && x-half < lastEnd[row]+char {
			row++
		}
		lastEnd[row] = x + half
		labels(p, []float64{m.period}, []float64{labelAt + float64(row)*labelStep}, []string{m.label}, m.ink, 7)
	}
}

// powerPanel draws one periodogram with its own power scale, the
// false-alarm levels when pg is not nil, and the period markers.
func powerPanel(name string, periods, pow []float64, pg *rvfit.Periodogram, g rvfit.Grid, ms []marker, top bool, pmin, pmax float64) *plot.Plot {
	p := newPlot("", "", name)
	periodAxis(p, pmin, pmax)
	peak := 0.0
	for _, v := range pow {
		if isFinite(v) {
			peak = math.Max(peak, v)
		}
	}
	type level struct {
		y     float64
		label string
	}
	var lv []level
	if pg != nil {
		for _, f := range fapLevels {
			y := rvfit.BaluevPower(f.p, pg.NObs, pg.NOffsets, g.FMax(), pg.TEff)
			if isFinite(y) && y > 0 {
				lv = append(lv, level{y, f.label})
			}
		}
	}
	scale := peak
	if len(lv) > 0 {
		scale = math.Max(scale, lv[0].y) // at least the 10% level
	}
	if !(scale > 0) {
		scale = 1
	}
	scale *= 1.05
	var shown []level
	for _, l := range lv {
		if l.y <= scale {
			shown = append(shown, l)
		}
	}
	ymax := scale * 1.3
	if top {
		ymax = scale * 1.75
	}
	p.Y.Min, p.Y.Max = 0, ymax
	// FAP levels, labelled at the right edge; levels closer than 15% of the
	// panel height share one label, written at the highest of them.
	var group []string
	for i, l := range shown {
		line(p, plotter.XYs{{X: pmin, Y: l.y}, {X: pmax, Y: l.y}}, inkLevel, 0.6, dashed)
		group = append(group, l.label)
		if i+1 < len(shown) && shown[i+1].y-l.y < 0.15*ymax {
			continue
		}
		text := strings.Join(group, ", ")
		if len(group) > 1 {
			text = "FAP " + strings.TrimPrefix(strings.Join(group, ", "), "FAP ")
		}
		labels(p, []float64{pmax / math.Pow(pmax/pmin, 0.06)}, []float64{l.y + 0.015*ymax}, []string{text}, inkLevel, 6.5)
		group = nil
	}
	p.Y.Tick.Marker = cappedTicks{max: scale}
	pts := make(plotter.XYs, 0, len(pow))
	for k := len(pow) - 1; k >= 0; k-- {
		pts = append(pts, plotter.XY{X: periods[k], Y: pow[k]})
	}
	line(p, pts, inkCurve, 0.6, nil)
	if top {
		drawMarkers(p, ms, pmin, pmax, scale*1.08, scale*1.22, scale*1.3, scale*0.14)
	} else {
		drawMarkers(p, ms, pmin, pmax, scale*1.08, scale*1.25, 0, 0)
	}
	return p
}

// fullResiduals returns the RVs less the full model of the diagnosis: the
// offsets, every signal's sinusoid and, when the model comparison fitted
// one, the GP activity model; the text says which model was removed.
func fullResiduals(s *rvfit.Series, dg *Diagnosis) ([]float64, string) {
	if dg.details == nil || len(dg.Signals) == 0 {
		return nil, ""
	}
	for k := range dg.details.signals {
		if w := dg.details.signals[k].multi; w != nil && len(w.Residuals) == s.Len() {
			return w.Residuals, fmt.Sprintf("the offsets, every signal's sinusoid and the multi-output GP activity model fitted with S%d", k+1)
		}
	}
	for k := range dg.details.signals {
		det := &dg.details.signals[k]
		if atData, _, _, ok := gpMean(det, nil); ok && len(det.own) == s.Len() {
			res := make([]float64, s.Len())
			for i := range res {
				res[i] = det.own[i] - det.comp[i] - atData[i]
			}
			return res, fmt.Sprintf("the offsets, every signal's sinusoid and the GP activity model fitted with S%d", k+1)
		}
	}
	det := &dg.details.signals[0]
	if len(det.own) != s.Len() {
		return nil, ""
	}
	res := make([]float64, s.Len())
	for i := range res {
		res[i] = det.own[i] - det.comp[i]
	}
	return res, "the offsets and every signal's sinusoid (no GP activity model was fitted)"
}

// figPeriodograms stacks the periodograms of RV, the residuals of the
// full model, every indicator and the window on one period axis.
func figPeriodograms(s *rvfit.Series, dg *Diagnosis) (*figure, error) {
	g := dg.details.grid
	pmin, pmax := 1/g.FMax(), 1/g.FMin
	periods := make([]float64, g.N)
	for k := range periods {
		periods[k] = 1 / g.Freq(k)
	}
	ms := periodMarkers(dg, pmin, pmax)
	opt := &rvfit.GLSOptions{Instrument: s.Instrument}
	rvPg, err := rvfit.GLS(s.Time, s.RV, s.RVErr, g, opt)
	if err != nil {
		return nil, err
	}
	rows := [][]*plot.Plot{{powerPanel("RV power", periods, rvPg.Power, rvPg, g, ms, true, pmin, pmax)}}
	resText := ""
	if res, what := fullResiduals(s, dg); res != nil {
		if pg, err := rvfit.GLS(s.Time, res, s.RVErr, g, opt); err == nil {
			rows = append(rows, []*plot.Plot{powerPanel("residual power", periods, pg.Power, pg, g, ms, false, pmin, pmax)})
			resText = " The residual periodogram is that of the RVs less " + what + "."
		}
	}
	for k := range s.Indicators {
		ind := &s.Indicators[k]
		var t, y, e []float64
		var in []string
		sig := indicatorErrors(ind)
		for i := range ind.Value {
			if ind.Valid(i) {
				t, y, e, in = append(t, s.Time[i]), append(y, ind.Value[i]), append(e, sig[i]), append(in, s.Instrument[i])
			}
		}
		if len(t) < MinEpochs {
			continue
		}
		if pg, err := rvfit.GLS(t, y, e, g, &rvfit.GLSOptions{Instrument: in}); err == nil {
			rows = append(rows, []*plot.Plot{powerPanel(safeLabel(ind.Name)+" power", periods, pg.Power, pg, g, ms, false, pmin, pmax)})
		}
	}
	if w, err := rvfit.Window(s.Time, nil, g, nil); err == nil {
		rows = append(rows, []*plot.Plot{powerPanel("window", periods, w, nil, g, ms, false, pmin, pmax)})
	}
	rows[len(rows)-1][0].X.Label.Text = "period (d)"
	key := []keyItem{
		{"signal", lineThumb(inkSignal, 1.8, nil)},
		{"rotation and harmonics", lineThumb(inkRot, 1.6, nil)},
		{"1-day alias of a signal", lineThumb(inkAlias, 1, nil)},
		{"false-alarm level", lineThumb(inkLevel, 0.6, dashed)},
	}
	return &figure{name: "periodograms", title: "Periodograms",
		caption: "Generalised Lomb-Scargle power of the RVs, of the residuals, of each indicator (instrument zero points fitted) and the spectral window, on one period axis; each panel has its own power scale. Short ticks above each curve mark the signals (S1, S2, ...), the rotation period with its harmonics P/2 and P/3, and the one-day aliases of the signals. Dashed lines: false-alarm probabilities of 10%, 1% and 0.1% (Baluev 2008) for the highest peak over the searched band." + resText,
		plots:   rows, key: key, w: 17 * vg.Centimeter, h: vg.Length(3*float64(len(rows))+2.2) * vg.Centimeter}, nil
}

// corrPanel is one panel of the correlation figure, kept for the tests.
type corrPanel struct {
	signal    int // 0-based signal index, −1 without signals
	indicator string
	r         Correlation
}

// figCorrelations draws each indicator against the RVs the way the
// evidence correlates them: for signal k, the signal's own RVs (offsets
// and the other signals removed) against the indicator as the evidence
// saw it (less its per-instrument zero points, fitted with a sinusoid at
// the signal's frequency, and less the cycle and rotation terms fitted
// beside it); r is Pearson's r of exactly these values, the number the
// evidence table quotes as "against the signal's own RVs".
func figCorrelations(s *rvfit.Series, dg *Diagnosis, z *zeroPoints) (*figure, []corrPanel) {
	var ps []*plot.Plot
	var info []corrPanel
	_, ninst := groupIndex(s.Instrument)
	for k := range s.Indicators {
		ind := &s.Indicators[k]
		if ind.Name == chromaticColumn {
			continue
		}
		if dg == nil || dg.details == nil || len(dg.Signals) == 0 {
			x, y := z.correctedIndicator(ind), z.correctedRV(s)
			c := Pearson(y, x)
			p := newPlot(fmt.Sprintf("%s: r = %s", safeLabel(ind.Name), fmtR(c.R)), safeLabel(ind.Name)+" − zero point", "rv − offset (m/s)")
			byInstrument(p, z, x, y, nil)
			ps, info = append(ps, p), append(info, corrPanel{-1, ind.Name, c})
			continue
		}
		for j := range dg.Signals {
			det := &dg.details.signals[j]
			vals := det.indVals[ind.Name]
			if vals == nil {
				vals = validValues(ind)
				fit, err := fitSines(s.Time, ind.Value, indicatorErrors(ind), z.inst, ninst, []float64{det.freq}, s.Time[0])
				if err != nil {
					continue
				}
				for i := range vals {
					vals[i] -= fit.Offset[z.inst[i]]
				}
			}
			if len(det.own) != len(vals) {
				continue
			}
			c := Pearson(det.own, vals)
			p := newPlot(fmt.Sprintf("S%d · %s: r = %s", j+1, safeLabel(ind.Name), fmtR(c.R)), safeLabel(ind.Name)+" − zero point", fmt.Sprintf("S%d's own RVs (m/s)", j+1))
			byInstrument(p, z, vals, det.own, nil)
			ps, info = append(ps, p), append(info, corrPanel{j, ind.Name, c})
		}
	}
	if len(ps) == 0 {
		return nil, nil
	}
	const perRow = 3
	var rows [][]*plot.Plot
	for i := 0; i < len(ps); i += perRow {
		rows = append(rows, ps[i:min(i+perRow, len(ps))])
	}
	caption := "Each indicator against the radial velocities, computed as the evidence computes them: for each signal, the signal's own RVs (the data less each instrument's offset and the other signals' sinusoids) against the indicator less its per-instrument zero points (fitted with a sinusoid at the signal's period). r is Pearson's r of the values drawn, as quoted in the evidence table (\"against the signal's own RVs\"); the evidence's test correlates the indicator with the fitted sinusoid and corrects for the number of indicators (Holm)."
	if dg == nil || len(dg.Signals) == 0 {
		caption = "Each indicator less its per-instrument zero points against the RVs less each instrument's offset, with Pearson's r (no signal was found, so no evidence test uses these correlations)."
	}
	return &figure{name: "correlations", title: "RV against the indicators",
		caption: caption, plots: rows, key: instKey(z.insts),
		w: 17 * vg.Centimeter, h: vg.Length(5.4*float64(len(rows))+1) * vg.Centimeter}, info
}

// fmtR formats a correlation coefficient as the evidence does (two
// decimals), "—" when unknown.
func fmtR(r float64) string {
	if !isFinite(r) {
		return "—"
	}
	return strconv.FormatFloat(r, 'f', 2, 64)
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
func figFolded(s *rvfit.Series, dg *Diagnosis, z *zeroPoints) *figure {
	var rows [][]*plot.Plot
	for k, sg := range dg.Signals {
		det := &dg.details.signals[k]
		P := float64(sg.Period)
		if len(det.own) != s.Len() || !(P > 0) {
			continue
		}
		phase := make([]float64, s.Len())
		for i, t := range s.Time {
			phase[i] = math.Mod((t-s.Time[0])/P, 1)
		}
		type pt struct{ ph, v float64 }
		var mp []pt
		for i := range phase {
			mp = append(mp, pt{phase[i], det.comp[i]})
		}
		sort.Slice(mp, func(a, b int) bool { return mp[a].ph < mp[b].ph })
		model := make(plotter.XYs, len(mp))
		for i, q := range mp {
			model[i] = plotter.XY{X: q.ph, Y: q.v}
		}
		p1 := newPlot(fmt.Sprintf("S%d: P = %s d, %s", k+1, fmtSig(P, 5), sg.Verdict), "phase", "rv (m/s)")
		byInstrument(p1, z, phase, det.own, s.RVErr)
		line(p1, model, inkModel, 1.4, nil)
		row := []*plot.Plot{p1}
		if atData, _, _, ok := gpMean(det, nil); ok {
			corr := make([]float64, len(det.own))
			for i := range corr {
				corr[i] = det.own[i] - atData[i]
			}
			p2 := newPlot(fmt.Sprintf("S%d less the GP activity model", k+1), "phase", "rv (m/s)")
			byInstrument(p2, z, phase, corr, s.RVErr)
			line(p2, model, inkModel, 1.4, nil)
			row = append(row, p2)
		}
		rows = append(rows, row)
	}
	if len(rows) == 0 {
		return nil
	}
	return &figure{name: "folded", title: "Signals folded at their periods",
		caption: "Each signal's own RVs (the data less the instrument offsets and the other signals) folded at its period, with the fitted sinusoid (teal); on the right, the same after subtracting the Gaussian-process activity model of the model comparison. Symbols are instruments, as in every figure.",
		plots:   rows, key: append(instKey(z.insts), keyItem{"fitted sinusoid", lineThumb(inkModel, 1.4, nil)}),
		w: 17 * vg.Centimeter, h: vg.Length(5.5*float64(len(rows))+1) * vg.Centimeter}
}

// figGP draws the GP activity model of the first signal that has one over
// time, with its one-sigma band, and the residuals.
func figGP(s *rvfit.Series, dg *Diagnosis, z *zeroPoints) *figure {
	for k := range dg.Signals {
		det := &dg.details.signals[k]
		if len(det.own) != s.Len() {
			continue
		}
		// A grid inside the observed stretches only (no band across gaps).
		var grid []float64
		for i := 0; i+1 < s.Len(); i++ {
			a, b := s.Time[i], s.Time[i+1]
			if b-a > 10 || !(b > a) {
				grid = append(grid, a)
				continue
			}
			for j := 0; j < 200 && a+float64(j)*0.25 < b; j++ {
				grid = append(grid, a+float64(j)*0.25)
			}
		}
		grid = append(grid, s.Time[s.Len()-1])
		atData, mean, sd, ok := gpMean(det, grid)
		if !ok {
			continue
		}
		y := make([]float64, s.Len())
		for i := range y {
			y[i] = det.own[i] - det.comp[i]
		}
		return drawGP(s, z, k, y, atData, grid, mean, sd)
	}
	return nil
}

// drawGP draws y (the RVs less signal k's sinusoid and the offsets) with
// the GP mean and one-sigma band on grid, and the residuals y − atData.
func drawGP(s *rvfit.Series, z *zeroPoints, k int, y, atData, grid, mean, sd []float64) *figure {
	t0 := timeOrigin(s.Time)
	res := make([]float64, s.Len())
	rel := make([]float64, s.Len())
	for i := range y {
		res[i] = y[i] - atData[i]
		rel[i] = s.Time[i] - t0
	}
	p := newPlot(fmt.Sprintf("GP activity model (S%d's sinusoid removed)", k+1), "", "rv (m/s)")
	seg := func(lo, hi int) {
		var poly plotter.XYs
		for j := lo; j < hi; j++ {
			poly = append(poly, plotter.XY{X: grid[j] - t0, Y: mean[j] + sd[j]})
		}
		for j := hi - 1; j >= lo; j-- {
			poly = append(poly, plotter.XY{X: grid[j] - t0, Y: mean[j] - sd[j]})
		}
		if len(xys(polyX(poly), polyY(poly))) == len(poly) && len(poly) > 2 {
			if pg, err := plotter.NewPolygon(poly); err == nil {
				pg.Color = bandColor
				pg.LineStyle.Width = 0
				p.Add(pg)
			}
		}
		var ml plotter.XYs
		for j := lo; j < hi; j++ {
			ml = append(ml, plotter.XY{X: grid[j] - t0, Y: mean[j]})
		}
		line(p, ml, inkModel, 1, nil)
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
	byInstrument(p, z, rel, y, s.RVErr)
	pr := newPlot("residuals", timeLabel(t0), "rv (m/s)")
	byInstrument(pr, z, rel, res, s.RVErr)
	return &figure{name: "gp", title: "Gaussian-process activity model",
		caption: fmt.Sprintf("The RVs less S%d's sinusoid and the offsets, with the mean (teal line) and one-sigma band (teal area) of the Gaussian-process activity model (two-oscillator rotation kernel) fitted with it; below, the residuals.", k+1),
		plots:   [][]*plot.Plot{{p}, {pr}}, key: append(instKey(z.insts), keyItem{"GP mean and one-sigma band", lineThumb(inkModel, 1, nil)}),
		w: 17 * vg.Centimeter, h: 11 * vg.Centimeter}
}

func polyX(p plotter.XYs) []float64 {
	out := make([]float64, len(p))
	for i, q := range p {
		out[i] = q.X
	}
	return out
}

func polyY(p plotter.XYs) []float64 {
	out := make([]float64, len(p))
	for i, q := range p {
		out[i] = q.Y
	}
	return out
}

// evidenceReason returns the reason of a signal's evidence item, "" when
// the test did not run.
func evidenceReason(sg *Signal, name string) string {
	for _, e := range sg.Evidence {
		if e.Name == name {
			return e.Reason
		}
	}
	return ""
}

// figCoherence draws, per signal, the amplitude and phase fitted season by
// season and the growth of the power with epochs against the strictly
// periodic band.
func figCoherence(s *rvfit.Series, dg *Diagnosis) *figure {
	t0 := timeOrigin(s.Time)
	var rows [][]*plot.Plot
	var notes []string
	hasBand := false
	for k := range dg.Signals {
		det := &dg.details.signals[k]
		var row []*plot.Plot
		if len(det.seasons) > 0 {
			pa := newPlot(fmt.Sprintf("S%d amplitude by season", k+1), timeLabel(t0), "K (m/s)")
			pp := newPlot(fmt.Sprintf("S%d phase by season", k+1), timeLabel(t0), "phase (rad)")
			var x, a, ae, ph, phe []float64
			for _, sp := range det.seasons {
				x, a, ae, ph, phe = append(x, sp.tMid-t0), append(a, sp.amp), append(ae, sp.ampErr), append(ph, sp.phase), append(phe, sp.phaseErr)
			}
			scatterErr(pa, x, a, ae, fitStyle)
			scatterErr(pp, x, ph, phe, fitStyle)
			pa.Y.Min = 0
			row = append(row, pa, pp)
		}
		if sc := det.stacked; sc != nil {
			p := newPlot(fmt.Sprintf("S%d power as epochs are added", k+1), "epochs used", "power")
			var band, med, obs plotter.XYs
			for j := range sc.obs {
				n := float64(sc.n0 + j)
				band = append(band, plotter.XY{X: n, Y: sc.hi[j]})
				med = append(med, plotter.XY{X: n, Y: sc.med[j]})
				obs = append(obs, plotter.XY{X: n, Y: sc.obs[j]})
			}
			for j := len(sc.obs) - 1; j >= 0; j-- {
				band = append(band, plotter.XY{X: float64(sc.n0 + j), Y: sc.lo[j]})
			}
			if len(xys(polyX(band), polyY(band))) == len(band) && len(band) > 2 {
				if pg, err := plotter.NewPolygon(band); err == nil {
					pg.Color = bandColor
					pg.LineStyle.Width = 0
					p.Add(pg)
					hasBand = true
				}
			}
			line(p, med, inkModel, 1, dashed)
			line(p, obs, inkCurve, 1.2, nil)
			row = append(row, p)
			if r := evidenceReason(&dg.Signals[k], "stacked_growth"); r != "" {
				notes = append(notes, fmt.Sprintf("S%d: %s.", k+1, strings.TrimSuffix(r, ".")))
			}
		}
		if len(row) > 0 {
			rows = append(rows, row)
		}
	}
	if len(rows) == 0 {
		return nil
	}
	key := []keyItem{{"fit of one season (all instruments)", &plotter.Scatter{GlyphStyle: fitStyle}}}
	if hasBand {
		key = []keyItem{
			{"fit of one season", &plotter.Scatter{GlyphStyle: fitStyle}},
			{"observed power", lineThumb(inkCurve, 1.2, nil)},
			{"strictly periodic: median", lineThumb(inkModel, 1, dashed)},
			{"and 16-84% band", &plotter.Polygon{Color: bandColor}},
		}
	}
	caption := "For each signal: the amplitude and phase fitted season by season (or in halves) to all instruments together, and the power at its frequency as epochs are added in time order (black), against the median (dashed) and 16-84% band of a strictly periodic signal of the same amplitude with the data's own residuals as noise."
	if len(notes) > 0 {
		caption += " The test on these curves found: " + strings.Join(notes, " ")
	}
	return &figure{name: "coherence", title: "Coherence over time", caption: caption,
		plots: rows, key: key, w: 17 * vg.Centimeter, h: vg.Length(5*float64(len(rows))+1) * vg.Centimeter}
}

// maxAspect is the tallest a figure may be for its width (height / width)
// and still be printed at full width on an A4 page (235 mm of height for
// 180 mm of width, see writePDF).
const maxAspect = 1.3

// splitTall splits a figure whose rows make it taller than maxAspect into
// figures of as many rows as fit, so that every part is printed at full
// width with legible text: the first part keeps the name (and the HTML
// anchor), the others are NAME-2, NAME-3, ... with "(continued)" titles.
// Each part keeps the key, and the x-axis labels of the bottom row.
func splitTall(f *figure) []*figure {
	if f == nil || len(f.plots) < 2 || f.h <= vg.Length(maxAspect)*f.w {
		return []*figure{f}
	}
	rows := len(f.plots)
	extra := 1.6 * vg.Centimeter // key and bottom axis
	rowH := (f.h - extra) / vg.Length(rows)
	per := max(1, int((vg.Length(maxAspect)*f.w-extra)/rowH))
	if per >= rows {
		return []*figure{f}
	}
	// Balance the parts: 13 rows at most 6 a part go 5, 5, 3, not 6, 6, 1.
	nParts := (rows + per - 1) / per
	per = (rows + nParts - 1) / nParts
	bottom := f.plots[rows-1]
	var out []*figure
	for from, k := 0, 1; from < rows; from, k = from+per, k+1 {
		to := min(from+per, rows)
		part := &figure{name: f.name, title: f.title, caption: f.caption, plots: f.plots[from:to], key: f.key,
			w: f.w, h: rowH*vg.Length(to-from) + extra}
		if k > 1 {
			part.name = fmt.Sprintf("%s-%d", f.name, k)
			part.title = f.title + " (continued)"
			part.caption = "Continued from the figure above."
		}
		if to < rows {
			last := part.plots[len(part.plots)-1]
			for j, p := range last {
				if p != nil && p.X.Label.Text == "" && j < len(bottom) && bottom[j] != nil {
					p.X.Label.Text = bottom[j].X.Label.Text
				}
			}
		}
		out = append(out, part)
	}
	return out
}

// reportFigures returns every figure the data allow, in report order
// (tall ones split, see splitTall), and the correlation panels (for the
// checks).
func reportFigures(r *Report) ([]*figure, []corrPanel, error) {
	figs, info, err := reportFiguresWhole(r)
	if err != nil {
		return nil, nil, err
	}
	var out []*figure
	for _, f := range figs {
		out = append(out, splitTall(f)...)
	}
	return out, info, nil
}

// reportFiguresWhole makes the report's figures, each in one piece.
func reportFiguresWhole(r *Report) ([]*figure, []corrPanel, error) {
	s, dg := r.Series, r.Diagnosis
	z := fitZeroPoints(s, dg)
	figs := []*figure{figTimeSeries(s, z)}
	if dg.details != nil {
		pf, err := figPeriodograms(s, dg)
		if err != nil {
			return nil, nil, err
		}
		figs = append(figs, pf)
	}
	fc, info := figCorrelations(s, dg, z)
	if fc != nil {
		figs = append(figs, fc)
	}
	if r.LightCurve != nil {
		if f := figPhotometry(r.LightCurve, dg); f != nil {
			figs = append(figs, f)
		}
	}
	if dg.details != nil {
		for _, f := range []*figure{figFolded(s, dg, z), figGP(s, dg, z), figCoherence(s, dg)} {
			if f != nil {
				figs = append(figs, f)
			}
		}
	}
	return figs, info, nil
}
