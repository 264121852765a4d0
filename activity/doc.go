// Package activity holds the diagnosis of radial-velocity signals: the star's
// description, rotation-period estimates, the evidence tests, the verdict and
// its reasons, the report and the survey runner.
package activity
