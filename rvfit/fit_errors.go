package rvfit

import "errors"

// Sentinel errors of the periodogram, orbit, model and fitting code; test
// for them with errors.Is. (The table reader's sentinels are in errors.go.)
var (
	ErrBadEccentricity = errors.New("rvfit: eccentricity outside [0, 1)")
	ErrBadPeriod       = errors.New("rvfit: period is not positive and finite")
	ErrBadMass         = errors.New("rvfit: mass is not positive and finite")
	ErrBadGrid         = errors.New("rvfit: bad frequency grid")
	ErrGridOutOfReach  = errors.New("rvfit: period grid outside the data's reach")
	ErrZeroErrors      = errors.New("rvfit: all uncertainties are zero")
	ErrBadPrior        = errors.New("rvfit: bad prior")
	ErrTooManyParams   = errors.New("rvfit: fewer epochs than free parameters")
	ErrBadParams       = errors.New("rvfit: bad parameter vector")
	ErrBadOption       = errors.New("rvfit: bad option")
	ErrNoConvergence   = errors.New("rvfit: fit did not converge")
	ErrNotFiniteLogP   = errors.New("rvfit: log-posterior is not finite at the start")
	ErrBadWalkers      = errors.New("rvfit: bad ensemble")
	ErrChainTooShort   = errors.New("rvfit: chain too short")
)
