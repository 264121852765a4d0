package survey

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spotsift/activity/photometry"
	"spotsift/activity/starsim"
)

// A manifest's photometry column reaches the diagnosis: the light curve's
// rotation period is among the rotation estimates, and the light curve is
// one of the hashed inputs.
func TestManifestPhotometry(t *testing.T) {
	dir := t.TempDir()
	sc, err := starsim.DemoScenario("active-no-planet")
	if err != nil {
		t.Fatal(err)
	}
	res, err := starsim.Simulate(sc, 1, nil)
	if err != nil {
		t.Fatal(err)
	}
	if err := res.WriteFiles(dir, nil); err != nil {
		t.Fatal(err)
	}
	lc, err := res.LightCurve(nil)
	if err != nil {
		t.Fatal(err)
	}
	if err := photometry.Write(filepath.Join(dir, "lc.csv"), &photometry.LightCurve{Time: lc.Time, Flux: lc.Flux, Err: lc.Err, Sector: lc.Sector}, ""); err != nil {
		t.Fatal(err)
	}
	man := "name,data,photometry\nC3," + starsim.TableFile + ",lc.csv\n"
	if err := os.WriteFile(filepath.Join(dir, "m.csv"), []byte(man), 0o644); err != nil {
		t.Fatal(err)
	}
	m, err := ReadManifest(filepath.Join(dir, "m.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if m.Stars[0].Photometry != "lc.csv" {
		t.Fatalf("photometry column read as %q", m.Stars[0].Photometry)
	}
	m2, err := ParseManifestTOML([]byte("[[star]]\nname = \"C3\"\ndata = \"x.csv\"\nphotometry = \"lc.csv\"\n"), "m.toml")
	if err != nil || m2.Stars[0].Photometry != "lc.csv" {
		t.Fatalf("TOML photometry key: %v %v", m2, err)
	}
	o := &Options{SkipModels: true}
	_, inputs, err := InputHash(m, &m.Stars[0], o)
	if err != nil {
		t.Fatal(err)
	}
	out := analyse(context.Background(), m, &m.Stars[0], 1, o, inputs)
	if out.err != nil {
		t.Fatal(out.err)
	}
	found := false
	for _, e := range out.diag.Rotation.Estimates {
		if strings.HasPrefix(e.Method, "light curve") {
			found = true
		}
	}
	if !found {
		t.Errorf("no light-curve estimate among %+v", out.diag.Rotation.Estimates)
	}
	hashed := false
	for _, in := range out.diag.Provenance.Inputs {
		hashed = hashed || in.Path == "lc.csv"
	}
	if !hashed {
		t.Errorf("the light curve is not among the inputs %+v", out.diag.Provenance.Inputs)
	}
}
