package starsim

import (
	"embed"
	"fmt"
	"path"
	"sort"
)

//go:embed demo/*.toml
var demoFS embed.FS

// Demo is a scenario shipped with the package.
type Demo struct {
	// Name is the file's base name without extension, e.g. "quiet-planet".
	Name string
	// Text is the scenario's TOML text.
	Text []byte
	// Scenario is the parsed scenario, defaults applied.
	Scenario *Scenario
}

// DemoScenarios returns the two invented demo stars, sorted by name:
//
//   - "active-no-planet": Corvane-3, an active K dwarf without planets whose
//     spots crowd two opposite active longitudes, so that the strongest RV
//     signal sits at half the rotation period (8.6 d → 4.3 d);
//   - "quiet-planet": Veyla-9, a quiet G dwarf with one 9.73 d, 3.4 m/s
//     planet, observed with two instruments with an offset between them.
//
// Both make tables only (Spectrum.Full false); set Spectrum.Full for FITS
// spectra. Every call parses afresh, so callers may modify the result.
func DemoScenarios() ([]Demo, error) {
	ents, err := demoFS.ReadDir("demo")
	if err != nil {
		return nil, err
	}
	var out []Demo
	for _, e := range ents {
		name := e.Name()
		b, err := demoFS.ReadFile(path.Join("demo", name))
		if err != nil {
			return nil, err
		}
		sc, err := ParseScenario(b, name)
		if err != nil {
			return nil, fmt.Errorf("starsim: demo %s: %w", name, err)
		}
		out = append(out, Demo{Name: name[:len(name)-len(path.Ext(name))], Text: b, Scenario: sc})
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Name < out[j].Name })
	return out, nil
}

// DemoScenario returns the demo scenario called name (see DemoScenarios).
func DemoScenario(name string) (*Scenario, error) {
	ds, err := DemoScenarios()
	if err != nil {
		return nil, err
	}
	for _, d := range ds {
		if d.Name == name {
			return d.Scenario, nil
		}
	}
	return nil, fmt.Errorf("starsim: no demo scenario %q", name)
}
