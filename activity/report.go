package activity

import (
	"bytes"
	"encoding/json"
	"fmt"
	"html/template"
	"io"
	"os"
	"path/filepath"
	"sort"
	"strings"

	"codeberg.org/go-fonts/liberation/liberationsansbold"
	"codeberg.org/go-fonts/liberation/liberationsansregular"
	"codeberg.org/go-pdf/fpdf"

	"spotsift/activity/photometry"
	"spotsift/rvfit"
)

// Report is what the report of one star is made from: the diagnosis and
// the series it was computed from.
type Report struct {
	Diagnosis *Diagnosis
	Series    *rvfit.Series
	// Star is the star file's content, nil when none was given.
	Star *Star
	// LightCurve is the star's photometry, nil when none was given.
	LightCurve *photometry.LightCurve
}

// Report file names inside a star's output folder.
const (
	VerdictFile = "verdict.json"
	HTMLFile    = "report.html"
	PDFFile     = "report.pdf"
	FiguresDir  = "figures"
)

// WriteReport writes a star's outputs into dir (created if needed): the
// verdict JSON, the HTML report (one self-contained file: figures inline
// as SVG, no script, nothing fetched), the PDF report with the same
// content, and every figure as separate SVG and PNG files in figures/.
// Each file is written to a temporary name and renamed, so a reader never
// sees half a file.
//
// Every text that comes from the inputs (star name, file names, column
// and instrument names) is shown through VisibleText and escaped in the
// HTML, so that control and bidirectional characters cannot disguise it.
func WriteReport(dir string, r *Report) error {
	if r == nil || r.Diagnosis == nil || r.Series == nil {
		return fmt.Errorf("activity: nothing to report")
	}
	if err := os.MkdirAll(filepath.Join(dir, FiguresDir), 0o755); err != nil {
		return err
	}
	// The K to quote, in the JSON as in the report.
	AdoptK(r.Diagnosis, r.Series, r.Star)
	if err := rvfit.WriteFileAtomic(filepath.Join(dir, VerdictFile), func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(r.Diagnosis)
	}); err != nil {
		return err
	}
	v, rendered, err := buildReport(r)
	if err != nil {
		return err
	}
	for _, f := range rendered {
		for ext, b := range map[string][]byte{".svg": f.svg, ".png": f.png} {
			if err := rvfit.WriteFileAtomic(filepath.Join(dir, FiguresDir, f.fig.name+ext), func(w io.Writer) error {
				_, err := w.Write(b)
				return err
			}); err != nil {
				return err
			}
		}
	}
	if err := rvfit.WriteFileAtomic(filepath.Join(dir, HTMLFile), func(w io.Writer) error {
		return reportTemplate.Execute(w, v)
	}); err != nil {
		return err
	}
	return rvfit.WriteFileAtomic(filepath.Join(dir, PDFFile), func(w io.Writer) error {
		return writePDF(w, v, rendered)
	})
}

type renderedFigure struct {
	fig      *figure
	svg, png []byte
}

// inlineSVG strips the XML prolog so the SVG can sit inside HTML.
func inlineSVG(b []byte) template.HTML {
	s := string(b)
	if i := strings.Index(s, "<svg"); i >= 0 {
		s = s[i:]
	}
	// The SVG is produced by gonum/plot's SVG backend, which escapes all
	// text; labels taken from inputs went through safeLabel.
	return template.HTML(s)
}

// reportView is everything the report shows, formatted: the HTML template
// and the PDF writer read the same strings.
type reportView struct {
	Star       string
	Meta       string
	Rotation   string
	Summary    []summaryRow
	AdoptedK   string
	Notes      []string
	Caution    string
	Orbit      *orbitView
	Activity   []activityRow
	Figures    []figView
	Evidence   []evidenceView
	Rotations  []rotationRow
	StarRows   [][2]string
	Provenance [][2]string
	corr       []corrPanel
}

type summaryRow struct {
	Signal, Period, K, FAP, Verdict, Badge, Score, Prob, Why string
}

type orbitView struct {
	Header  []string   // "", S1, S2...
	Rows    [][]string // parameter, values...
	Inst    [][]string // instrument, offset, jitter
	Stats   string
	Removed string
	Err     string
}

type figView struct {
	ID, Title, Caption string
	SVG                template.HTML
}

type evidenceView struct {
	Title, Badge, Verdict, Heading string
	Rows                           [][6]string // name, value, threshold, points, weight, reason
	Skipped                        [][2]string
}

type rotationRow struct {
	Method, Period, Note string
}

// rotationText formats the adopted rotation period with its error and
// where it came from, saying when the error was assumed.
func rotationText(dg *Diagnosis, star *Star) string {
	p := float64(dg.Rotation.Period)
	if !(p > 0) {
		return "unknown"
	}
	src := VisibleText(dg.Rotation.Source)
	if assumedRotationErr(dg, star) {
		return fmt.Sprintf("%s d (%s; error assumed: 10%%)", fmtValErr(p, float64(dg.Rotation.Err)), src)
	}
	return fmt.Sprintf("%s d (%s)", fmtValErr(p, float64(dg.Rotation.Err)), src)
}

// assumedRotationErr reports whether the adopted rotation period's error
// was assumed rather than measured: a star-file period without an error
// (10% is then assumed), or an estimate whose note says so.
func assumedRotationErr(dg *Diagnosis, star *Star) bool {
	if dg.Rotation.Source == "star file" && (star == nil || !(star.RotationPeriodErr > 0)) {
		return true
	}
	for _, e := range dg.Rotation.Estimates {
		if e.Method == dg.Rotation.Source && strings.Contains(e.Note, "assumed") {
			return true
		}
	}
	return false
}

func badgeOf(v string) string {
	switch v {
	case PlanetLike:
		return "v-planet"
	case ActivityLike:
		return "v-activity"
	}
	return "v-inconclusive"
}

// evidenceValue formats an evidence item's value: probabilities (items
// judged against a significance level below 1, with a value in [0, 1]) as
// p-values, an upper limit written "< x"; other statistics to three
// significant digits.
func evidenceValue(e Evidence) string {
	v, thr := float64(e.Value), float64(e.Threshold)
	if thr > 0 && thr < 1 && v >= 0 && v <= 1 {
		return fmtP(v, e.Bound == "<")
	}
	return fmtSig(v, 3)
}

// buildReport formats everything the report shows and renders the
// figures.
func buildReport(r *Report) (*reportView, []renderedFigure, error) {
	dg, s := r.Diagnosis, r.Series
	v := &reportView{Star: VisibleText(dg.Star), Caution: dg.Caution}
	if v.Star == "" {
		v.Star = "unnamed star"
	}
	insts := s.Instruments()
	var instNames []string
	for _, in := range insts {
		instNames = append(instNames, VisibleText(in))
	}
	v.Meta = fmt.Sprintf("%s over %s days from %s (%s).", plural(dg.NEpochs, "epoch", "epochs"), fmtSig(float64(dg.Baseline), 4),
		plural(len(insts), "instrument", "instruments"), strings.Join(instNames, ", "))
	v.Rotation = rotationText(dg, r.Star)
	for _, n := range dg.Notes {
		v.Notes = append(v.Notes, VisibleText(n))
	}
	// The orbital solution, then the summary quoting its K.
	orb := AdoptK(dg, s, r.Star)
	pOf := map[int]string{}
	if orb != nil && orb.Err == "" {
		ov := &orbitView{Header: []string{"parameter"}}
		for j, k := range orb.Signals {
			ov.Header = append(ov.Header, fmt.Sprintf("S%d", k+1))
			pOf[k] = fmtValErr(orb.Planets[j].P, orb.Planets[j].PErr)
		}
		row := func(name string, get func(p OrbitPlanet) string) {
			cells := []string{name}
			for _, p := range orb.Planets {
				cells = append(cells, get(p))
			}
			ov.Rows = append(ov.Rows, cells)
		}
		row("period P (d)", func(p OrbitPlanet) string { return fmtValErr(p.P, p.PErr) })
		row("semi-amplitude K (m/s)", func(p OrbitPlanet) string { return fmtValErr(p.K, p.KErr) })
		// An eccentricity at its lower bound (the prior's edge, e → 0) is a
		// circular orbit: its error and ω mean nothing there.
		circular := func(p OrbitPlanet) bool { return p.E < circularE }
		row("eccentricity e", func(p OrbitPlanet) string {
			if circular(p) {
				return "0 (at its lower bound: circular)"
			}
			return fmtValErr(p.E, p.EErr)
		})
		row("argument of periastron ω (deg, star's orbit)", func(p OrbitPlanet) string {
			if circular(p) {
				return "— (undefined for a circular orbit)"
			}
			return fmtValErr(p.OmegaDeg, p.OmErr)
		})
		row("time of conjunction Tc (BJD_TDB)", func(p OrbitPlanet) string { return fmtValErr(p.Tc, p.TcErr) })
		if orb.StarMass > 0 {
			row(fmt.Sprintf("minimum mass m sin i (M_Jup, M* = %s M_sun assumed exact)", fmtSig(orb.StarMass, 3)), func(p OrbitPlanet) string { return fmtValErr(p.MinMass, p.MMErr) })
		} else {
			row("minimum mass m sin i (M_Jup)", func(p OrbitPlanet) string { return "— (no stellar mass in the star file)" })
		}
		for j, in := range orb.Instruments {
			jit := fmtValErr(orb.Jitters[j], orb.JitterErrs[j])
			if orb.Jitters[j] < 1e-3 {
				jit = "0 (at its lower bound)"
			}
			ov.Inst = append(ov.Inst, []string{VisibleText(in), fmtValErr(orb.Offsets[j], orb.OffsetErrs[j]), jit})
		}
		how := "errors: half-width of the 16–84% interval of 2000 draws from the fit's Laplace covariance"
		switch {
		case orb.Draws == 0:
			how = "errors not available: the fit's Hessian is not positive definite"
		case !orb.HessianOK:
			how += "; the data leave some orbital parameters unconstrained (shown as —: for a circular orbit, the eccentricity vector), and the other errors are conditional on them at their best values"
		}
		ov.Stats = fmt.Sprintf("Maximum a posteriori fit of %s with one offset and one jitter per instrument (white noise) and the eccentricity prior of Kipping (2013), %d epochs; residual rms %s m/s, ln L = %s, BIC = %s; %s.",
			plural(len(orb.Planets), "Keplerian", "Keplerians"), orb.NObs, fmtSig(orb.ResidualRMS, 3), fmtSig(orb.LogLikelihood, 6), fmtSig(orb.BIC, 6), how)
		if len(orb.Removed) > 0 {
			var names []string
			for _, k := range orb.Removed {
				names = append(names, fmt.Sprintf("S%d", k+1))
			}
			ov.Removed = "The activity-like " + strings.Join(names, ", ") + " were removed first as sinusoids (activity model below)."
		}
		v.Orbit = ov
	} else if orb != nil {
		v.Orbit = &orbitView{Err: "The Keplerian fit failed: " + VisibleText(orb.Err)}
	}
	for k, sg := range dg.Signals {
		K := fmtValErr(float64(sg.K), float64(sg.KErr))
		P, ok := pOf[k]
		if !ok {
			P = fmtSig(float64(sg.Period), 6)
		}
		v.Summary = append(v.Summary, summaryRow{Signal: fmt.Sprintf("S%d", k+1), Period: P, K: K,
			FAP: fmtP(float64(sg.FAP), false), Verdict: sg.Verdict, Badge: badgeOf(sg.Verdict), Score: fmt.Sprintf("%+.2f", sg.Score), Prob: fmtProb(float64(sg.Probability)), Why: VisibleText(sg.Summary)})
	}
	v.AdoptedK = adoptedKText(dg)
	v.Activity = activityModel(dg, insts)
	// Evidence.
	for k, sg := range dg.Signals {
		ev := evidenceView{Title: fmt.Sprintf("S%d: P = %s d", k+1, fmtSig(float64(sg.Period), 6)), Verdict: sg.Verdict, Badge: badgeOf(sg.Verdict),
			Heading: fmt.Sprintf("score %+.2f, P(planet) %s, %.0f%% of the tests ran", sg.Score, fmtProb(float64(sg.Probability)), 100*sg.Coverage)}
		for _, e := range sg.Evidence {
			ev.Rows = append(ev.Rows, [6]string{VisibleText(e.Name), evidenceValue(e), fmtSig(float64(e.Threshold), 3), e.Points, fmt.Sprintf("%+.2f", e.Weight), VisibleText(e.Reason)})
		}
		for _, sk := range sg.Skipped {
			ev.Skipped = append(ev.Skipped, [2]string{VisibleText(sk.Name), VisibleText(sk.Why)})
		}
		v.Evidence = append(v.Evidence, ev)
	}
	for _, e := range dg.Rotation.Estimates {
		note := VisibleText(e.Note)
		pe := fmtValErr(e.Period, e.Err)
		if e.Method == "star file" && (r.Star == nil || !(r.Star.RotationPeriodErr > 0)) {
			pe += " (error assumed: 10%)"
		}
		v.Rotations = append(v.Rotations, rotationRow{VisibleText(e.Method), pe, note})
	}
	v.StarRows = starRows(r.Star, dg)
	v.Provenance = provenanceRows(dg)
	// Figures.
	figs, corr, err := reportFigures(r)
	if err != nil {
		return nil, nil, fmt.Errorf("activity: figures: %w", err)
	}
	v.corr = corr
	rendered := make([]renderedFigure, len(figs))
	for i, f := range figs {
		svg, err := f.svg()
		if err != nil {
			return nil, nil, fmt.Errorf("activity: figure %s: %w", f.name, err)
		}
		png, err := f.png()
		if err != nil {
			return nil, nil, fmt.Errorf("activity: figure %s: %w", f.name, err)
		}
		rendered[i] = renderedFigure{fig: f, svg: svg, png: png}
		v.Figures = append(v.Figures, figView{ID: f.name, Title: f.title, Caption: f.caption, SVG: inlineSVG(svg)})
	}
	return v, rendered, nil
}

// circularE is the eccentricity below which the orbital solution is shown
// as circular (a fit at the lower bound of e; 1e-4 is far below what RVs
// can measure).
const circularE = 1e-4

// adoptedKText is the sentence under the verdict summary saying which K
// it quotes: the one K of each signal, stated once.
func adoptedKText(dg *Diagnosis) string {
	var kep, sin []string
	for k, sg := range dg.Signals {
		if sg.KFrom == KFromKeplerian {
			kep = append(kep, fmt.Sprintf("S%d", k+1))
		} else {
			sin = append(sin, fmt.Sprintf("S%d", k+1))
		}
	}
	var parts []string
	if len(kep) > 0 {
		parts = append(parts, "for "+strings.Join(kep, ", ")+" the semi-amplitude of the Keplerian fit (orbital solution below)")
	}
	if len(sin) > 0 {
		parts = append(parts, "for "+strings.Join(sin, ", ")+" the semi-amplitude of its sinusoid in the joint fit of every signal and the instrument offsets")
	}
	if len(parts) == 0 {
		return ""
	}
	return "K is the adopted semi-amplitude, quoted once: " + strings.Join(parts, "; ") + ". The tests' reasons give significances, not other K values."
}

// starRows is the star's table: every known parameter, "—" for unknown
// ones.
func starRows(st *Star, dg *Diagnosis) [][2]string {
	known := func(x float64, n int, unit string) string {
		if !(x > 0) || !isFinite(x) {
			return "—"
		}
		if unit != "" {
			return fmtSig(x, n) + " " + unit
		}
		return fmtSig(x, n)
	}
	if st == nil {
		st = &Star{Name: dg.Star}
	}
	rot := "—"
	if st.RotationPeriod > 0 {
		if st.RotationPeriodErr > 0 {
			rot = fmtValErr(st.RotationPeriod, st.RotationPeriodErr) + " d"
		} else {
			rot = fmtSig(st.RotationPeriod, 4) + " d (no error given; 10% assumed)"
		}
	}
	scal := "—"
	if st.SIndex.A != 0 || st.SIndex.B != 0 {
		a := st.SIndex.A
		if a == 0 {
			a = 1
		}
		scal = fmt.Sprintf("S_MW = %s S + %s", fmtSig(a, 4), fmtSig(st.SIndex.B, 4))
	}
	scale := "air"
	if st.Vacuum {
		scale = "vacuum"
	}
	name := VisibleText(st.Name)
	if name == "" {
		name = "—"
	}
	return [][2]string{
		{"name", name},
		{"B − V (mag)", known(st.BV, 3, "")},
		{"mass (M_sun)", known(st.Mass, 3, "")},
		{"effective temperature (K)", known(st.Teff, 4, "")},
		{"v sin i (km/s)", known(st.VSinI, 3, "")},
		{"rotation period", rot},
		{"S-index calibration", scal},
		{"wavelength scale of spectra and masks", scale},
	}
}

// provenanceRows lists what the diagnosis was computed from.
func provenanceRows(dg *Diagnosis) [][2]string {
	p := dg.Provenance
	rows := [][2]string{{"program", "spotsift " + VisibleText(p.Version)}, {"seed", fmt.Sprint(p.Seed)}}
	if p.Command != "" {
		rows = append(rows, [2]string{"command", VisibleText(p.Command)})
	}
	for _, in := range p.Inputs {
		rows = append(rows, [2]string{"input", VisibleText(in.Path) + " — SHA-256 " + VisibleText(in.SHA256)})
	}
	keys := make([]string, 0, len(p.Settings))
	for k := range p.Settings {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		rows = append(rows, [2]string{"setting " + VisibleText(k), VisibleText(p.Settings[k])})
	}
	return rows
}

// plural writes a count with its noun: "1 epoch", "2 epochs".
func plural(n int, one, many string) string {
	if n == 1 {
		return "1 " + one
	}
	return fmt.Sprintf("%d %s", n, many)
}

var reportTemplate = template.Must(template.New("report").Parse(`<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>spotsift report: {{.Star}}</title>
<style>
body { font-family: "Liberation Sans", "DejaVu Sans", Arial, sans-serif; color: #1f2a44; margin: 0 auto; max-width: 980px; padding: 1.2rem 1.6rem 3rem; line-height: 1.4; }
h1 { font-size: 1.6rem; margin-bottom: 0.2rem; }
h2 { font-size: 1.2rem; border-bottom: 2px solid #1f2a44; padding-bottom: 0.15rem; margin-top: 2rem; }
h3 { font-size: 1rem; margin-bottom: 0.3rem; }
.meta { color: #444; margin-top: 0; }
table { border-collapse: collapse; width: 100%; font-size: 0.88rem; margin: 0.5rem 0; }
th, td { border-bottom: 1px solid #c8c8c8; padding: 0.25rem 0.4rem; text-align: left; vertical-align: top; }
th { background: #eef0f4; }
td.n { text-align: right; white-space: nowrap; font-variant-numeric: tabular-nums; }
.verdict { display: inline-block; padding: 0.05rem 0.45rem; font-weight: bold; white-space: nowrap; }
.v-planet { border: 2px solid #1f2a44; }
.v-activity { border: 4px double #c07a00; }
.v-inconclusive { border: 2px dashed #8c8c8c; }
.caution { background: #f6f1e4; border-left: 5px solid #c07a00; padding: 0.5rem 0.8rem; }
figure { margin: 1.4rem 0; }
figure svg { width: 100%; height: auto; display: block; }
figcaption { font-size: 0.85rem; color: #333; }
.pt-planet { font-weight: bold; }
.pt-activity { font-style: italic; font-weight: bold; }
code { font-family: "Liberation Mono", "DejaVu Sans Mono", monospace; font-size: 0.82rem; word-break: break-all; }
</style>
</head>
<body>
<header>
<h1>{{.Star}}</h1>
<p class="meta">{{.Meta}} Rotation period: {{.Rotation}}.</p>
</header>

<section id="summary">
<h2>Verdict summary</h2>
{{if .Summary}}
<table>
<tr><th>signal</th><th>period (d)</th><th>K (m/s)</th><th>FAP</th><th>verdict</th><th>score</th><th>P(planet)</th><th>why</th></tr>
{{range .Summary}}<tr><td>{{.Signal}}</td><td class="n">{{.Period}}</td><td class="n">{{.K}}</td><td class="n">{{.FAP}}</td><td><span class="verdict {{.Badge}}">{{.Verdict}}</span></td><td class="n">{{.Score}}</td><td class="n">{{.Prob}}</td><td>{{.Why}}</td></tr>
{{end}}</table>
<p id="adopted-k">{{.AdoptedK}}</p>
{{else}}<p>No signal to judge.</p>{{end}}
{{range .Notes}}<p>Note: {{.}}</p>{{end}}
<p class="caution">{{.Caution}}</p>
</section>

<section id="orbit">
<h2>Orbital solution</h2>
{{with .Orbit}}{{if .Err}}<p>{{.Err}}</p>{{else}}
<table>
<tr>{{range .Header}}<th>{{.}}</th>{{end}}</tr>
{{range .Rows}}<tr>{{range $i, $c := .}}{{if $i}}<td class="n">{{$c}}</td>{{else}}<td>{{$c}}</td>{{end}}{{end}}</tr>
{{end}}</table>
<table>
<tr><th>instrument</th><th>offset (m/s)</th><th>jitter (m/s)</th></tr>
{{range .Inst}}<tr><td>{{index . 0}}</td><td class="n">{{index . 1}}</td><td class="n">{{index . 2}}</td></tr>
{{end}}</table>
<p>{{.Stats}} {{.Removed}}</p>{{end}}
{{else}}<p>No planet-like or inconclusive signal: no orbit is fitted.</p>{{end}}
</section>

<section id="activity-model">
<h2>Activity model</h2>
{{if .Activity}}<table>
<tr><th>parameter</th><th>value</th><th>note</th></tr>
{{range .Activity}}<tr><td>{{.Name}}</td><td class="n">{{.Value}}</td><td>{{.Note}}</td></tr>
{{end}}</table>{{else}}<p>No activity-like signal and no Gaussian-process activity model were fitted.</p>{{end}}
</section>

<section id="figures">
<h2>Evidence in figures</h2>
{{range .Figures}}<figure id="fig-{{.ID}}">
<h3>{{.Title}}</h3>
{{.SVG}}
<figcaption>{{.Caption}}</figcaption>
</figure>
{{end}}
</section>

<section id="evidence">
<h2>Evidence, test by test</h2>
<p>Each test gives a number, the threshold it is judged against, the side it points to and its weight in the score (positive toward activity, negative toward a planet). The score is the sum of the weights divided by the weight of every test spotsift knows, so tests that could not run pull it toward zero. A p-value written "&lt; x" is an upper limit: no Monte Carlo draw reached the observed value.</p>
{{range .Evidence}}
<h3>{{.Title}} — <span class="verdict {{.Badge}}">{{.Verdict}}</span> ({{.Heading}})</h3>
<table>
<tr><th>test</th><th>value</th><th>threshold</th><th>points to</th><th>weight</th><th>reason</th></tr>
{{range .Rows}}<tr><td><code>{{index . 0}}</code></td><td class="n">{{index . 1}}</td><td class="n">{{index . 2}}</td><td class="pt-{{index . 3}}">{{index . 3}}</td><td class="n">{{index . 4}}</td><td>{{index . 5}}</td></tr>
{{end}}</table>
{{if .Skipped}}<p>Not run:</p><ul>{{range .Skipped}}<li><code>{{index . 0}}</code>: {{index . 1}}</li>{{end}}</ul>{{end}}
{{end}}
</section>

<section id="rotation">
<h2>Rotation period</h2>
<table>
<tr><th>estimate</th><th>period (d)</th><th>note</th></tr>
{{range .Rotations}}<tr><td>{{.Method}}</td><td class="n">{{.Period}}</td><td>{{.Note}}</td></tr>
{{end}}</table>
</section>

<section id="star">
<h2>Star</h2>
<table>
{{range .StarRows}}<tr><th>{{index . 0}}</th><td>{{index . 1}}</td></tr>
{{end}}</table>
</section>

<section id="provenance">
<h2>Provenance</h2>
<table>
{{range .Provenance}}<tr><th>{{index . 0}}</th><td><code>{{index . 1}}</code></td></tr>
{{end}}</table>
</section>
</body>
</html>
`))

// writePDF writes the report as a document for circulation: the verdict
// summary on page 1, then the orbital solution and activity model,
// full-width figures, and the evidence, rotation, star and provenance
// tables, all as tables.
func writePDF(w io.Writer, v *reportView, figs []renderedFigure) error {
	pdf := fpdf.New("P", "mm", "A4", "")
	pdf.SetCreator("spotsift", true)
	pdf.SetTitle("spotsift report: "+v.Star, true)
	pdf.AddUTF8FontFromBytes("LS", "", liberationsansregular.TTF)
	pdf.AddUTF8FontFromBytes("LS", "B", liberationsansbold.TTF)
	const margin, width, bottom = 15.0, 180.0, 282.0
	pdf.SetMargins(margin, margin, margin)
	pdf.SetAutoPageBreak(true, 15)
	pdf.AddPage()
	heading := func(size float64, text string) {
		if pdf.GetY() > bottom-25 {
			pdf.AddPage()
		}
		pdf.Ln(1.5)
		pdf.SetFont("LS", "B", size)
		pdf.MultiCell(width, size*0.5, text, "", "L", false)
		pdf.Ln(1)
	}
	body := func(size float64, text string) {
		pdf.SetFont("LS", "", size)
		pdf.MultiCell(width, size*0.45, text, "", "L", false)
		pdf.Ln(1)
	}
	table := func(widths []float64, header []string, rows [][]string, size float64, right map[int]bool) {
		lh := size * 0.42
		draw := func(cells []string, bold bool) {
			style := ""
			if bold {
				style = "B"
			}
			pdf.SetFont("LS", style, size)
			n := 1
			for i, c := range cells {
				n = max(n, len(pdf.SplitText(c, widths[i]-1.5)))
			}
			h := float64(n)*lh + 1.2
			if pdf.GetY()+h > bottom {
				pdf.AddPage()
				if !bold && header != nil {
					drawHeader(pdf, widths, header, size, lh)
				}
			}
			y, x := pdf.GetY(), margin
			if bold {
				pdf.SetFillColor(238, 240, 244)
				pdf.Rect(margin, y, sum(widths), h, "F")
			}
			for i, c := range cells {
				pdf.SetXY(x+0.6, y+0.6)
				align := "L"
				if right[i] && !bold {
					align = "R"
				}
				pdf.MultiCell(widths[i]-1.2, lh, c, "", align, false)
				x += widths[i]
			}
			pdf.SetDrawColor(200, 200, 200)
			pdf.Line(margin, y+h, margin+sum(widths), y+h)
			pdf.SetXY(margin, y+h)
		}
		if header != nil {
			draw(header, true)
		}
		for _, r := range rows {
			draw(r, false)
		}
		pdf.Ln(2)
	}
	// Page 1: the verdict summary.
	heading(16, v.Star)
	body(10, v.Meta+" Rotation period: "+v.Rotation+".")
	heading(13, "Verdict summary")
	if len(v.Summary) == 0 {
		body(10, "No signal to judge.")
	} else {
		var rows [][]string
		for _, s := range v.Summary {
			rows = append(rows, []string{s.Signal, s.Period, s.K, s.FAP, s.Verdict, s.Score, s.Prob, s.Why})
		}
		table([]float64{12, 27, 22, 15, 22, 12, 14, 56}, []string{"signal", "period (d)", "K (m/s)", "FAP", "verdict", "score", "P(planet)", "why"}, rows, 8.5, map[int]bool{1: true, 2: true, 3: true, 5: true, 6: true})
		body(9, v.AdoptedK)
	}
	for _, n := range v.Notes {
		body(9, "Note: "+n)
	}
	pdf.SetFillColor(246, 241, 228)
	pdf.SetFont("LS", "", 9.5)
	pdf.MultiCell(width, 4.8, v.Caution, "L", "L", true)
	pdf.Ln(2)
	heading(13, "Orbital solution")
	switch {
	case v.Orbit == nil:
		body(9, "No planet-like or inconclusive signal: no orbit is fitted.")
	case v.Orbit.Err != "":
		body(9, v.Orbit.Err)
	default:
		ws := []float64{80}
		for range v.Orbit.Header[1:] {
			ws = append(ws, 100/float64(len(v.Orbit.Header)-1))
		}
		right := map[int]bool{}
		for i := 1; i < len(ws); i++ {
			right[i] = true
		}
		table(ws, v.Orbit.Header, v.Orbit.Rows, 8.5, right)
		table([]float64{60, 60, 60}, []string{"instrument", "offset (m/s)", "jitter (m/s)"}, v.Orbit.Inst, 8.5, map[int]bool{1: true, 2: true})
		body(8.5, v.Orbit.Stats+" "+v.Orbit.Removed)
	}
	heading(13, "Activity model")
	if len(v.Activity) == 0 {
		body(9, "No activity-like signal and no Gaussian-process activity model were fitted.")
	} else {
		var rows [][]string
		for _, a := range v.Activity {
			rows = append(rows, []string{a.Name, a.Value, a.Note})
		}
		table([]float64{75, 35, 70}, []string{"parameter", "value", "note"}, rows, 8.5, map[int]bool{1: true})
	}
	// Figures, full width.
	for _, f := range figs {
		opt := fpdf.ImageOptions{ImageType: "PNG", ReadDpi: false}
		info := pdf.RegisterImageOptionsReader(f.fig.name, opt, bytes.NewReader(f.png))
		if info == nil {
			return fmt.Errorf("activity: PDF: figure %s: %v", f.fig.name, pdf.Error())
		}
		h := width * info.Height() / info.Width()
		wImg := width
		if h > 235 {
			h = 235
			wImg = h * info.Width() / info.Height()
		}
		if pdf.GetY()+h+18 > bottom {
			pdf.AddPage()
		}
		heading(12, f.fig.title)
		pdf.ImageOptions(f.fig.name, margin+(width-wImg)/2, pdf.GetY(), wImg, h, false, opt, 0, "")
		pdf.SetY(pdf.GetY() + h + 2)
		body(8.5, f.fig.caption)
	}
	pdf.AddPage()
	heading(13, "Evidence, test by test")
	body(8.5, "Weights are positive toward activity, negative toward a planet; a p-value written \"< x\" is an upper limit.")
	for _, ev := range v.Evidence {
		heading(11, fmt.Sprintf("%s — %s (%s)", ev.Title, ev.Verdict, ev.Heading))
		var rows [][]string
		for _, r := range ev.Rows {
			rows = append(rows, []string{r[0], r[1], r[2], r[3], r[4], r[5]})
		}
		table([]float64{38, 16, 16, 17, 13, 80}, []string{"test", "value", "threshold", "points to", "weight", "reason"}, rows, 7.5, map[int]bool{1: true, 2: true, 4: true})
		if len(ev.Skipped) > 0 {
			var sk [][]string
			for _, s := range ev.Skipped {
				sk = append(sk, []string{s[0], s[1]})
			}
			table([]float64{50, 130}, []string{"not run", "why"}, sk, 7.5, nil)
		}
	}
	heading(13, "Rotation period")
	var rot [][]string
	for _, r := range v.Rotations {
		rot = append(rot, []string{r.Method, r.Period, r.Note})
	}
	table([]float64{55, 45, 80}, []string{"estimate", "period (d)", "note"}, rot, 8.5, map[int]bool{1: true})
	heading(13, "Star")
	var st [][]string
	for _, r := range v.StarRows {
		st = append(st, []string{r[0], r[1]})
	}
	table([]float64{70, 110}, nil, st, 8.5, nil)
	heading(13, "Provenance")
	var pr [][]string
	for _, r := range v.Provenance {
		pr = append(pr, []string{r[0], r[1]})
	}
	table([]float64{45, 135}, nil, pr, 8, nil)
	if err := pdf.Error(); err != nil {
		return fmt.Errorf("activity: PDF: %w", err)
	}
	return pdf.Output(w)
}

// drawHeader repeats a table's header row at the top of a new page.
func drawHeader(pdf *fpdf.Fpdf, widths []float64, header []string, size, lh float64) {
	pdf.SetFont("LS", "B", size)
	y, x := pdf.GetY(), 15.0
	h := lh + 1.2
	pdf.SetFillColor(238, 240, 244)
	pdf.Rect(x, y, sum(widths), h, "F")
	for i, c := range header {
		pdf.SetXY(x+0.6, y+0.6)
		pdf.MultiCell(widths[i]-1.2, lh, c, "", "L", false)
		x += widths[i]
	}
	pdf.SetXY(15, y+h)
}

func sum(v []float64) float64 {
	s := 0.0
	for _, x := range v {
		s += x
	}
	return s
}
