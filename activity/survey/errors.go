package survey

import (
	"errors"
	"fmt"
)

// Sentinel errors; test for them with errors.Is.
var (
	// ErrManifest is wrapped by every error in a manifest.
	ErrManifest = errors.New("survey: bad manifest")
	// ErrShard reports a shard specification that is not K/N with
	// 1 ≤ K ≤ N.
	ErrShard = errors.New("survey: bad shard")
	// ErrOptions reports bad options to Run.
	ErrOptions = errors.New("survey: bad options")
	// ErrMerge reports shard outputs that cannot be merged.
	ErrMerge = errors.New("survey: cannot merge")
	// ErrPartial is returned by Run (wrapped) when some stars failed or
	// were not run: the survey is incomplete, though every finished star
	// is written.
	ErrPartial = errors.New("survey: partial survey")
	// ErrBusy reports an output folder locked by another survey or merge.
	ErrBusy = errors.New("survey: output folder busy")
	// ErrTimeout is the failure of a star not finished within
	// Options.StarTimeout.
	ErrTimeout = errors.New("survey: star time limit reached")
	// ErrNotRegular reports an input that is not a regular file (a named
	// pipe, a device): it is refused rather than read, since reading it
	// could block or never end.
	ErrNotRegular = errors.New("survey: not a regular file")
)

// errStateMissing reports a star folder without a state file.
var errStateMissing = errors.New("survey: no state file")

// ManifestError reports a problem in a manifest: the file, the line (and
// column of a CSV file, or key of a TOML file) when known, and what is
// wrong.
type ManifestError struct {
	File   string
	Line   int
	Column string
	Key    string
	Msg    string
}

// Error returns "file:line: column \"c\": message" (or key for TOML).
func (e *ManifestError) Error() string {
	s := e.File
	if e.Line > 0 {
		s += fmt.Sprintf(":%d", e.Line)
	}
	if e.Column != "" {
		s += fmt.Sprintf(": column %q", e.Column)
	}
	if e.Key != "" {
		s += fmt.Sprintf(": key %q", e.Key)
	}
	return s + ": " + e.Msg
}

// Unwrap returns ErrManifest.
func (e *ManifestError) Unwrap() error { return ErrManifest }
