package activity

import (
	"bytes"
	"context"
	"encoding/json"
	"html/template"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"spotsift/rvfit"
)

// reportFixture diagnoses a small synthetic star whose name, indicator and
// instrument labels hold HTML and script fragments.
func reportFixture(t *testing.T) (*Report, string) {
	t.Helper()
	s := synth(21, 1.0, sine(5, 7.3, 0.4), map[string]func(float64) float64{
		"fwhm": noise, `<img src=x onerror=alert(1)>`: sine(3, 20, 0)},
		map[string]float64{"fwhm": 2, `<img src=x onerror=alert(1)>`: 1})
	for i := range s.Instrument {
		if i%2 == 0 {
			s.Instrument[i] = `"><b>bold</b>`
		}
	}
	star := &Star{Name: `<script>alert("star")</script> & Co`, BV: 0.65, RotationPeriod: 25, RotationPeriodErr: 1}
	dg, err := Diagnose(context.Background(), s, &Options{Star: star, Seed: 21})
	if err != nil {
		t.Fatal(err)
	}
	dg.Provenance = Provenance{Version: "test", Seed: 21, Command: `spotsift vet --data "<x>.csv"`,
		Inputs: []InputHash{{Path: `data/<iframe src="http://example.invalid">.csv`, SHA256: "00"}}}
	dir := t.TempDir()
	r := &Report{Diagnosis: dg, Series: s, Star: star}
	if err := WriteReport(dir, r); err != nil {
		t.Fatal(err)
	}
	return r, dir
}

func TestWriteReport(t *testing.T) {
	r, dir := reportFixture(t)
	for _, f := range []string{VerdictFile, HTMLFile, PDFFile} {
		if st, err := os.Stat(filepath.Join(dir, f)); err != nil || st.Size() == 0 {
			t.Errorf("%s: %v", f, err)
		}
	}
	for _, name := range []string{"timeseries", "periodograms", "correlations", "folded", "gp", "coherence"} {
		for _, ext := range []string{".svg", ".png"} {
			if st, err := os.Stat(filepath.Join(dir, FiguresDir, name+ext)); err != nil || st.Size() < 1000 {
				t.Errorf("figure %s%s missing or empty: %v", name, ext, err)
			}
		}
	}
	b, _ := os.ReadFile(filepath.Join(dir, HTMLFile))
	html := string(b)
	for _, want := range []string{template.HTMLEscapeString(Caution), r.Diagnosis.Signals[0].Verdict, "Provenance", "<svg"} {
		if !strings.Contains(html, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	// Nothing from the inputs may be live: no script, image, bold or frame
	// element at all, and the fragments appear escaped.
	lower := strings.ToLower(html)
	for _, bad := range []string{"<script", "<img", "<b>", "<iframe"} {
		if strings.Contains(lower, bad) {
			t.Errorf("report holds a live %q", bad)
		}
	}
	if !strings.Contains(html, "&lt;script&gt;") {
		t.Error("the star name is not shown escaped")
	}
	// Self-contained: no tag refers to anything outside the file, and no
	// tag carries an event handler (the SVG namespace is an identifier, not
	// a fetch).
	for _, tag := range regexp.MustCompile(`<[a-zA-Z][^>]*>`).FindAllString(html, -1) {
		low := strings.ToLower(tag)
		for _, ref := range []string{" src=", " href=", "url(", " on"} {
			if strings.Contains(low, ref) {
				t.Errorf("tag %.120q refers outside the file or runs code (%q)", tag, ref)
			}
		}
	}
	if strings.Contains(lower, "@import") {
		t.Error("style sheet imports")
	}
	var back Diagnosis
	vb, _ := os.ReadFile(filepath.Join(dir, VerdictFile))
	if err := json.Unmarshal(vb, &back); err != nil || back.Star != r.Diagnosis.Star {
		t.Errorf("verdict JSON: %v, star %q", err, back.Star)
	}
	checkAdoptedK(t, r.Diagnosis, vb, html)
}

// checkAdoptedK checks that a report states one K per signal: the JSON's
// k (from the Keplerian fit for planet-like and inconclusive signals,
// when it worked) is the one in the summary, the orbital solution's, and
// no text quotes another "K = ".
func checkAdoptedK(t *testing.T, dg *Diagnosis, verdictJSON []byte, html string) {
	t.Helper()
	var raw struct {
		Signals []map[string]any `json:"signals"`
	}
	if err := json.Unmarshal(verdictJSON, &raw); err != nil || len(raw.Signals) != len(dg.Signals) {
		t.Fatalf("verdict JSON signals: %v", err)
	}
	for k, m := range raw.Signals {
		for _, key := range []string{"k", "k_err", "k_from", "sinusoid_amplitude", "sinusoid_amplitude_err"} {
			if _, ok := m[key]; !ok {
				t.Errorf("S%d: verdict JSON has no %q", k+1, key)
			}
		}
		if _, ok := m["amplitude"]; ok {
			t.Errorf("S%d: verdict JSON still has an \"amplitude\" beside k", k+1)
		}
	}
	orb := dg.details.orbit
	for k, sg := range dg.Signals {
		want := KFromSinusoid
		if sg.Verdict != ActivityLike && orb != nil && orb.Err == "" {
			want = KFromKeplerian
		}
		if sg.KFrom != want {
			t.Errorf("S%d (%s): K from %q, want %q", k+1, sg.Verdict, sg.KFrom, want)
		}
		if want == KFromKeplerian {
			for j, i := range orb.Signals {
				if i == k && float64(sg.K) != orb.Planets[j].K {
					t.Errorf("S%d: K %v is not the orbital solution's %v", k+1, sg.K, orb.Planets[j].K)
				}
			}
		}
		cell := `<td class="n">` + template.HTMLEscapeString(fmtValErr(float64(sg.K), float64(sg.KErr))) + "</td>"
		if !strings.Contains(html, cell) {
			t.Errorf("S%d: the summary does not quote K as %s", k+1, cell)
		}
	}
	if m := regexp.MustCompile(`\bK = [0-9]`).FindString(html); m != "" {
		t.Errorf("the report quotes another K in its text: %q", m)
	}
}

// TestReportPDFText reads the PDF back with pdftotext (Debian
// poppler-utils): it must hold the verdict and the caution.
func TestReportPDFText(t *testing.T) {
	exe, err := exec.LookPath("pdftotext")
	if err != nil {
		t.Skip("pdftotext not installed (Debian poppler-utils); .ci/run installs it")
	}
	r, dir := reportFixture(t)
	out, err := exec.Command(exe, "-layout", filepath.Join(dir, PDFFile), "-").Output()
	if err != nil {
		t.Fatalf("pdftotext: %v", err)
	}
	text := strings.Join(strings.Fields(string(out)), " ")
	for _, want := range []string{r.Diagnosis.Signals[0].Verdict, "informs, and does not replace", "Evidence, test by test", `<script>alert("star")</script>`} {
		if !strings.Contains(text, want) {
			t.Errorf("PDF text lacks %q:\n%.600s", want, text)
		}
	}
}

func TestWriteReportBadInput(t *testing.T) {
	if err := WriteReport(t.TempDir(), nil); err == nil {
		t.Error("nil report accepted")
	}
	if err := WriteReport(t.TempDir(), &Report{Diagnosis: &Diagnosis{}}); err == nil {
		t.Error("report without series accepted")
	}
	// A diagnosis read back from JSON has no working data: the report
	// still writes, with the figures it can draw.
	s := synth(22, 1.0, sine(5, 7.3, 0), nil, nil)
	dg, err := Diagnose(context.Background(), s, &Options{Seed: 22, SkipModels: true})
	if err != nil {
		t.Fatal(err)
	}
	b, _ := json.Marshal(dg)
	var back Diagnosis
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if err := WriteReport(dir, &Report{Diagnosis: &back, Series: s}); err != nil {
		t.Fatal(err)
	}
	html, _ := os.ReadFile(filepath.Join(dir, HTMLFile))
	if !bytes.Contains(html, []byte("Time series")) {
		t.Error("report from JSON lacks the time series")
	}
	_ = rvfit.DefaultInstrument
}

// TestCircularOrbitKeepsErrors: the report fixture's planet is on a
// circular orbit, where ln L is flat to second order in the eccentricity
// vector. P, K and Tc still have errors (conditional on the eccentricity
// vector at its best value); the report shows ω as undefined.
func TestCircularOrbitKeepsErrors(t *testing.T) {
	r, _ := reportFixture(t)
	orb := r.Diagnosis.details.orbit
	if orb == nil || orb.Err != "" || len(orb.Planets) == 0 {
		t.Fatalf("no orbital solution: %+v", orb)
	}
	p := orb.Planets[0]
	if p.E > 0.05 {
		t.Skipf("the fixture's orbit came out eccentric (e = %.3f); the test needs a circular one", p.E)
	}
	for name, e := range map[string]float64{"P": p.PErr, "K": p.KErr, "Tc": p.TcErr} {
		if !(e > 0) || !isFinite(e) {
			t.Errorf("%s error %v on a circular orbit, want a finite error", name, e)
		}
	}
}
