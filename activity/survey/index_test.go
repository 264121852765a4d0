package survey

import (
	"math"
	"regexp"
	"strings"
	"testing"
	"time"

	"spotsift/activity"
)

func TestScatterSVG(t *testing.T) {
	pts := []point{{x: 8.6, y: 4.3, colour: "#d55e00", title: "A <b>"}, {x: 27.5, y: 3.1, colour: "#0072b2", title: "B"},
		{x: math.NaN(), y: 3, colour: "#000", title: "dropped"}, {x: -1, y: 2, colour: "#000", title: "dropped too"}}
	s := scatterSVG(pts, "rotation period (d)", "signal period (d)", true, true, []float64{1, 0.5})
	if n := strings.Count(s, "<circle"); n != 2 {
		t.Errorf("%d markers, want 2 (NaN and negative left out)", n)
	}
	if strings.Contains(s, "<b>") || !strings.Contains(s, "A &lt;b&gt;") {
		t.Error("titles are not escaped")
	}
	if !strings.Contains(s, "P = Prot/2") || !strings.Contains(s, ">20<") || !strings.Contains(s, ">4.0<") {
		t.Errorf("reference lines or ticks missing:\n%s", s)
	}
	if s := scatterSVG(nil, "x", "y", false, false, nil); !strings.Contains(s, "no data") {
		t.Error("empty figure")
	}
}

// TestIndexPage checks the index page: a planet host with weak activity
// signals is coloured as a planet host, counts take the singular, names
// with bidirectional controls are shown visibly, and values at the float64
// limit neither hang nor break the figures.
func TestIndexPage(t *testing.T) {
	nan := activity.Num(math.NaN())
	sig := func(p float64, v string) activity.Signal { return activity.Signal{Period: activity.Num(p), Verdict: v} }
	host := &activity.Diagnosis{Signals: []activity.Signal{sig(7.3, activity.PlanetLike), sig(12.5, activity.ActivityLike)}, Rotation: activity.Rotation{Period: 25, Err: 2.5, Source: "star file"}}
	host.Signals[0].Probability, host.Signals[1].Probability = 0.966, nan
	if k := starKind(host); k != activity.PlanetLike {
		t.Errorf("planet host coloured %s", k)
	}
	active := &activity.Diagnosis{Signals: []activity.Signal{sig(25, activity.ActivityLike), sig(40, activity.Inconclusive)}}
	if k := starKind(active); k != activity.ActivityLike {
		t.Errorf("active star coloured %s", k)
	}
	if k := starKind(&activity.Diagnosis{}); k != "" {
		t.Errorf("star without signals coloured %s", k)
	}
	recs := []record{{Name: "gnp\u202Eexe.png", Folder: "a", Status: StatusDone, Diag: host,
		State: &state{RVRMS: activity.Num(math.MaxFloat64), MeanSIndex: activity.Num(-1e308), MeanLogRHK: nan}}}
	done := make(chan string)
	go func() {
		var b strings.Builder
		if err := writeIndex(&b, t.TempDir(), recs, "test"); err != nil {
			t.Error(err)
		}
		done <- b.String()
	}()
	var page string
	select {
	case page = <-done:
	case <-time.After(20 * time.Second):
		t.Fatal("the index page did not finish: a figure routine loops")
	}
	if strings.Contains(page, "\u202E") || !strings.Contains(page, `gnp\u{202E}exe.png`) {
		t.Error("the right-to-left override reaches the page raw")
	}
	if !strings.Contains(page, "1 star:") || strings.Contains(page, "1 stars") {
		t.Error(`the count does not read "1 star"`)
	}
	if !strings.Contains(page, "25.0 ± 2.5 d") {
		t.Error("the rotation period is not rounded to its error")
	}
	if strings.Contains(page, "NaN") || strings.Contains(page, "Inf") {
		t.Error("the page holds NaN or Inf")
	}
	// P(planet) beside each verdict; unknown as "—", never 0.
	if !strings.Contains(page, "planet-like, P(planet) 0.97") || !strings.Contains(page, "activity-like, P(planet) —") {
		t.Error("a signal's P(planet) is missing beside its verdict, or an unknown one is not shown as —")
	}
}

// TestScatterSVGExtremes draws values at the float64 limit on linear and
// log axes: the figure finishes and tick labels never repeat.
func TestScatterSVGExtremes(t *testing.T) {
	big := []float64{math.MaxFloat64, -math.MaxFloat64, 1e308, 5e-324, 0, 1, 1.0000000000000002}
	for _, a := range big {
		for _, b := range big {
			for _, log := range []bool{false, true} {
				s := scatterSVG([]point{{x: a, y: b, colour: "#000"}, {x: 1, y: 1, colour: "#000"}}, "x", "y", log, log, nil)
				if strings.Contains(s, "NaN") || strings.Contains(s, "Inf") {
					t.Errorf("(%g, %g) log %v: NaN or Inf in the SVG", a, b, log)
				}
				for _, anchor := range []string{"middle", "end"} { // x ticks, y ticks
					labels := regexp.MustCompile(`text-anchor="`+anchor+`">([^<]*)</text>`).FindAllStringSubmatch(s, -1)
					seen := map[string]bool{}
					for _, m := range labels {
						if m[1] != "x" && seen[m[1]] {
							t.Errorf("(%g, %g) log %v: tick label %q repeats", a, b, log, m[1])
						}
						seen[m[1]] = true
					}
				}
			}
		}
	}
}
