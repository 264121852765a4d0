package survey

import (
	"math"
	"strings"
	"testing"
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
	if !strings.Contains(s, "P = Prot/2") || !strings.Contains(s, ">20<") || !strings.Contains(s, ">4<") {
		t.Errorf("reference lines or ticks missing:\n%s", s)
	}
	if s := scatterSVG(nil, "x", "y", false, false, nil); !strings.Contains(s, "no data") {
		t.Error("empty figure")
	}
}
