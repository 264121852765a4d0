package survey

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"sync"
	"testing"

	"spotsift/activity"
	"spotsift/activity/starsim"
	"spotsift/rvfit"
)

// simStar is a simulated star with its known truth.
type simStar struct {
	name, table, starFile string
	// planets are the true planet periods; rotation the true equatorial
	// rotation period (days).
	planets  []float64
	rotation float64
	active   bool
}

// simSample makes n simulated stars (tables and star files) in dir,
// alternating the two demo scenarios with varied planet periods,
// semi-amplitudes and rotation periods. Star i uses seed i+1.
func simSample(tb testing.TB, dir string, n int) []simStar {
	tb.Helper()
	var out []simStar
	for i := 0; i < n; i++ {
		var sc *starsim.Scenario
		var err error
		st := simStar{}
		if i%2 == 0 {
			sc, err = starsim.DemoScenario("quiet-planet")
			if err != nil {
				tb.Fatal(err)
			}
			// Planets between 2.4 and 5.3 d, short of P_rot/4 = 6.9 d
			// (the highest harmonic the diagnosis tests, with its aliases)
			// of the 27.5 d rotation, with K of 4 to 8 m/s: clear cases.
			periods := []float64{5.3, 3.1, 4.2, 2.45, 3.7, 4.8}
			p := periods[(i/2)%len(periods)]
			sc.Planets[0].Period = p
			sc.Planets[0].K = 4 + float64((i/2)%3)*2
			sc.Name = fmt.Sprintf("Quiet-%02d", i+1)
			st.planets = []float64{p}
		} else {
			sc, err = starsim.DemoScenario("active-no-planet")
			if err != nil {
				tb.Fatal(err)
			}
			rots := []float64{8.6, 6.2, 11.3, 7.4, 9.8, 5.5}
			sc.Star.RotationPeriod = rots[(i/2)%len(rots)]
			sc.Name = fmt.Sprintf("Active-%02d", i+1)
			st.active = true
		}
		st.name = sc.Name
		st.rotation = sc.Star.RotationPeriod
		res, err := starsim.Simulate(sc, uint64(i+1), &starsim.Options{Workers: 1})
		if err != nil {
			tb.Fatalf("%s: %v", sc.Name, err)
		}
		st.table = filepath.Join(dir, sc.Name+".csv")
		if err := rvfit.WriteTable(st.table, res.Series(), nil); err != nil {
			tb.Fatal(err)
		}
		var sb bytes.Buffer
		if err := res.WriteStar(&sb); err != nil {
			tb.Fatal(err)
		}
		st.starFile = filepath.Join(dir, sc.Name+".toml")
		if err := os.WriteFile(st.starFile, sb.Bytes(), 0o644); err != nil {
			tb.Fatal(err)
		}
		out = append(out, st)
	}
	return out
}

// manifestOf builds the in-memory manifest of sim stars (file paths).
func manifestOf(stars []simStar) *Manifest {
	m := &Manifest{File: "test manifest"}
	for _, s := range stars {
		m.Stars = append(m.Stars, Entry{Name: s.name, Data: s.table, StarFile: s.starFile})
	}
	return m
}

var (
	sampleOnce  sync.Once
	sampleDir   string
	sampleStars []simStar
)

// sample12 returns the 12 simulated stars, made once per test binary in a
// folder that is removed by TestMain.
func sample12(tb testing.TB) []simStar {
	sampleOnce.Do(func() {
		d, err := os.MkdirTemp("", "survey-sample")
		if err != nil {
			tb.Fatal(err)
		}
		sampleDir = d
		sampleStars = simSample(tb, d, 12)
	})
	if sampleStars == nil {
		tb.Fatal("simulated sample not made")
	}
	return sampleStars
}

func TestMain(m *testing.M) {
	code := m.Run()
	if sampleDir != "" {
		os.RemoveAll(sampleDir)
	}
	os.Exit(code)
}

// copySample copies the sample's files into dir and returns stars pointing
// there (for tests that modify inputs).
func copySample(tb testing.TB, stars []simStar, dir string) []simStar {
	out := make([]simStar, len(stars))
	for i, s := range stars {
		out[i] = s
		for _, p := range []*string{&out[i].table, &out[i].starFile} {
			b, err := os.ReadFile(*p)
			if err != nil {
				tb.Fatal(err)
			}
			np := filepath.Join(dir, filepath.Base(*p))
			if err := os.WriteFile(np, b, 0o644); err != nil {
				tb.Fatal(err)
			}
			*p = np
		}
	}
	return out
}

var _ = activity.PlanetLike
