package activity

import (
	"context"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// twoInstrumentFixture diagnoses a quiet star with a 3 m/s planet at 7.3 d
// observed by two instruments whose RV zero points differ by 130 m/s and
// whose FWHM and contrast zero points differ too: pooled without the
// offsets, RV and the indicators correlate almost perfectly; within each
// instrument they do not correlate at all.
func twoInstrumentFixture(t *testing.T, dir string) (*Report, []corrPanel) {
	t.Helper()
	s := synth(31, 1.0, sine(3, 7.3, 0.4), map[string]func(float64) float64{"fwhm": noise, "contrast": noise},
		map[string]float64{"fwhm": 3, "contrast": 0.05})
	s.Name = "Two-instrument test star"
	half := s.Len() / 2
	for i := range s.Time {
		if i >= half {
			s.Instrument[i] = "SOUTH-2"
			s.RV[i] += 130
			s.Indicator("fwhm").Value[i] -= 60
			s.Indicator("contrast").Value[i] += 2
		}
	}
	star := &Star{Name: s.Name, BV: 0.65, Mass: 0.9, RotationPeriod: 25}
	dg, err := Diagnose(context.Background(), s, &Options{Star: star, Seed: 31})
	if err != nil {
		t.Fatal(err)
	}
	dg.Provenance = Provenance{Version: "test", Seed: 31, Command: "spotsift vet --data two.csv --star two.toml --out out"}
	r := &Report{Diagnosis: dg, Series: s, Star: star}
	if err := WriteReport(dir, r); err != nil {
		t.Fatal(err)
	}
	_, info, err := reportFigures(r)
	if err != nil {
		t.Fatal(err)
	}
	return r, info
}

var ownRVr = regexp.MustCompile(`against the signal's own RVs r = (-?[0-9.]+)`)

// evidenceOwnR returns the r the evidence quotes for the correlation of an
// indicator with a signal's own RVs.
func evidenceOwnR(sg *Signal, ind string) (string, bool) {
	e := evidence(sg, "indicator_correlation:"+ind)
	if e == nil {
		return "", false
	}
	m := ownRVr.FindStringSubmatch(e.Reason)
	if m == nil {
		return "", false
	}
	return m[1], true
}

// TestCorrelationsAsTheEvidence checks that the correlation figure removes
// the instrument offsets and quotes the r of the evidence table.
func TestCorrelationsAsTheEvidence(t *testing.T) {
	dir := t.TempDir()
	if d := os.Getenv("SPOTSIFT_REPORT_DIR"); d != "" {
		dir = d // to look at the report by hand
	}
	r, info := twoInstrumentFixture(t, dir)
	s, dg := r.Series, r.Diagnosis
	// The fixture is meaningful: pooled, the offsets make r ≈ ±1.
	if c := Pearson(s.RV, s.Indicator("fwhm").Value); math.Abs(c.R) < 0.9 {
		t.Fatalf("pooled r(rv, fwhm) = %.2f; the fixture should make it near ±1", c.R)
	}
	if len(dg.Signals) == 0 || len(info) == 0 {
		t.Fatalf("%d signals, %d correlation panels", len(dg.Signals), len(info))
	}
	for _, p := range info {
		if p.signal < 0 {
			t.Fatalf("panel %s without a signal", p.indicator)
		}
		want, ok := evidenceOwnR(&dg.Signals[p.signal], p.indicator)
		if !ok {
			t.Errorf("S%d %s: no r in the evidence", p.signal+1, p.indicator)
			continue
		}
		if got := strconv.FormatFloat(p.r.R, 'f', 2, 64); got != want {
			t.Errorf("S%d %s: figure r = %s, evidence r = %s", p.signal+1, p.indicator, got, want)
		}
		if math.Abs(p.r.R) > 0.5 {
			t.Errorf("S%d %s: r = %.2f with the offsets removed; the indicator is pure noise", p.signal+1, p.indicator, p.r.R)
		}
	}
	html, _ := os.ReadFile(filepath.Join(dir, HTMLFile))
	if !strings.Contains(string(html), "computed as the evidence computes them") {
		t.Error("the correlation figure does not say how its r is computed")
	}
}

// checklistItem is one line of the README's reviewer checklist.
type checklistItem struct{ title, id string }

// readChecklist returns the items of the README's reviewer checklist:
// lines "- [ ] **Title** (`#id`): ...".
func readChecklist(t *testing.T) []checklistItem {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	re := regexp.MustCompile("(?m)^- \\[ \\] \\*\\*([^*]+)\\*\\* \\(`#([a-z-]+)`\\)")
	var out []checklistItem
	for _, m := range re.FindAllStringSubmatch(string(b), -1) {
		out = append(out, checklistItem{m[1], m[2]})
	}
	return out
}

// TestReviewerChecklist finds every item of the README's reviewer
// checklist in the report of a two-instrument star: an element with the
// item's id whose heading is the item's title, in the checklist's order.
func TestReviewerChecklist(t *testing.T) {
	items := readChecklist(t)
	if len(items) < 10 {
		t.Fatalf("the README's reviewer checklist has %d items; the test reads lines \"- [ ] **Title** (`#id`): ...\"", len(items))
	}
	dir := t.TempDir()
	twoInstrumentFixture(t, dir)
	b, err := os.ReadFile(filepath.Join(dir, HTMLFile))
	if err != nil {
		t.Fatal(err)
	}
	html := string(b)
	last := -1
	for _, it := range items {
		re := regexp.MustCompile(`id="` + regexp.QuoteMeta(it.id) + `">\s*<h[23]>` + regexp.QuoteMeta(it.title) + `</h[23]>`)
		loc := re.FindStringIndex(html)
		if loc == nil {
			t.Errorf("checklist item %q: no element id=%q headed %q in report.html", it.title, it.id, it.title)
			continue
		}
		if loc[0] < last {
			t.Errorf("checklist item %q comes earlier in the report than the checklist says", it.title)
		}
		last = loc[0]
	}
}

// TestPDFFirstPage reads the PDF's first page as text (pdftotext, Debian
// package poppler-utils): it must hold the verdict summary — every
// signal's period, K and verdict — and the caution.
func TestPDFFirstPage(t *testing.T) {
	exe, err := exec.LookPath("pdftotext")
	if err != nil {
		t.Skip("pdftotext not installed (Debian package poppler-utils)")
	}
	dir := t.TempDir()
	r, _ := twoInstrumentFixture(t, dir)
	out, err := exec.Command(exe, "-f", "1", "-l", "1", "-layout", filepath.Join(dir, PDFFile), "-").Output()
	if err != nil {
		t.Fatal(err)
	}
	page := strings.Join(strings.Fields(string(out)), " ")
	v, _, err := buildReport(r)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{r.Diagnosis.Star, "Verdict summary", "K is the adopted semi-amplitude, quoted once", strings.Join(strings.Fields(Caution), " ")} {
		if !strings.Contains(page, want) {
			t.Errorf("page 1 lacks %q:\n%s", want, page)
		}
	}
	for _, s := range v.Summary {
		for _, want := range []string{s.Signal, s.K, s.Verdict} {
			if !strings.Contains(page, want) {
				t.Errorf("page 1 lacks %s's %q", s.Signal, want)
			}
		}
	}
}

// TestReportLabelsVisible gives the star, an instrument and an indicator
// names with bidirectional and invisible characters and invalid UTF-8:
// report.html and every SVG figure must show them escaped visibly, never
// raw (display spoofing).
func TestReportLabelsVisible(t *testing.T) {
	s := synth(41, 1.0, sine(5, 7.3, 0.4), map[string]func(float64) float64{"fw\u200Bhm": noise}, map[string]float64{"fw\u200Bhm": 2})
	for i := range s.Instrument {
		if i%2 == 0 {
			s.Instrument[i] = "A\u2067B\xff"
		}
	}
	star := &Star{Name: "gnp\u202Eexe.png", RotationPeriod: 25, RotationPeriodErr: 2}
	dg, err := Diagnose(context.Background(), s, &Options{Star: star, Seed: 41, SkipModels: true})
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := WriteReport(dir, &Report{Diagnosis: dg, Series: s, Star: star}); err != nil {
		t.Fatal(err)
	}
	files, _ := filepath.Glob(filepath.Join(dir, FiguresDir, "*.svg"))
	files = append(files, filepath.Join(dir, HTMLFile))
	for _, f := range files {
		b, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		txt := string(b)
		for _, raw := range []string{"\u202E", "\u2067", "\u200B", "\xff"} {
			if strings.Contains(txt, raw) {
				t.Errorf("%s holds the raw character %+q", filepath.Base(f), raw)
			}
		}
	}
	html, _ := os.ReadFile(filepath.Join(dir, HTMLFile))
	for _, want := range []string{`gnp\u{202E}exe.png`, `A\u{2067}B\xFF`, `fw\u{200B}hm`} {
		if !strings.Contains(string(html), want) {
			t.Errorf("report.html does not show %s", want)
		}
	}
}
