package activity

import (
	"context"
	"path/filepath"
	"regexp"
	"testing"
	"time"

	"github.com/chromedp/chromedp"
)

// browse opens page in headless Chromium and returns the value of script
// evaluated in it.
func browse[T any](t *testing.T, page string, script string) T {
	t.Helper()
	exe := chromiumPath()
	if exe == "" {
		t.Skip("chromium not installed (Debian package chromium); .ci/run installs it")
	}
	opts := append(chromedp.DefaultExecAllocatorOptions[:],
		chromedp.ExecPath(exe), chromedp.Flag("headless", true), chromedp.NoSandbox, chromedp.DisableGPU,
		chromedp.Flag("disable-background-networking", true), chromedp.NoFirstRun,
		chromedp.UserDataDir(t.TempDir()), chromedp.WindowSize(1100, 900))
	actx, cancel := chromedp.NewExecAllocator(context.Background(), opts...)
	defer cancel()
	ctx, cancel := chromedp.NewContext(actx)
	defer cancel()
	if err := chromedp.Do(ctx); err != nil {
		t.Fatalf("chromium: %v", err)
	}
	ctx, cancel = context.WithTimeout(ctx, 60*time.Second)
	defer cancel()
	if err := chromedp.Do(ctx, chromedp.Navigate(page), chromedp.WaitReady("body")); err != nil {
		t.Fatalf("chromium: %v", err)
	}
	out, err := chromedp.Run(ctx, chromedp.Evaluate[T](script))
	if err != nil {
		t.Fatalf("evaluating in the page: %v", err)
	}
	return out
}

// TestCorrelationFigureAgreesWithEvidenceInBrowser reads, in the rendered
// report of a two-instrument star with a 130 m/s offset, the r printed on
// each panel of the correlation figure and the r the evidence table quotes
// for the same signal and indicator: they must be the same number.
func TestCorrelationFigureAgreesWithEvidenceInBrowser(t *testing.T) {
	if chromiumPath() == "" {
		t.Skip("chromium not installed (Debian package chromium); .ci/run installs it")
	}
	dir := t.TempDir()
	twoInstrumentFixture(t, dir)
	type page struct {
		Panels []string   `json:"panels"`
		Tables [][]string `json:"tables"`
	}
	got := browse[page](t, "file://"+filepath.Join(dir, HTMLFile), `({
		panels: Array.from(document.querySelectorAll("#fig-correlations svg text")).map(e => e.textContent).filter(s => s.includes("r = ")),
		tables: Array.from(document.querySelectorAll("#evidence table")).map(tb => Array.from(tb.rows).map(r => Array.from(r.cells).map(c => c.textContent).join("\t")))
	})`)
	if len(got.Panels) < 2 {
		t.Fatalf("correlation panels in the page: %q", got.Panels)
	}
	panel := regexp.MustCompile(`^S([0-9]+) · (.+): r = (-?[0-9.]+)$`)
	for _, txt := range got.Panels {
		m := panel.FindStringSubmatch(txt)
		if m == nil {
			t.Errorf("panel title %q does not read \"S<k> · <indicator>: r = <r>\"", txt)
			continue
		}
		k := int(m[1][0] - '1')
		if k < 0 || k >= len(got.Tables) {
			t.Errorf("panel %q: no evidence table for S%s", txt, m[1])
			continue
		}
		row := regexp.MustCompile(`(?m)^indicator_correlation:` + regexp.QuoteMeta(m[2]) + `\t.*against the signal's own RVs r = (-?[0-9.]+)`)
		found := ""
		for _, r := range got.Tables[k] {
			if mm := row.FindStringSubmatch(r); mm != nil {
				found = mm[1]
			}
		}
		if found == "" {
			t.Errorf("panel %q: the evidence table of S%s quotes no r for %s", txt, m[1], m[2])
		} else if found != m[3] {
			t.Errorf("panel %q: the figure says r = %s, the evidence table r = %s", txt, m[3], found)
		}
	}
}
