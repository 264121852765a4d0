package activity

import (
	"math"
	"strings"
	"testing"
)

// Check values: docs/methods.md §5 table [computed from the formulas there],
// quoted to four significant figures, hence the relative tolerances.
func TestActivityRotationRelations(t *testing.T) {
	for _, tt := range []struct {
		name string
		got  float64
		want float64
		tol  float64 // relative
	}{
		{"tau_c B-V 0.50", TurnoverTime(0.50), 4.167, 2e-4},
		{"tau_c B-V 0.65", TurnoverTime(0.65), 11.988, 1e-4},
		{"tau_c B-V 0.653", TurnoverTime(0.653), 12.162, 1e-4},
		{"tau_c B-V 0.80", TurnoverTime(0.80), 19.374, 1e-4},
		{"tau_c B-V 1.00", TurnoverTime(1.00), 23.014, 1e-4},
		{"tau_c B-V 1.20", TurnoverTime(1.20), 24.547, 1e-4},
		{"Ro MH08 -4.906", RossbyMH08(-4.906), 1.9529, 1e-4},
		{"P MH08 -4.906", RotationMH08(-4.906, 0.65), 23.41, 3e-4},
		{"Ro MH08 -4.500", RossbyMH08(-4.500), 0.7487, 1e-4},
		{"P MH08 -4.500", RotationMH08(-4.500, 0.65), 8.98, 1e-3},
		{"Ro MH08 -4.700", RossbyMH08(-4.700), 1.3419, 1e-4},
		{"P MH08 -4.700", RotationMH08(-4.700, 0.65), 16.09, 1e-3},
		{"Ro Noyes -4.906", RotationNoyes(-4.906, 0.65) / TurnoverTime(0.65), 1.9178, 1e-4},
		{"P Noyes -4.906", RotationNoyes(-4.906, 0.65), 22.99, 3e-4},
		{"Ro Noyes -4.500", RotationNoyes(-4.500, 0.65) / TurnoverTime(0.65), 0.7720, 2e-4},
		{"P Noyes -4.500", RotationNoyes(-4.500, 0.65), 9.25, 1e-3},
		{"gyro Sun", RotationGyro(0.65, 4570), 26.18, 3e-4},
	} {
		if math.Abs(tt.got-tt.want) > tt.tol*math.Abs(tt.want) {
			t.Errorf("%s = %.6g, want %.6g (rel tol %g)", tt.name, tt.got, tt.want, tt.tol)
		}
	}
	if !math.IsNaN(RotationGyro(0.4, 1000)) {
		t.Error("gyro relation below B-V 0.495 should be NaN")
	}
}

func TestRelationEstimates(t *testing.T) {
	est := RelationEstimates(-4.906, 0.65)
	if len(est) != 2 || est[0].Note != "" || est[1].Note != "" {
		t.Fatalf("estimates %+v, want two without notes", est)
	}
	if est := RelationEstimates(-4.0, 1.3); len(est) == 0 || est[0].Note == "" {
		t.Errorf("an extrapolated estimate should carry a note: %+v", est)
	}
	if RelationEstimates(math.NaN(), 0.65) != nil {
		t.Error("no log R'HK should give no estimate")
	}
}

// TestCombineStarFile checks the refinement of a star file's rotation
// period by the indicators' (docs/methods.md §14.12): 30 ± 3 d and
// 32 ± 1 d agree (2 d apart, twice their combined error is 6.3 d) and
// combine to (30/9 + 32/1)/(1/9 + 1) = 31.8 d ± (1/9 + 1)^−½ = 0.949 d
// (inverse-variance weighting, computed by hand); 30 ± 3 d and 45 ± 1 d
// disagree and the star file stands.
func TestCombineStarFile(t *testing.T) {
	given := Rotation{Period: 30, Err: 3, Source: starFileSource, Hypotheses: []RotationHypothesis{{Period: 30, Err: 3, Share: 1}}}
	got := combineStarFile(given, RotationHypothesis{Period: 32, Err: 1, Share: 1, Why: "joint periodogram"})
	if !(math.Abs(float64(got.Period)-31.8) < 1e-12 && math.Abs(float64(got.Err)-0.9486832980505138) < 1e-12) {
		t.Errorf("combined: %v ± %v d, want 31.8 ± 0.9487 d", got.Period, got.Err)
	}
	if !strings.HasPrefix(got.Source, starFileSource) || len(got.Hypotheses) != 1 || got.Hypotheses[0].Period != float64(got.Period) {
		t.Errorf("combined: source %q, hypotheses %+v", got.Source, got.Hypotheses)
	}
	if kept := combineStarFile(given, RotationHypothesis{Period: 45, Err: 1, Share: 1}); kept.Period != 30 || kept.Err != 3 || kept.Source != starFileSource {
		t.Errorf("disagreeing: %v ± %v d from %q, want the star file's 30 ± 3 d", kept.Period, kept.Err, kept.Source)
	}
}
