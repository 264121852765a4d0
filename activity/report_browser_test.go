package activity

import (
	"bytes"
	"context"
	"image"
	_ "image/jpeg"
	_ "image/png"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/cdproto/cdp"
	"github.com/chromedp/cdproto/network"
	"github.com/chromedp/cdproto/runtime"
	"github.com/chromedp/chromedp"
)

// chromiumPath returns Debian's Chromium, or "" when it is not installed.
func chromiumPath() string {
	for _, p := range []string{"/usr/bin/chromium", "/usr/bin/chromium-browser"} {
		if _, err := os.Stat(p); err == nil {
			return p
		}
	}
	if p, err := exec.LookPath("chromium"); err == nil {
		return p
	}
	return ""
}

// TestReportInBrowser opens the HTML report in headless Chromium (Debian
// package chromium, driven through chromedp): it must load with no
// console error and no network request, every figure must have a size,
// and a screenshot must not be blank.
func TestReportInBrowser(t *testing.T) {
	exe := chromiumPath()
	if exe == "" {
		t.Skip("chromium not installed (Debian package chromium); .ci/run installs it")
	}
	_, dir := reportFixture(t)
	page := "file://" + filepath.Join(dir, HTMLFile)

	opts := append(chromedp.DefaultExecAllocatorOptions[:],
		chromedp.ExecPath(exe),
		chromedp.Flag("headless", true),
		chromedp.NoSandbox,
		chromedp.DisableGPU,
		chromedp.Flag("disable-quic", true),
		chromedp.Flag("disable-background-networking", true),
		chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true),
		chromedp.NoFirstRun,
		chromedp.UserDataDir(t.TempDir()),
		chromedp.WindowSize(1100, 900),
	)
	actx, cancel := chromedp.NewExecAllocator(context.Background(), opts...)
	defer cancel()
	ctx, cancel := chromedp.NewContext(actx)
	defer cancel()
	// The first call starts the browser and must not carry a timeout (it
	// would stop the browser); later ones run under one.
	if err := chromedp.Do(ctx); err != nil {
		t.Fatalf("chromium: %v", err)
	}
	ctx, cancel = context.WithTimeout(ctx, 60*time.Second)
	defer cancel()

	var mu sync.Mutex
	var consoleErrs, requests []string
	if err := chromedp.Listen(ctx, func(ev any) {
		mu.Lock()
		defer mu.Unlock()
		switch ev := ev.(type) {
		case *runtime.EventConsoleAPICalled:
			if ev.Type == runtime.ConsoleAPICalledTypeError || ev.Type == runtime.ConsoleAPICalledTypeWarning {
				consoleErrs = append(consoleErrs, string(ev.Type))
			}
		case *runtime.EventExceptionThrown:
			consoleErrs = append(consoleErrs, ev.ExceptionDetails.Text)
		case *network.EventRequestWillBeSent:
			if u := ev.Request.URL; !strings.HasPrefix(u, "file://") && !strings.HasPrefix(u, "data:") {
				requests = append(requests, u)
			}
		}
	}); err != nil {
		t.Fatalf("chromium: %v", err)
	}
	if _, err := chromedp.Call(ctx, network.Enable, network.EnableParams{}); err != nil {
		t.Fatalf("network domain: %v", err)
	}
	if _, err := chromedp.Call(ctx, runtime.Enable, cdp.Empty{}); err != nil {
		t.Fatalf("runtime domain: %v", err)
	}
	if err := chromedp.Do(ctx, chromedp.Navigate(page), chromedp.WaitReady("body")); err != nil {
		t.Fatalf("chromium: %v", err)
	}
	sizes, err := chromedp.Run(ctx, chromedp.Evaluate[[]map[string]float64](`Array.from(document.querySelectorAll("figure svg")).map(e => { const r = e.getBoundingClientRect(); return {w: r.width, h: r.height}; })`))
	if err != nil {
		t.Fatalf("figure sizes: %v", err)
	}
	shot, err := chromedp.Run(ctx, chromedp.FullScreenshot(80))
	if err != nil {
		t.Fatalf("screenshot: %v", err)
	}
	mu.Lock()
	defer mu.Unlock()
	if len(consoleErrs) > 0 {
		t.Errorf("console errors: %q", consoleErrs)
	}
	if len(requests) > 0 {
		t.Errorf("network requests: %q", requests)
	}
	if len(sizes) < 5 {
		t.Errorf("%d figures in the page, want at least 5", len(sizes))
	}
	for i, s := range sizes {
		if !(s["w"] > 100 && s["h"] > 50) {
			t.Errorf("figure %d has size %v×%v", i, s["w"], s["h"])
		}
	}
	// A full-page screenshot at quality 80 comes back as JPEG.
	img, _, err := image.Decode(bytes.NewReader(shot))
	if err != nil {
		t.Fatalf("screenshot: %v", err)
	}
	if blank(img) {
		t.Error("the screenshot is blank")
	}
}

// blank reports whether an image is a single colour.
func blank(img image.Image) bool {
	b := img.Bounds()
	r0, g0, b0, _ := img.At(b.Min.X, b.Min.Y).RGBA()
	for y := b.Min.Y; y < b.Max.Y; y += 7 {
		for x := b.Min.X; x < b.Max.X; x += 7 {
			r, g, bb, _ := img.At(x, y).RGBA()
			if r != r0 || g != g0 || bb != b0 {
				return false
			}
		}
	}
	return true
}
