package survey

import (
	"fmt"
	"html/template"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"spotsift/activity"
	"spotsift/rvfit"
)

// verdictColour gives each verdict its colour in the figures and tables
// (a palette readable by colour-blind viewers: blue, vermilion, grey).
var verdictColour = map[string]string{
	activity.PlanetLike:   "#0072b2",
	activity.ActivityLike: "#d55e00",
	activity.Inconclusive: "#7f7f7f",
}

// point is one marker of a scatter figure.
type point struct {
	x, y   float64
	colour string
	title  string
}

// scatterSVG draws a log-log (logX, logY) scatter figure as SVG text, with
// optional reference lines y = c·x (one per ratio). Points with a
// non-positive or non-finite coordinate on a log axis are left out.
func scatterSVG(pts []point, xlabel, ylabel string, logX, logY bool, ratios []float64) string {
	const W, H, ml, mr, mt, mb = 520.0, 360.0, 64.0, 16.0, 12.0, 48.0
	tx := func(v float64) float64 { return v }
	if logX {
		tx = math.Log10
	}
	ty := func(v float64) float64 { return v }
	if logY {
		ty = math.Log10
	}
	var keep []point
	x0, x1, y0, y1 := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for _, p := range pts {
		if (logX && !(p.x > 0)) || (logY && !(p.y > 0)) {
			continue
		}
		X, Y := tx(p.x), ty(p.y)
		// Values beyond ±1e300 cannot share a linear axis with others
		// without its span overflowing: they are left out like NaN.
		if math.IsNaN(X) || math.IsInf(X, 0) || math.IsNaN(Y) || math.IsInf(Y, 0) || math.Abs(X) > 1e300 || math.Abs(Y) > 1e300 {
			continue
		}
		keep = append(keep, point{X, Y, p.colour, p.title})
		x0, x1, y0, y1 = math.Min(x0, X), math.Max(x1, X), math.Min(y0, Y), math.Max(y1, Y)
	}
	var b strings.Builder
	fmt.Fprintf(&b, `<svg xmlns="http://www.w3.org/2000/svg" width="%g" height="%g" viewBox="0 0 %g %g" font-family="sans-serif" font-size="12">`, W, H, W, H)
	fmt.Fprintf(&b, `<rect x="%g" y="%g" width="%g" height="%g" fill="none" stroke="#333"/>`, ml, mt, W-ml-mr, H-mt-mb)
	if len(keep) == 0 {
		fmt.Fprintf(&b, `<text x="%g" y="%g" text-anchor="middle">no data to show</text></svg>`, W/2, H/2)
		return b.String()
	}
	pad := func(a, c float64) (float64, float64) {
		if c-a < 1e-9 {
			return a - 0.5, c + 0.5
		}
		d := 0.06 * (c - a)
		return a - d, c + d
	}
	x0, x1 = pad(x0, x1)
	y0, y1 = pad(y0, y1)
	px := func(X float64) float64 { return ml + (X-x0)/(x1-x0)*(W-ml-mr) }
	py := func(Y float64) float64 { return H - mb - (Y-y0)/(y1-y0)*(H-mt-mb) }
	// ticks returns tick positions (in axis units: log10 on a log axis)
	// and their labels, distinct for any range.
	ticks := func(a, c float64, log bool) ([]float64, []string) {
		if log {
			var out []float64
			var labs []string
			// Every decade, or every k-th when there are many.
			k := math.Max(1, math.Ceil((math.Ceil(c)-math.Floor(a))/8))
			for e := math.Floor(a/k) * k; e <= math.Ceil(c) && len(out) < 40; e += k {
				if e >= a && e <= c {
					out, labs = append(out, e), append(labs, decade(e))
				}
			}
			if len(out) >= 2 {
				return out, labs
			}
			// Less than two decades: ticks at 1, 2 and 5 times powers of 10.
			out, labs = nil, nil
			for e := math.Floor(a) - 1; e <= math.Ceil(c) && len(out) < 40; e++ {
				for _, m := range []float64{1, 2, 5} {
					if v := e + math.Log10(m); v >= a && v <= c {
						out, labs = append(out, v), append(labs, strconv.FormatFloat(m*math.Pow(10, e), 'g', -1, 64))
					}
				}
			}
			if len(out) >= 2 {
				return out, labs
			}
			// A narrow range: round values in data space.
			vals, labs := activity.AxisTicks(math.Pow(10, a), math.Pow(10, c))
			out = nil
			for _, v := range vals {
				out = append(out, math.Log10(v))
			}
			return out, labs
		}
		return activity.AxisTicks(a, c)
	}
	xt, xlab := ticks(x0, x1, logX)
	yt, ylab := ticks(y0, y1, logY)
	for i, v := range xt {
		if v >= x0 && v <= x1 {
			fmt.Fprintf(&b, `<line x1="%.1f" y1="%g" x2="%.1f" y2="%g" stroke="#333"/><text x="%.1f" y="%g" text-anchor="middle">%s</text>`,
				px(v), H-mb, px(v), H-mb+5, px(v), H-mb+18, xlab[i])
		}
	}
	for i, v := range yt {
		if v >= y0 && v <= y1 {
			fmt.Fprintf(&b, `<line x1="%g" y1="%.1f" x2="%g" y2="%.1f" stroke="#333"/><text x="%g" y="%.1f" text-anchor="end">%s</text>`,
				ml-5, py(v), ml, py(v), ml-8, py(v)+4, ylab[i])
		}
	}
	fmt.Fprintf(&b, `<text x="%g" y="%g" text-anchor="middle">%s</text>`, (ml+W-mr)/2, H-10, template.HTMLEscapeString(xlabel))
	fmt.Fprintf(&b, `<text x="14" y="%g" text-anchor="middle" transform="rotate(-90 14 %g)">%s</text>`, (mt+H-mb)/2, (mt+H-mb)/2, template.HTMLEscapeString(ylabel))
	if logX && logY {
		for _, c := range ratios {
			lc := math.Log10(c)
			// y = x + lc, clipped to the box.
			a, z := math.Max(x0, y0-lc), math.Min(x1, y1-lc)
			if a < z {
				fmt.Fprintf(&b, `<line x1="%.1f" y1="%.1f" x2="%.1f" y2="%.1f" stroke="#bbb" stroke-dasharray="4 3"/><text x="%.1f" y="%.1f" fill="#999" font-size="10">%s</text>`,
					px(a), py(a+lc), px(z), py(z+lc), px(z)-52, py(z+lc)+12, ratioLabel(c))
			}
		}
	}
	for _, p := range keep {
		fmt.Fprintf(&b, `<circle cx="%.1f" cy="%.1f" r="4.5" fill="%s" fill-opacity="0.8" stroke="#222" stroke-width="0.5"><title>%s</title></circle>`,
			px(p.x), py(p.y), p.colour, template.HTMLEscapeString(activity.VisibleText(p.title)))
	}
	b.WriteString(`</svg>`)
	return b.String()
}

// indexStar is one row of the index page.
type indexStar struct {
	Name, Folder, Status, Error, Link string
	Rotation                          string
	Signals                           []indexSignal
}

type indexSignal struct {
	Text, Verdict, Prob, Colour, Summary string
}

var indexTmpl = template.Must(template.New("index").Parse(`<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>spotsift survey</title>
<style>
body{font-family:sans-serif;margin:2em;max-width:72em;color:#222}
table{border-collapse:collapse}td,th{padding:.25em .6em;border-bottom:1px solid #ddd;text-align:left;vertical-align:top}
.v{display:inline-block;padding:0 .4em;border-radius:.3em;color:#fff;margin:.1em 0}
.failed{color:#b00}.fig{display:inline-block;margin-right:1.5em}.caution{font-style:italic;color:#555}
</style></head><body>
<h1>spotsift survey</h1>
<p>{{.Counts}}
Tables: <a href="summary.csv">summary.csv</a>, <a href="summary.fits">summary.fits</a>, catalogue <a href="catalogue.sqlite">catalogue.sqlite</a>.</p>
<p class="caution">{{.Caution}}</p>
<div class="fig"><h2>Signals against the rotation period</h2>{{.Fig1}}<p>Each signal's period against its star's adopted rotation period; dashed: P = Prot, Prot/2, Prot/3.</p></div>
<div class="fig"><h2>Activity level against RV scatter</h2>{{.Fig2}}<p>{{.Fig2Caption}}</p></div>
<p>Colours: <span class="v" style="background:#0072b2">planet-like</span> <span class="v" style="background:#d55e00">activity-like</span> <span class="v" style="background:#7f7f7f">inconclusive</span></p>
{{if .Failures}}<h2>Failed stars</h2><table><tr><th>star</th><th>reason</th></tr>
{{range .Failures}}<tr><td>{{.Name}}</td><td class="failed">{{.Error}}</td></tr>
{{end}}</table>{{end}}
<h2>Stars</h2>
<table><tr><th>star</th><th>status</th><th>rotation</th><th>signals</th></tr>
{{range .Stars}}<tr><td>{{if .Link}}<a href="{{.Link}}">{{.Name}}</a>{{else}}{{.Name}}{{end}}</td><td{{if eq .Status "failed"}} class="failed"{{end}}>{{.Status}}</td><td>{{.Rotation}}</td><td>{{range .Signals}}<span class="v" style="background:{{.Colour}}" title="{{.Summary}}">{{.Text}}: {{.Verdict}}, P(planet) {{.Prob}}</span><br>{{end}}</td></tr>
{{end}}</table>
<p>Written by {{.Creator}}.</p>
</body></html>
`))

// writeIndex writes the index page of recs.
func writeIndex(w io.Writer, outDir string, recs []record, creator string) error {
	type page struct {
		NStars, NDone, NFailed, NPending            int
		NSignals, NPlanet, NActivity, NInconclusive int
		Caution, Creator, Fig2Caption, Counts       string
		Fig1, Fig2                                  template.HTML
		Stars, Failures                             []indexStar
	}
	p := page{NStars: len(recs), Caution: activity.Caution, Creator: creator}
	var f1, f2 []point
	useRHK := false
	for _, r := range recs {
		if r.Diag != nil && !math.IsNaN(float64(r.State.MeanLogRHK)) {
			useRHK = true
		}
	}
	for _, r := range recs {
		is := indexStar{Name: activity.VisibleText(r.Name), Folder: r.Folder, Status: r.Status, Rotation: "—"}
		switch r.Status {
		case StatusDone:
			p.NDone++
		case StatusFailed:
			p.NFailed++
			is.Error = activity.VisibleText(r.State.Error)
			p.Failures = append(p.Failures, is)
		default:
			p.NPending++
		}
		if r.Diag != nil {
			dir := filepath.Join(outDir, StarsDir, r.Folder)
			is.Link = StarsDir + "/" + r.Folder + "/" + activity.VerdictFile
			if _, err := os.Stat(filepath.Join(dir, activity.HTMLFile)); err == nil {
				is.Link = StarsDir + "/" + r.Folder + "/" + activity.HTMLFile
			}
			rot := float64(r.Diag.Rotation.Period)
			if rot > 0 {
				is.Rotation = fmt.Sprintf("%s d (%s)", activity.FormatValueError(rot, float64(r.Diag.Rotation.Err)), activity.VisibleText(r.Diag.Rotation.Source))
			}
			for k, s := range r.Diag.Signals {
				p.NSignals++
				switch s.Verdict {
				case activity.PlanetLike:
					p.NPlanet++
				case activity.ActivityLike:
					p.NActivity++
				default:
					p.NInconclusive++
				}
				c := verdictColour[s.Verdict]
				is.Signals = append(is.Signals, indexSignal{Text: fmt.Sprintf("%.4g d", float64(s.Period)), Verdict: s.Verdict, Prob: activity.FormatProbability(float64(s.Probability)), Colour: c, Summary: activity.VisibleText(s.Summary)})
				f1 = append(f1, point{x: rot, y: float64(s.Period), colour: c, title: fmt.Sprintf("%s signal %d: %.4g d, %s", r.Name, k+1, float64(s.Period), s.Verdict)})
			}
			kind := starKind(r.Diag)
			level := float64(r.State.MeanSIndex)
			if useRHK {
				level = float64(r.State.MeanLogRHK)
			}
			c := verdictColour[kind]
			if c == "" {
				c = "#ffffff"
			}
			f2 = append(f2, point{x: level, y: float64(r.State.RVRMS), colour: c, title: fmt.Sprintf("%s: rms %.3g m/s", r.Name, float64(r.State.RVRMS))})
		}
		p.Stars = append(p.Stars, is)
	}
	p.Fig1 = template.HTML(scatterSVG(f1, "rotation period (d)", "signal period (d)", true, true, []float64{1, 0.5, 1.0 / 3}))
	xl := "mean S-index"
	if useRHK {
		xl = "mean log R'HK"
	}
	p.Fig2 = template.HTML(scatterSVG(f2, xl, "RV rms (m/s)", false, true, nil))
	p.Fig2Caption = "Each star's " + xl + " against the scatter of its RVs about each instrument's mean; a star is coloured planet-like when any of its signals is planet-like (a candidate host, whatever its activity), otherwise activity-like when any signal is, otherwise inconclusive (white: no signal)."
	p.Counts = fmt.Sprintf("%s: %d analysed, %d failed, %d not analysed with their current inputs; %s (%d planet-like, %d activity-like, %d inconclusive).",
		plural(p.NStars, "star", "stars"), p.NDone, p.NFailed, p.NPending, plural(p.NSignals, "signal", "signals"), p.NPlanet, p.NActivity, p.NInconclusive)
	if err := os.MkdirAll(filepath.Join(outDir, FiguresDir), 0o755); err != nil {
		return err
	}
	for _, f := range []struct {
		name string
		svg  template.HTML
	}{{FigurePeriodRotation, p.Fig1}, {FigureActivityScatter, p.Fig2}} {
		err := rvfit.WriteFileAtomic(filepath.Join(outDir, FiguresDir, f.name), func(w io.Writer) error {
			_, err := io.WriteString(w, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"+string(f.svg)+"\n")
			return err
		})
		if err != nil {
			return err
		}
	}
	return indexTmpl.Execute(w, p)
}

// decade labels the tick 10^e: the number for ordinary sizes, "1e-7"
// otherwise (10^−324 is not a float64).
func decade(e float64) string {
	if e >= -4 && e <= 5 {
		return strconv.FormatFloat(math.Pow(10, e), 'g', -1, 64)
	}
	return fmt.Sprintf("1e%d", int(e))
}

// starKind is the verdict a star is coloured by on the index page: a
// candidate planet host (any planet-like signal) first, then an active
// star (any activity-like signal), then inconclusive; "" without signals.
func starKind(dg *activity.Diagnosis) string {
	kind := ""
	for _, s := range dg.Signals {
		switch {
		case s.Verdict == activity.PlanetLike:
			return activity.PlanetLike
		case s.Verdict == activity.ActivityLike:
			kind = activity.ActivityLike
		case kind == "":
			kind = activity.Inconclusive
		}
	}
	return kind
}

// plural writes a count with its noun: "1 star", "2 stars".
func plural(n int, one, many string) string {
	if n == 1 {
		return "1 " + one
	}
	return fmt.Sprintf("%d %s", n, many)
}

// The sample-wide figures, also written as SVG files into FiguresDir.
const (
	FiguresDir            = "figures"
	FigurePeriodRotation  = "period-rotation.svg"
	FigureActivityScatter = "activity-rv-scatter.svg"
)

// ratioLabel names the line P = c·Prot.
func ratioLabel(c float64) string {
	if c == 1 {
		return "P = Prot"
	}
	return fmt.Sprintf("P = Prot/%.3g", 1/c)
}
