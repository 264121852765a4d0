package main

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"spotsift/activity"
	"spotsift/activity/starsim"
	"spotsift/activity/survey"
)

// TestCommandsOnSimulatedTables runs simulate, scan, model and vet on a
// simulated planet host, as a user would.
func TestCommandsOnSimulatedTables(t *testing.T) {
	dir := t.TempDir()
	sim := filepath.Join(dir, "sim")
	if code, _, stderr := runCmd("simulate", "--demo", "quiet-planet", "--out", sim, "--quiet"); code != exitOK {
		t.Fatalf("simulate: exit %d\n%s", code, stderr)
	}
	table := filepath.Join(sim, "epochs.csv")
	star := filepath.Join(sim, "star.toml")

	code, stdout, stderr := runCmd("scan", "--data", table, "--out", filepath.Join(dir, "pg.csv"))
	if code != exitOK || !strings.Contains(stdout, "rv") {
		t.Fatalf("scan: exit %d\n%s\n%s", code, stdout, stderr)
	}
	if st, err := os.Stat(filepath.Join(dir, "pg.csv")); err != nil || st.Size() == 0 {
		t.Errorf("scan --out: %v", err)
	}
	// The demo planet: 9.73 d (activity/starsim/demo/quiet-planet.toml).
	if !strings.Contains(stdout, "9.73") {
		t.Errorf("scan did not list the 9.73 d planet:\n%s", stdout)
	}

	code, stdout, stderr = runCmd("model", "--data", table, "--star", star, "--planets", "1", "--json", "--starts", "2")
	if code != exitOK {
		t.Fatalf("model: exit %d\n%s", code, stderr)
	}
	var res struct {
		Fit struct {
			Planets []struct {
				P float64 `json:"period"`
				K float64 `json:"k"`
			} `json:"planets"`
		} `json:"fit"`
	}
	err := json.Unmarshal([]byte(stdout), &res)
	fit := res.Fit
	if err != nil || len(fit.Planets) != 1 {
		t.Fatalf("model --json: %v\n%.300s", err, stdout)
	}
	// Truth: P = 9.73 d, K = 3.4 m/s (the demo scenario); tolerances a few
	// sigma of the fit (σ_P ≈ 0.003 d, σ_K ≈ 0.1 m/s).
	if math.Abs(fit.Planets[0].P-9.73) > 0.02 || math.Abs(fit.Planets[0].K-3.4) > 0.5 {
		t.Errorf("model found P = %v d, K = %v m/s; want 9.73, 3.4", fit.Planets[0].P, fit.Planets[0].K)
	}

	code, stdout, stderr = runCmd("model", "--data", table, "--planets", "1", "--starts", "2", "--sample", "300")
	if code != exitOK || !strings.Contains(stdout, "posterior:") || !strings.Contains(stdout, "K1") {
		t.Errorf("model --sample: exit %d\n%s\n%s", code, stdout, stderr)
	}

	out := filepath.Join(dir, "vet")
	code, stdout, stderr = runCmd("vet", "--data", table, "--star", star, "--out", out, "--quiet")
	if code != exitOK {
		t.Fatalf("vet: exit %d\n%s", code, stderr)
	}
	if !strings.Contains(stdout, "planet-like") || !strings.Contains(stdout, activity.Caution) {
		t.Errorf("vet summary:\n%s", stdout)
	}
	for _, f := range []string{activity.VerdictFile, activity.HTMLFile, activity.PDFFile} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Errorf("vet --out: %v", err)
		}
	}
	code, stdout, _ = runCmd("vet", "--data", table, "--star", star, "--json", "--no-gp", "--period", "9.73")
	var dg activity.Diagnosis
	if code != exitOK || json.Unmarshal([]byte(stdout), &dg) != nil || len(dg.Signals) != 1 {
		t.Fatalf("vet --json --period: exit %d\n%.300s", code, stdout)
	}
	if dg.Signals[0].Source != "given" || dg.Provenance.Seed != defaultSeed || len(dg.Provenance.Inputs) != 2 {
		t.Errorf("vet --json: source %q, provenance %+v", dg.Signals[0].Source, dg.Provenance)
	}
}

// TestDemo runs the demo twice with the same seed: the verdict JSON must
// be identical, the planet host's planet planet-like and the active star's
// signal activity-like.
func TestDemo(t *testing.T) {
	if testing.Short() {
		t.Skip("the demo simulates and measures some 380 spectra; skipped with -short")
	}
	var verdicts [2]map[string][]byte
	var lastOut string
	for k := range verdicts {
		out := filepath.Join(t.TempDir(), "demo")
		lastOut = out
		code, stdout, stderr := runCmd("demo", "--out", out, "--quiet")
		if code != exitOK {
			t.Fatalf("demo: exit %d\n%s\n%s", code, stdout, stderr)
		}
		if !strings.Contains(stdout, "report.html") || !strings.Contains(stdout, "index.html") {
			t.Errorf("demo does not say where the reports are:\n%s", stdout)
		}
		// The K printed is the adopted one, and says where it is from.
		if !regexp.MustCompile(`S1 +P = +9\.73[0-9]* d +K = [0-9.]+ ± [0-9.]+ m/s \(Keplerian fit\)`).MatchString(stdout) {
			t.Errorf("demo does not print the planet's adopted K:\n%s", stdout)
		}
		if k == 0 && !strings.Contains(stdout, "measured and deleted") {
			t.Errorf("demo does not say what became of the spectra:\n%s", stdout)
		}
		// The scenario files say the spectra were simulated, and no spectra
		// are left anywhere in the output.
		for _, star := range []string{"quiet-planet", "active-no-planet"} {
			b, err := os.ReadFile(filepath.Join(out, star, "simulated", starsim.ScenarioFile))
			if err != nil || !regexp.MustCompile(`(?m)^\s*full = true$`).Match(b) {
				t.Errorf("%s: scenario.toml does not record the spectra (%v)", star, err)
			}
		}
		if m, _ := filepath.Glob(filepath.Join(out, "*", "simulated", starsim.SpectraDir)); len(m) != 0 {
			t.Errorf("spectra left in the output: %v", m)
		}
		verdicts[k] = map[string][]byte{}
		for star, name := range map[string]string{"quiet-planet": "Veyla-9", "active-no-planet": "Corvane-3"} {
			b, err := os.ReadFile(filepath.Join(out, demoSurveyDir, survey.StarsDir, survey.Folder(name), activity.VerdictFile))
			if err != nil {
				t.Fatal(err)
			}
			verdicts[k][star] = b
		}
	}
	for star, b := range verdicts[0] {
		if !bytes.Equal(b, verdicts[1][star]) {
			t.Errorf("%s: the two runs gave different verdict JSON", star)
		}
	}
	// A rerun into the same folder reuses everything, --json is honoured,
	// and the folder stays small (the spectra went to a temporary folder).
	code, stdout, stderr := runCmd("demo", "--out", lastOut, "--quiet", "--json")
	var res demoResult
	if code != exitOK || json.Unmarshal([]byte(stdout), &res) != nil {
		t.Fatalf("demo --json rerun: exit %d\n%.400s\n%s", code, stdout, stderr)
	}
	if !res.Reused || len(res.Stars) != 2 {
		t.Errorf("the rerun did not reuse the results: %+v", res)
	}
	if res.Bytes > 100<<20 || res.Bytes != diskUse(lastOut) {
		t.Errorf("the demo folder holds %d bytes (reported %d); want at most 100 MB", diskUse(lastOut), res.Bytes)
	}
	verdictAt := func(star string, period float64) string {
		var dg activity.Diagnosis
		if err := json.Unmarshal(verdicts[0][star], &dg); err != nil {
			t.Fatal(err)
		}
		for _, s := range dg.Signals {
			if math.Abs(float64(s.Period)-period) < 0.02*period {
				return s.Verdict
			}
		}
		return "not found"
	}
	// Truth from the demo scenarios: Veyla-9's planet at 9.73 d; Corvane-3's
	// activity strongest at half its 8.6 d rotation.
	if v := verdictAt("quiet-planet", 9.73); v != activity.PlanetLike {
		t.Errorf("the planet host's 9.73 d planet is %s", v)
	}
	if v := verdictAt("active-no-planet", 4.3); v != activity.ActivityLike {
		t.Errorf("the active star's 4.3 d signal is %s", v)
	}
}
