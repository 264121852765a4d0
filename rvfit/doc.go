// Package rvfit holds everything that works on a time series of radial
// velocities: the per-epoch data set (epochs, instruments, indicator columns)
// and its table formats, periodograms, Keplerian signals, priors,
// likelihoods, optimisation, sampling and model comparison.
//
// Units throughout: times in days (BJD_TDB), velocities in m/s, frequencies
// in cycles per day.
package rvfit
