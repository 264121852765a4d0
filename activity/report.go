package activity

import (
	"bytes"
	"encoding/json"
	"fmt"
	"html/template"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"

	"codeberg.org/go-fonts/liberation/liberationsansbold"
	"codeberg.org/go-fonts/liberation/liberationsansregular"
	"codeberg.org/go-pdf/fpdf"

	"spotsift/rvfit"
)

// Report is what the report of one star is made from: the diagnosis and
// the series it was computed from.
type Report struct {
	Diagnosis *Diagnosis
	Series    *rvfit.Series
	// Star is the star file's content, nil when none was given.
	Star *Star
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
// and instrument names) is escaped in the HTML; figure labels keep only
// plain characters.
func WriteReport(dir string, r *Report) error {
	if r == nil || r.Diagnosis == nil || r.Series == nil {
		return fmt.Errorf("activity: nothing to report")
	}
	if err := os.MkdirAll(filepath.Join(dir, FiguresDir), 0o755); err != nil {
		return err
	}
	if err := rvfit.WriteFileAtomic(filepath.Join(dir, VerdictFile), func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(r.Diagnosis)
	}); err != nil {
		return err
	}
	figs, err := reportFigures(r)
	if err != nil {
		return fmt.Errorf("activity: figures: %w", err)
	}
	rendered := make([]renderedFigure, len(figs))
	for i, f := range figs {
		svg, err := f.svg()
		if err != nil {
			return fmt.Errorf("activity: figure %s: %w", f.name, err)
		}
		png, err := f.png()
		if err != nil {
			return fmt.Errorf("activity: figure %s: %w", f.name, err)
		}
		rendered[i] = renderedFigure{fig: f, svg: svg, png: png}
		for ext, b := range map[string][]byte{".svg": svg, ".png": png} {
			if err := rvfit.WriteFileAtomic(filepath.Join(dir, FiguresDir, f.name+ext), func(w io.Writer) error {
				_, err := w.Write(b)
				return err
			}); err != nil {
				return err
			}
		}
	}
	if err := rvfit.WriteFileAtomic(filepath.Join(dir, HTMLFile), func(w io.Writer) error {
		return writeHTML(w, r, rendered)
	}); err != nil {
		return err
	}
	return rvfit.WriteFileAtomic(filepath.Join(dir, PDFFile), func(w io.Writer) error {
		return writePDF(w, r, rendered)
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
	// text; labels taken from inputs were reduced to plain characters.
	return template.HTML(s)
}

// reportView is what the HTML template sees.
type reportView struct {
	Star       string
	Dg         *Diagnosis
	Figures    []figView
	StarFile   string
	HasSignals bool
}

type figView struct {
	ID, Title, Caption string
	SVG                template.HTML
}

var funcs = template.FuncMap{
	"num": func(x Num) string {
		f := float64(x)
		if math.IsNaN(f) || math.IsInf(f, 0) {
			return "—"
		}
		return fmt.Sprintf("%.4g", f)
	},
	"sci": func(x Num) string {
		f := float64(x)
		if math.IsNaN(f) || math.IsInf(f, 0) {
			return "—"
		}
		return fmt.Sprintf("%.2g", f)
	},
	"known":  func(x Num) bool { return float64(x) > 0 },
	"signed": func(x float64) string { return fmt.Sprintf("%+.2f", x) },
	"pct":    func(x float64) string { return fmt.Sprintf("%.0f%%", 100*x) },
	"inc":    func(i int) int { return i + 1 },
	"badge": func(v string) string {
		switch v {
		case PlanetLike:
			return "v-planet"
		case ActivityLike:
			return "v-activity"
		}
		return "v-inconclusive"
	},
}

var reportTemplate = template.Must(template.New("report").Funcs(funcs).Parse(`<!DOCTYPE html>
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
code, pre { font-family: "Liberation Mono", "DejaVu Sans Mono", monospace; font-size: 0.82rem; }
pre { background: #f3f3f3; padding: 0.5rem; overflow-x: auto; white-space: pre-wrap; word-break: break-all; }
</style>
</head>
<body>
<header>
<h1>{{.Star}}</h1>
<p class="meta">{{.Dg.NEpochs}} epochs over {{num .Dg.Baseline}} days.
Rotation period: {{if known .Dg.Rotation.Period}}{{num .Dg.Rotation.Period}} ± {{num .Dg.Rotation.Err}} d ({{.Dg.Rotation.Source}}){{else}}unknown{{end}}; {{.Dg.Rotation.Agreement}}.</p>
</header>

<section id="verdicts">
<h2>Verdicts</h2>
{{if .HasSignals}}
<table>
<tr><th>signal</th><th>period (d)</th><th>K (m/s)</th><th>FAP</th><th>verdict</th><th>score</th><th>why</th></tr>
{{range $i, $s := .Dg.Signals}}<tr><td>S{{inc $i}}</td><td class="n">{{num $s.Period}}</td><td class="n">{{num $s.Amplitude}} ± {{sci $s.AmplitudeErr}}</td><td class="n">{{sci $s.FAP}}</td><td><span class="verdict {{badge $s.Verdict}}">{{$s.Verdict}}</span></td><td class="n">{{signed $s.Score}}</td><td>{{$s.Summary}}</td></tr>
{{end}}</table>
{{else}}<p>No signal to judge.</p>{{end}}
{{range .Dg.Notes}}<p>Note: {{.}}</p>{{end}}
<p class="caution">{{.Dg.Caution}}</p>
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
<p>Each test gives a number, the threshold it is judged against, the side it points to and its weight in the score (positive toward activity, negative toward a planet). The score is the sum of the weights divided by the weight of every test spotsift knows, so tests that could not run pull it toward zero.</p>
{{range $i, $s := .Dg.Signals}}
<h3>S{{inc $i}}: P = {{num $s.Period}} d — <span class="verdict {{badge $s.Verdict}}">{{$s.Verdict}}</span> (score {{signed $s.Score}}, {{pct $s.Coverage}} of the tests ran)</h3>
<table>
<tr><th>test</th><th>value</th><th>threshold</th><th>points to</th><th>weight</th><th>reason</th></tr>
{{range $s.Evidence}}<tr><td><code>{{.Name}}</code></td><td class="n">{{sci .Value}}</td><td class="n">{{sci .Threshold}}</td><td class="pt-{{.Points}}">{{.Points}}</td><td class="n">{{signed .Weight}}</td><td>{{.Reason}}</td></tr>
{{end}}</table>
{{if $s.Skipped}}<p>Not run:</p><ul>{{range $s.Skipped}}<li><code>{{.Name}}</code>: {{.Why}}</li>{{end}}</ul>{{end}}
{{end}}
</section>

<section id="rotation">
<h2>Rotation period</h2>
<table>
<tr><th>estimate</th><th>period (d)</th><th>error (d)</th><th>note</th></tr>
{{range .Dg.Rotation.Estimates}}<tr><td>{{.Method}}</td><td class="n">{{printf "%.4g" .Period}}</td><td class="n">{{printf "%.2g" .Err}}</td><td>{{.Note}}</td></tr>
{{end}}</table>
</section>

<section id="provenance">
<h2>Provenance</h2>
<table>
<tr><th>program</th><td>spotsift {{.Dg.Provenance.Version}}</td></tr>
<tr><th>seed</th><td>{{.Dg.Provenance.Seed}}</td></tr>
{{if .Dg.Provenance.Command}}<tr><th>command</th><td><code>{{.Dg.Provenance.Command}}</code></td></tr>{{end}}
{{range .Dg.Provenance.Inputs}}<tr><th>input</th><td><code>{{.Path}}</code><br>SHA-256 <code>{{.SHA256}}</code></td></tr>
{{end}}</table>
{{if .StarFile}}<h3>Star</h3><pre>{{.StarFile}}</pre>{{end}}
</section>
</body>
</html>
`))

func writeHTML(w io.Writer, r *Report, figs []renderedFigure) error {
	v := reportView{Star: r.Diagnosis.Star, Dg: r.Diagnosis, HasSignals: len(r.Diagnosis.Signals) > 0}
	if v.Star == "" {
		v.Star = "unnamed star"
	}
	if r.Star != nil {
		b, _ := json.MarshalIndent(r.Star, "", "  ")
		v.StarFile = string(b)
	}
	for _, f := range figs {
		v.Figures = append(v.Figures, figView{ID: f.fig.name, Title: f.fig.title, Caption: f.fig.caption, SVG: inlineSVG(f.svg)})
	}
	return reportTemplate.Execute(w, v)
}

// writePDF writes the report's content as a PDF for circulation: the same
// verdicts, caution, figures (as images), evidence and provenance.
func writePDF(w io.Writer, r *Report, figs []renderedFigure) error {
	dg := r.Diagnosis
	pdf := fpdf.New("P", "mm", "A4", "")
	pdf.SetCreator("spotsift "+dg.Provenance.Version, true)
	pdf.SetTitle("spotsift report: "+dg.Star, true)
	pdf.AddUTF8FontFromBytes("LS", "", liberationsansregular.TTF)
	pdf.AddUTF8FontFromBytes("LS", "B", liberationsansbold.TTF)
	pdf.SetMargins(15, 15, 15)
	pdf.SetAutoPageBreak(true, 15)
	pdf.AddPage()
	const width = 180.0
	heading := func(size float64, text string) {
		pdf.SetFont("LS", "B", size)
		pdf.MultiCell(width, size*0.5, text, "", "L", false)
		pdf.Ln(1)
	}
	body := func(size float64, text string) {
		pdf.SetFont("LS", "", size)
		pdf.MultiCell(width, size*0.45, text, "", "L", false)
		pdf.Ln(1)
	}
	star := dg.Star
	if star == "" {
		star = "unnamed star"
	}
	heading(16, star)
	rot := "unknown"
	if float64(dg.Rotation.Period) > 0 {
		rot = fmt.Sprintf("%.4g ± %.2g d (%s)", float64(dg.Rotation.Period), float64(dg.Rotation.Err), dg.Rotation.Source)
	}
	body(10, fmt.Sprintf("%d epochs over %.4g days. Rotation period: %s; %s.", dg.NEpochs, float64(dg.Baseline), rot, dg.Rotation.Agreement))
	heading(12, "Verdicts")
	if len(dg.Signals) == 0 {
		body(10, "No signal to judge.")
	}
	for i, s := range dg.Signals {
		body(10, fmt.Sprintf("S%d: P = %.5g d, K = %.3g ± %.2g m/s, FAP %.2g — %s (score %+.2f). %s",
			i+1, float64(s.Period), float64(s.Amplitude), float64(s.AmplitudeErr), float64(s.FAP), s.Verdict, s.Score, s.Summary))
	}
	for _, n := range dg.Notes {
		body(10, "Note: "+n)
	}
	pdf.SetFillColor(246, 241, 228)
	pdf.SetFont("LS", "", 10)
	pdf.MultiCell(width, 5, dg.Caution, "L", "L", true)
	pdf.Ln(3)
	for _, f := range figs {
		pdf.AddPage()
		heading(12, f.fig.title)
		opt := fpdf.ImageOptions{ImageType: "PNG", ReadDpi: false}
		info := pdf.RegisterImageOptionsReader(f.fig.name, opt, bytes.NewReader(f.png))
		if info == nil {
			return fmt.Errorf("activity: PDF: figure %s: %v", f.fig.name, pdf.Error())
		}
		h := width * info.Height() / info.Width()
		if h > 230 {
			h = 230
		}
		wImg := h * info.Width() / info.Height()
		pdf.ImageOptions(f.fig.name, 15, pdf.GetY(), wImg, h, false, opt, 0, "")
		pdf.SetY(pdf.GetY() + h + 2)
		body(9, f.fig.caption)
	}
	pdf.AddPage()
	heading(12, "Evidence, test by test")
	for i, s := range dg.Signals {
		heading(11, fmt.Sprintf("S%d: P = %.5g d — %s (score %+.2f, %.0f%% of the tests ran)", i+1, float64(s.Period), s.Verdict, s.Score, 100*s.Coverage))
		for _, e := range s.Evidence {
			body(8.5, fmt.Sprintf("%s  [%s, %+.2f]  value %.3g, threshold %.3g: %s", e.Name, e.Points, e.Weight, float64(e.Value), float64(e.Threshold), e.Reason))
		}
		for _, sk := range s.Skipped {
			body(8.5, fmt.Sprintf("not run: %s: %s", sk.Name, sk.Why))
		}
	}
	heading(12, "Rotation period")
	for _, e := range dg.Rotation.Estimates {
		body(9, fmt.Sprintf("%s: %.4g ± %.2g d %s", e.Method, e.Period, e.Err, e.Note))
	}
	heading(12, "Provenance")
	body(9, fmt.Sprintf("spotsift %s, seed %d", dg.Provenance.Version, dg.Provenance.Seed))
	if dg.Provenance.Command != "" {
		body(9, "command: "+dg.Provenance.Command)
	}
	for _, in := range dg.Provenance.Inputs {
		body(9, fmt.Sprintf("input %s, SHA-256 %s", in.Path, in.SHA256))
	}
	if err := pdf.Error(); err != nil {
		return fmt.Errorf("activity: PDF: %w", err)
	}
	return pdf.Output(w)
}
