// Package gp provides Gaussian-process models of stellar activity noise:
// kernels, multi-output kernels with time derivatives, dense and
// semiseparable solvers, log-likelihoods, prediction, draws and
// hyperparameter fits.
//
// It imports none of the other spotsift packages. Times are in days;
// amplitudes are in the unit of the data (m/s for velocities).
//
// # Kernels
//
// A Kernel is a small value type giving the covariance at a lag and its
// hyperparameter vector: QuasiPeriodic (Haywood et al. 2014 form, with
// the Rajpaul et al. 2015 mapping), Matern32, SHO (all three damping
// regimes), RotationTerm and RotationSHO (two oscillators at P and P/2),
// White, and Sum. Kernels that are sums of exponential-cosine terms
// implement Celerite and can use the semiseparable solver;
// Differentiable kernels give lag derivatives for derivative models;
// ParamGradienter kernels give hyperparameter gradients.
//
// # Solvers
//
// NewDense factorises K by a blocked Cholesky decomposition, adding
// jitter in steps when needed and reporting it through Status;
// NewSemisep uses the O(N J²) recurrences of Foreman-Mackey et al. (2017).
// Both implement Solver: LogDet, Solve, LogLikelihood, Predict,
// PredictDeriv and Draw.
//
// # Use in a fit
//
// Noise bundles a kernel with per-instrument jitter and works on plain
// slices, so a fitting package can use it as its noise model:
//
//	m := &gp.Noise{Kernel: gp.QuasiPeriodic{Eta1: 3, Eta2: 40, Eta3: 25, Eta4: 0.6}, Jitter: []float64{1, 2}}
//	ll, err := m.LogLikelihood(t, residuals, sigma2, instrument)
//	mean, variance, err := m.Predict(t, residuals, sigma2, instrument, tnew, true)
//
// Noise.Params and Noise.WithParams expose the parameter vector (kernel,
// then jitters); Noise.LogLikelihoodGrad gives its gradient; FitNoise
// maximises it.
//
// # Multi-output models
//
// Multi drives several observables from one latent process and its
// derivative (Rajpaul et al. 2015); NewRajpaul builds the RV, activity
// index and bisector model. NewMultiDense stacks any subset of series,
// each with its own epochs; FitMulti fits the hyperparameters.
package gp
