package gp

import "math/rand/v2"

// Solver is a factorised GP covariance at fixed times: the common methods
// of Dense and Semisep.
type Solver interface {
	// Len returns the number of points.
	Len() int
	// Status returns the outcome of the factorisation.
	Status() Status
	// LogDet returns ln det K.
	LogDet() float64
	// Solve stores K⁻¹y in dst and returns it.
	Solve(dst, y []float64) ([]float64, error)
	// LogLikelihood returns −½ rᵀK⁻¹r − ½ ln det K − (N/2) ln 2π.
	LogLikelihood(r []float64) (float64, error)
	// Predict returns the predictive mean and variance of the noise-free
	// process at new times.
	Predict(r, tnew []float64, wantVar bool) (mean, variance []float64, err error)
	// PredictDeriv is Predict for the time derivative of the process.
	PredictDeriv(r, tnew []float64, wantVar bool) (mean, variance []float64, err error)
	// Draw returns a draw from N(0, K).
	Draw(dst []float64, rnd *rand.Rand) ([]float64, error)
}

var (
	_ Solver = (*Dense)(nil)
	_ Solver = (*Semisep)(nil)
)
