package starsim

import (
	"bytes"
	"errors"
	"reflect"
	"strings"
	"testing"
)

const goodScenario = `
name = "Test-Star"
[star]
v_eq = 2.5
rotation_period = 20
inclination = 60
[[planet]]
period = 7.3
k = 3
[observing]
start = 2460000.5
end = 2460100.5
[[instrument]]
name = "A"
snr = 80
`

func TestParseScenario(t *testing.T) {
	for _, c := range []struct {
		name    string
		text    string
		wantKey string // "" means success
	}{
		{"good", goodScenario, ""},
		{"unknown key", strings.Replace(goodScenario, "inclination = 60", "inclination = 60\ncolour = 3", 1), "star.colour"},
		{"unknown table", goodScenario + "\n[telescope]\nsize = 3\n", "telescope"},
		{"unknown key in the second planet", goodScenario + "\n[[planet]]\nperiod = 2\nmass = 3\n", "planet[2].mass"},
		{"unknown key in a region", goodScenario + "\n[[activity.region]]\nlat = 2\nradius = 3\n", "activity.region[1].radius"},
		{"negative planet period", strings.Replace(goodScenario, "period = 7.3", "period = -7.3", 1), "planet[1].period"},
		{"negative rotation period", strings.Replace(goodScenario, "rotation_period = 20", "rotation_period = -20", 1), "star.rotation_period"},
		{"inclination too large", strings.Replace(goodScenario, "inclination = 60", "inclination = 200", 1), "star.inclination"},
		{"inclination negative", strings.Replace(goodScenario, "inclination = 60", "inclination = -5", 1), "star.inclination"},
		{"negative snr", strings.Replace(goodScenario, "snr = 80", "snr = -1", 1), "instrument[1].snr"},
		{"explicit zero snr", strings.Replace(goodScenario, "snr = 80", "snr = 0", 1), "instrument[1].snr"},
		{"explicit zero line width", strings.Replace(goodScenario, "inclination = 60", "inclination = 60\nline_sigma = 0.0", 1), "star.line_sigma"},
		{"no v_eq", strings.Replace(goodScenario, "v_eq = 2.5", "", 1), "star.v_eq"},
		{"end before start", strings.Replace(goodScenario, "end = 2460100.5", "end = 2459000.5", 1), "observing.end"},
		{"eccentricity", strings.Replace(goodScenario, "k = 3", "k = 3\ne = 0.99", 1), "planet[1].e"},
		{"wrong type", strings.Replace(goodScenario, "v_eq = 2.5", `v_eq = "fast"`, 1), ""},
		{"non-ASCII name", strings.Replace(goodScenario, `name = "Test-Star"`, `name = "Tëst-Star"`, 1), "name"},
		{"twice the same instrument", goodScenario + "\n[[instrument]]\nname = \"A\"\n", "instrument[2].name"},
	} {
		t.Run(c.name, func(t *testing.T) {
			sc, err := ParseScenario([]byte(c.text), "test.toml")
			if c.name == "wrong type" {
				if !errors.Is(err, ErrScenario) || !strings.Contains(err.Error(), "test.toml") {
					t.Fatalf("err = %v, want a scenario error naming the file", err)
				}
				return
			}
			if c.wantKey == "" {
				if err != nil {
					t.Fatal(err)
				}
				if sc.Star.Teff != 5750 || sc.Instruments[0].SNR != 80 || sc.Planets[0].Name != "b" {
					t.Errorf("defaults not applied: %+v", sc.Star)
				}
				return
			}
			var se *ScenarioError
			if !errors.As(err, &se) || !errors.Is(err, ErrScenario) {
				t.Fatalf("err = %v, want a *ScenarioError", err)
			}
			if se.Key != c.wantKey || !strings.Contains(err.Error(), c.wantKey) {
				t.Errorf("err = %v names key %q, want %q", err, se.Key, c.wantKey)
			}
		})
	}
}

// TestEncodeTOMLRoundTrip checks that a written scenario reads back to the
// same scenario, seed included.
func TestEncodeTOMLRoundTrip(t *testing.T) {
	sc, err := ParseScenario([]byte(goodScenario), "test.toml")
	if err != nil {
		t.Fatal(err)
	}
	sc.Activity.Regions = []Region{{Lat: 12, Lon: -30, SpotArea: 0.01, FaculaArea: 0.02, Start: 2460001, Grow: 3, Decay: 9}}
	var buf bytes.Buffer
	if err := sc.EncodeTOML(&buf, 42); err != nil {
		t.Fatal(err)
	}
	back, err := ParseScenario(buf.Bytes(), "written.toml")
	if err != nil {
		t.Fatalf("%v\n%s", err, buf.String())
	}
	want := sc.Defaults()
	want.Seed = 42
	// The set of explicit zeros differs (the written file spells out every
	// key); the values must not.
	back.zeros, want.zeros = nil, nil
	if !reflect.DeepEqual(back, want) {
		t.Errorf("round trip differs:\n got %+v\nwant %+v", back, want)
	}
}

// FuzzParseScenario checks that no scenario text makes ParseScenario panic,
// and that whatever it accepts simulates or fails with an error.
func FuzzParseScenario(f *testing.F) {
	f.Add([]byte(goodScenario))
	f.Add([]byte("[star]\nv_eq = 1e308\nrotation_period = 1e-300\n"))
	f.Add([]byte("[[planet]]\nperiod = nan\n"))
	f.Fuzz(func(t *testing.T, b []byte) {
		sc, err := ParseScenario(b, "fuzz.toml")
		if err != nil {
			if !errors.Is(err, ErrScenario) {
				t.Fatalf("error %v does not wrap ErrScenario", err)
			}
			return
		}
		if sc.Star.VEq <= 0 || sc.Star.RotationPeriod <= 0 {
			t.Fatalf("accepted a star with v_eq %v, period %v", sc.Star.VEq, sc.Star.RotationPeriod)
		}
	})
}

// TestExplicitZeros checks that a key set to 0 in a file keeps its 0 where
// 0 is valid, instead of taking the default.
func TestExplicitZeros(t *testing.T) {
	text := strings.Replace(goodScenario, "inclination = 60", "inclination = 60\nlimb_u1 = 0\nlimb_u2 = 0.0\n[activity]\ncb_suppression = 0", 1)
	sc, err := ParseScenario([]byte(text), "zeros.toml")
	if err != nil {
		t.Fatal(err)
	}
	if sc.Star.LimbU1 != 0 || sc.Star.LimbU2 != 0 || sc.Activity.CBSuppression != 0 {
		t.Errorf("explicit zeros replaced: u1 %v, u2 %v, cb_suppression %v", sc.Star.LimbU1, sc.Star.LimbU2, sc.Activity.CBSuppression)
	}
	// And they survive Simulate's own defaulting.
	sc.Observing.End = sc.Observing.Start + 3
	sc.Spectrum = smallSpectrum
	res := mustSimulate(t, sc, 1, nil)
	if res.Scenario.Star.LimbU1 != 0 || res.Scenario.Activity.CBSuppression != 0 {
		t.Errorf("Simulate replaced explicit zeros")
	}
}

func TestBVFromTeff(t *testing.T) {
	// The Sun: B−V = 0.65 at 5778 K within 0.01 mag (Ballesteros 2012,
	// from memory; solar B−V 0.65, docs/methods.md §4.2).
	if bv := BVFromTeff(5778); bv < 0.64 || bv > 0.66 {
		t.Errorf("BVFromTeff(5778) = %.4f, want 0.65", bv)
	}
	// Cooler stars are redder.
	if BVFromTeff(4500) <= BVFromTeff(5500) {
		t.Error("B−V does not grow as Teff falls")
	}
}
