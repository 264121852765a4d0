package gp_test

import (
	"fmt"
	"math/rand/v2"

	"spotsift/gp"
)

// A quasi-periodic activity model with one jitter per instrument, as a fit
// would use it: residuals in, log-likelihood and activity prediction out.
// (The printed values agree with an independent numpy/scipy computation.)
func ExampleNoise() {
	t := []float64{0, 1.1, 2.3, 3.9, 5.2, 6.8, 8.1, 9.7, 11.4, 12.6}
	r := []float64{1.2, 0.9, -0.2, -1.1, -0.8, 0.4, 1.3, 0.7, -0.6, -1.2}
	variance := make([]float64, len(t))
	for i := range variance {
		variance[i] = 0.3 * 0.3
	}
	inst := []int{0, 0, 0, 0, 0, 1, 1, 1, 1, 1}
	m := &gp.Noise{
		Kernel: gp.QuasiPeriodic{Eta1: 1, Eta2: 20, Eta3: 10, Eta4: 0.8},
		Jitter: []float64{0.1, 0.2},
	}
	ll, err := m.LogLikelihood(t, r, variance, inst)
	if err != nil {
		fmt.Println(err)
		return
	}
	mean, sd2, _ := m.Predict(t, r, variance, inst, []float64{7.5}, true)
	fmt.Printf("ln L = %.4g\n", ll)
	fmt.Printf("activity at t = 7.5 d: %.3g, variance %.2g\n", mean[0], sd2[0])
	// Output:
	// ln L = -10.41
	// activity at t = 7.5 d: 0.915, variance 0.11
}

// Semiseparable solver: a prior draw and its log-likelihood in O(N).
func ExampleNewSemisep() {
	n := 5000
	t := make([]float64, n)
	for i := range t {
		t[i] = 0.1 * float64(i)
	}
	k := gp.Sum{gp.RotationTerm{B: 4, C: 0.5, L: 30, P: 12}, gp.White{Sigma: 0.5}}
	s, err := gp.NewSemisep(k, t, nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	y, _ := s.Draw(nil, rand.New(rand.NewPCG(1, 1)))
	ll, _ := s.LogLikelihood(y)
	fmt.Printf("N = %d, rank %d, ln L per point %.2f\n", s.Len(), s.Rank(), ll/float64(n))
	// Output:
	// N = 5000, rank 3, ln L per point -0.90
}
