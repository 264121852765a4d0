package survey

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"spotsift/activity"
)

// TestStarProvenance checks that a survey star's provenance is enough to
// reproduce it: the survey's full command line, the manifest's hash and the
// settings, not just "survey" and a derived seed.
func TestStarProvenance(t *testing.T) {
	dir := t.TempDir()
	mf := filepath.Join(dir, "manifest.csv")
	if err := os.WriteFile(mf, []byte("name,data\nA,a.csv\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	sum, _ := activity.HashFile(mf)
	m := &Manifest{File: mf, Dir: dir}
	o := &Options{Seed: 7, Command: "spotsift survey --manifest manifest.csv --seed 7 --out out", Shard: Shard{K: 2, N: 3},
		Diagnose: &activity.Options{FAPThreshold: 0.01, PMin: 1.5}}
	p := starProvenance(m, &Entry{Name: "A"}, o, StarSeed(7, "A"), []activity.InputHash{{Path: "a.csv", SHA256: "ab"}})
	if p.Command != o.Command {
		t.Errorf("command %q, want the full command line %q", p.Command, o.Command)
	}
	if len(p.Inputs) != 2 || p.Inputs[0].Path != mf || p.Inputs[0].SHA256 != sum {
		t.Errorf("inputs %+v: want the manifest's hash %s first", p.Inputs, sum)
	}
	for k, want := range map[string]string{"survey_seed": "7", "shard": "2/3", "fap_threshold": "0.01", "period_min": "1.5", "period_max": "default"} {
		if got := p.Settings[k]; !strings.HasPrefix(got, want) {
			t.Errorf("setting %s = %q, want %q", k, got, want)
		}
	}
}
