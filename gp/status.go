package gp

// Status is the outcome of a covariance factorisation.
type Status int

const (
	// Factorized means the covariance was factorised as given.
	Factorized Status = iota
	// JitterAdded means the covariance was factorised only after a small
	// diagonal jitter was added; the jitter is reported by the solver. The
	// results are usable but the covariance was numerically singular: a
	// warning for the caller to pass on.
	JitterAdded
	// NotPositiveDefinite means the covariance could not be factorised
	// even with the largest allowed jitter.
	NotPositiveDefinite
)

// String returns a short description.
func (s Status) String() string {
	switch s {
	case Factorized:
		return "factorized"
	case JitterAdded:
		return "factorized after adding jitter"
	case NotPositiveDefinite:
		return "not positive definite"
	}
	return "unknown status"
}

// Err returns ErrNotPositiveDefinite for NotPositiveDefinite and nil
// otherwise.
func (s Status) Err() error {
	if s == NotPositiveDefinite {
		return ErrNotPositiveDefinite
	}
	return nil
}
