package indicators

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestBaryAgainstERFA composes header BERVs (BaryVelocity) for 32 epochs
// over two years and five star directions and compares z_B with the values
// of testdata/indicators/bary_ref.json (make_bary_ref.py: the Earth's
// barycentric velocity from ERFA's epv00, pyerfa 2.0.0.1, z_B = γ(1 +
// BERV/c) with γ from its full speed). Expected: agreement within 0.01 m/s
// (c·Δz; the speed model's error, about 30 m/s, moves z_B by v·δv/c² ≈
// 0.003 m/s), the orbital speed within 60 m/s of ERFA's, and the purely
// radial composition (BaryRadial) off by the transverse term, up to
// 1.5 m/s, which is what this convention fixes.
func TestBaryAgainstERFA(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join(fixtureDir, "bary_ref.json"))
	if err != nil {
		t.Fatal(err)
	}
	var rows struct {
		Rows []map[string]float64
	}
	if err := json.Unmarshal(raw, &rows); err != nil {
		t.Fatal(err)
	}
	if len(rows.Rows) != 160 {
		t.Fatalf("%d rows, want 160", len(rows.Rows))
	}
	var worst, worstSpeed, worstRadial float64
	for _, r := range rows.Rows {
		bjd, berv, speed, zb := r["bjd"], r["berv"], r["speed"], r["z_b"]
		got := BaryLogFactor(BaryVelocity, berv, bjd, 0)
		worst = math.Max(worst, C*math.Abs(got-math.Log1p(zb)))
		worstSpeed = math.Max(worstSpeed, math.Abs(EarthOrbitalSpeed(bjd)-speed))
		worstRadial = math.Max(worstRadial, C*math.Abs(BaryLogFactor(BaryRadial, berv, bjd, 0)-math.Log1p(zb)))
		// z_B given as such is used as given.
		if d := BaryLogFactor(BaryRedshift, berv, bjd, zb) - math.Log1p(zb); d != 0 {
			t.Fatalf("BaryRedshift changes z_B by %g", d)
		}
	}
	t.Logf("worst |c Δz| %.4f m/s, speed %.1f m/s; radial-only composition off by up to %.2f m/s", worst, worstSpeed, worstRadial)
	if worst > 0.01 || worstSpeed > 60 {
		t.Errorf("z_B off by up to %.4f m/s (want ≤ 0.01), orbital speed by %.1f m/s (want ≤ 60)", worst, worstSpeed)
	}
	if worstRadial < 0.5 || worstRadial > 1.6 {
		t.Errorf("the radial-only composition is off by up to %.2f m/s, want the transverse term of 0.5 to 1.6 m/s", worstRadial)
	}
	// Unknown epoch: the mean speed, still within 0.06 m/s.
	for _, r := range rows.Rows {
		if d := C * math.Abs(BaryLogFactor(BaryVelocity, r["berv"], 0, 0)-math.Log1p(r["z_b"])); d > 0.06 {
			t.Errorf("no epoch: off by %.3f m/s", d)
			break
		}
	}
}

// TestBaryConventionRoundTrip: WriteFITS records the convention and z_B,
// and ReadFITS restores them; a header with BERV alone is taken as
// BaryVelocity.
func TestBaryConventionRoundTrip(t *testing.T) {
	dir := t.TempDir()
	for _, tc := range []struct {
		conv BaryConvention
		z    float64
	}{{BaryRadial, 0}, {BaryVelocity, 0}, {BaryRedshift, 4.5e-5}} {
		s := linGridSpectrum(50)
		s.BJD, s.BERV, s.Bary, s.BaryZ = 2460100.5, 13456.7, tc.conv, tc.z
		p := filepath.Join(dir, tc.conv.String()+".fits")
		if err := WriteFITSFile(p, s); err != nil {
			t.Fatal(err)
		}
		got, err := ReadFile(p, nil)
		if err != nil {
			t.Fatal(err)
		}
		if got.Bary != tc.conv || got.BaryZ != tc.z || math.Abs(got.BERV-s.BERV) > 1e-6 {
			t.Errorf("%v: read back %v, z %v, BERV %v", tc.conv, got.Bary, got.BaryZ, got.BERV)
		}
	}
	s, err := ReadText(strings.NewReader("# WAVESCAL = air\n# BERV = 12.5\n5000 1\n5001 1\n"), "t.txt", nil)
	if err != nil || s.Bary != BaryVelocity || s.BERV != 12500 {
		t.Errorf("text BERV: %v, %v, %v", err, s.Bary, s.BERV)
	}
}
