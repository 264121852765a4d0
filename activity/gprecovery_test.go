package activity

import (
	"math"
	"os"
	"strconv"
	"sync"
	"testing"

	"spotsift/activity/starsim"
)

// TestMultiRotationRecovery: without a star file (no rotation estimate),
// the multi-output GP fit (RV, S-index and bisector span) must recover the
// rotation period within 10 % on simulated active stars rotating in 3 to
// 60 d (issue 15). The stars are the active demo scenario (a spotted K
// dwarf, activity/starsim/demo/active-no-planet.toml) with its rotation
// period set log-uniformly in [3, 60] d and its equatorial velocity
// scaled as 1/P (a fixed radius); the spots' lifetime stays 3 rotations
// and the active longitudes are one or two (by seed), so the strongest
// RV signal sits at P or at P/2. The seeds run 1…n (SPOTSIFT_SEED_BASE=b
// runs b+1…b+n, to check the rate on other stars); SPOTSIFT_LONG=1 runs
// 48 stars and asks for a rate of at least 90 %; by default it is
// skipped (each star is simulated and fitted, about a second of CPU).
// Measured: 46 of 48 on seeds 1–48, 47 of 48 on seeds 1001–1048 (the
// misses rotate in 3.4 and 4.0 d; one fit took the half period).
func TestMultiRotationRecovery(t *testing.T) {
	if os.Getenv("SPOTSIFT_LONG") != "1" {
		t.Skip("simulates and fits 48 active stars; set SPOTSIFT_LONG=1 to run it")
	}
	const n = 48
	var seed0 uint64
	if v := os.Getenv("SPOTSIFT_SEED_BASE"); v != "" {
		b, err := strconv.ParseUint(v, 10, 64)
		if err != nil {
			t.Fatalf("SPOTSIFT_SEED_BASE: %v", err)
		}
		seed0 = b
	}
	base, err := starsim.DemoScenario("active-no-planet")
	if err != nil {
		t.Fatal(err)
	}
	type outcome struct {
		p, got, gotErr float64
		ok             bool
		err            error
	}
	out := make([]outcome, n)
	var wg sync.WaitGroup
	jobs := make(chan int)
	for range 2 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range jobs {
				out[i] = recoverRotation(base, seed0+uint64(i+1), i, n)
			}
		}()
	}
	for i := range n {
		jobs <- i
	}
	close(jobs)
	wg.Wait()
	good := 0
	for i, o := range out {
		if o.err != nil {
			t.Errorf("star %d (P = %.2f d): %v", i+1, o.p, o.err)
			continue
		}
		mark := "MISSED"
		if o.ok {
			good++
			mark = "ok"
		}
		t.Logf("star %2d: P %6.2f d, fitted %7.2f ± %.2f d (ratio %.3f) %s", i+1, o.p, o.got, o.gotErr, o.got/o.p, mark)
	}
	rate := float64(good) / n
	t.Logf("rotation within 10%%: %d of %d (%.0f%%)", good, n, 100*rate)
	if rate < 0.9 {
		t.Errorf("rotation recovered within 10%% in %d of %d stars, want at least 90%%", good, n)
	}
}

// recoverRotation simulates star i of n (rotation period spread
// log-uniformly over [3, 60] d, in a seeded order) and fits the
// multi-output model without a rotation estimate.
func recoverRotation(base *starsim.Scenario, seed uint64, i, n int) (o struct {
	p, got, gotErr float64
	ok             bool
	err            error
}) {
	// A low-discrepancy spread of periods: the golden-ratio sequence.
	f := math.Mod(float64(i)*0.6180339887498949+0.3, 1)
	o.p = 3 * math.Pow(20, f)
	sc := *base
	sc.Star.RotationPeriod = o.p
	sc.Star.VEq = base.Star.VEq * base.Star.RotationPeriod / o.p
	sc.Activity.ActiveLongitudes = 1 + i%2
	res, err := starsim.Simulate(&sc, seed, &starsim.Options{Workers: 1})
	if err != nil {
		o.err = err
		return o
	}
	fit, err := FitGPActivity(res.Series(), &GPActivityOptions{Model: GPMulti, Workers: 1})
	if err != nil {
		o.err = err
		return o
	}
	o.got, o.gotErr = fit.Rotation, fit.RotationErr
	o.ok = math.Abs(fit.Rotation-o.p) <= 0.1*o.p
	return o
}
