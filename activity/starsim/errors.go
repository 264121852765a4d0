package starsim

import (
	"errors"
	"fmt"
)

// Sentinel errors; test for them with errors.Is.
var (
	// ErrScenario is wrapped by every error in a scenario.
	ErrScenario = errors.New("starsim: bad scenario")
	// ErrNoEpochs reports a schedule that yields no observation.
	ErrNoEpochs = errors.New("starsim: the observing plan gives no epoch")
	// ErrEpoch reports an epoch index out of range.
	ErrEpoch = errors.New("starsim: no such epoch")
	// ErrFit reports a profile whose Gaussian fit did not converge.
	ErrFit = errors.New("starsim: gaussian fit of the profile failed")
)

// ScenarioError reports a problem in a scenario at a key (and line, when it
// is known). Key is the dotted path, with 1-based indices for arrays of
// tables, e.g. "planet[2].period".
type ScenarioError struct {
	// File names the scenario file (or the scenario's Name).
	File string
	// Line is the 1-based line of a TOML syntax error, 0 otherwise.
	Line int
	// Key is the offending key's dotted path, "" when not tied to a key.
	Key string
	// Msg says what is wrong.
	Msg string
}

// Error returns "file[:line]: key \"k\": message".
func (e *ScenarioError) Error() string {
	s := e.File
	if s == "" {
		s = "scenario"
	}
	if e.Line > 0 {
		s += fmt.Sprintf(":%d", e.Line)
	}
	if e.Key != "" {
		s += fmt.Sprintf(": key %q", e.Key)
	}
	return s + ": " + e.Msg
}

// Unwrap returns ErrScenario.
func (e *ScenarioError) Unwrap() error { return ErrScenario }
