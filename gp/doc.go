// Package gp provides Gaussian-process models of stellar activity noise:
// kernels, multi-output kernels with time derivatives, dense and
// semiseparable solvers, log-likelihoods, prediction and draws.
//
// It imports none of the other spotsift packages.
package gp
