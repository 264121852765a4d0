package gp

import (
	"fmt"
	"testing"
)

// TestApproximateQP fits the rotation kernels to quasi-periodic
// autocorrelations and reports the difference (the issue asks for it to be
// reported, not hidden). docs/methods.md §8 only says the rotation term
// "approximates" the QP kernel, with no number; the bounds below are the
// misfits measured here (spotsift, this commit) with a margin of about
// 1.3×, so a regression in the fit fails the test. The misfits are large:
// the two oscillators of RotationSHO have no zero-frequency part, which a
// QP kernel with Eta4 ≳ 1 mostly is (exp(−2 sin²x) = e^(−1) e^(cos 2x)
// has a constant Fourier term 0.47 against 0.42 in the first harmonic),
// and neither kernel has the QP kernel's higher harmonics or Gaussian
// envelope. RotationTerm, whose C carries the non-periodic part, does
// better whenever Eta4 ≳ 1.
func TestApproximateQP(t *testing.T) {
	for _, row := range []struct {
		q            QuasiPeriodic
		maxRMS, maxT float64 // RotationSHO and RotationTerm RMS bounds
	}{
		// Measured RMS (RotationSHO, RotationTerm): 0.146, 0.136.
		{QuasiPeriodic{1, 50, 25, 0.5}, 0.19, 0.18},
		// 0.336, 0.063 (the QP kernel of the injection test).
		{QuasiPeriodic{1, 70.7, 25, 1}, 0.44, 0.09},
		// 0.132, 0.051.
		{QuasiPeriodic{2, 30, 12, 1.5}, 0.18, 0.07},
		// 0.192, 0.214 (many harmonics: neither term can follow).
		{QuasiPeriodic{1, 100, 10, 0.3}, 0.25, 0.28},
	} {
		t.Run(fmt.Sprintf("eta=%g,%g,%g,%g", row.q.Eta1, row.q.Eta2, row.q.Eta3, row.q.Eta4), func(t *testing.T) {
			r, m, err := ApproximateQP(row.q, 0)
			if err != nil {
				t.Fatal(err)
			}
			rt, mt, err := ApproximateQPTerm(row.q, 0)
			if err != nil {
				t.Fatal(err)
			}
			t.Logf("RotationSHO %+v: RMS %.4f, max %.4f of k(0) over 0..%g d", r, m.RMS, m.MaxAbs, m.MaxLag)
			t.Logf("RotationTerm %+v: RMS %.4f, max %.4f of k(0)", rt, mt.RMS, mt.MaxAbs)
			if m.RMS > row.maxRMS {
				t.Errorf("RotationSHO RMS misfit %.4f > %.4f", m.RMS, row.maxRMS)
			}
			if mt.RMS > row.maxT {
				t.Errorf("RotationTerm RMS misfit %.4f > %.4f", mt.RMS, row.maxT)
			}
			// The fit must beat the starting mapping.
			start := RotationTerm{row.q.Eta1 * row.q.Eta1, 1, row.q.Eta2, row.q.Eta3}
			if s := CompareKernels(start, row.q, m.MaxLag, approxLags); mt.RMS > s.RMS {
				t.Errorf("fitted RotationTerm (%.4f) worse than its start (%.4f)", mt.RMS, s.RMS)
			}
		})
	}
}
