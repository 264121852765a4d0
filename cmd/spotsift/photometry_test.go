package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// simulate writes a light curve that vet reads with --photometry: its
// rotation period joins the estimates, and the report has the photometry
// figure. A bad light curve is bad input (exit 2) named with its row and
// column.
func TestVetPhotometry(t *testing.T) {
	if testing.Short() {
		t.Skip("simulates and vets a star; skipped with -short")
	}
	dir := t.TempDir()
	sim := filepath.Join(dir, "sim")
	if code, _, stderr := runCmd("simulate", "--demo", "active-no-planet", "--out", sim, "--quiet"); code != 0 {
		t.Fatalf("simulate: exit %d: %s", code, stderr)
	}
	out := filepath.Join(dir, "report")
	code, stdout, stderr := runCmd("vet", "--data", filepath.Join(sim, "epochs.csv"), "--photometry", filepath.Join(sim, lightCurveFile),
		"--no-gp", "--json", "--quiet", "--out", out)
	if code != 0 {
		t.Fatalf("vet: exit %d: %s", code, stderr)
	}
	var dg struct {
		Rotation struct {
			Estimates []struct{ Method string }
		}
		Provenance struct {
			Inputs []struct{ Path string }
		}
	}
	if err := json.Unmarshal([]byte(stdout), &dg); err != nil {
		t.Fatal(err)
	}
	found := false
	for _, e := range dg.Rotation.Estimates {
		found = found || strings.HasPrefix(e.Method, "light curve")
	}
	if !found {
		t.Errorf("no light-curve rotation estimate: %+v", dg.Rotation.Estimates)
	}
	if n := len(dg.Provenance.Inputs); n != 2 {
		t.Errorf("%d hashed inputs, want the table and the light curve", n)
	}
	if _, err := os.Stat(filepath.Join(out, "figures", "photometry.svg")); err != nil {
		t.Errorf("no photometry figure: %v", err)
	}
	bad := write(t, dir, "bad.csv", "time,flux,flux_err\n1,1.0,0.001\n2,x,0.001\n")
	code, _, stderr = runCmd("vet", "--data", filepath.Join(sim, "epochs.csv"), "--photometry", bad, "--no-gp", "--quiet")
	if code != 2 || !strings.Contains(stderr, "bad.csv") || !strings.Contains(stderr, "flux") {
		t.Errorf("bad light curve: exit %d, %q", code, stderr)
	}
}
