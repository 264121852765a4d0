// Package survey runs the diagnosis of package activity over a whole
// stellar sample: a manifest names the stars, Run analyses them on a
// bounded pool of workers (one star's failure never stops the others),
// skips the stars whose inputs and settings have not changed since the last
// run (content hashes), and writes one folder per star, a summary table of
// every signal (CSV and FITS), an SQLite catalogue of stars, signals,
// evidence items and runs, and an HTML index page with sample-wide figures.
//
// A sample too large for one machine is split with Options.Shard: shard K
// of N takes the stars whose name hashes to K, so that N jobs of a cluster
// job array share the sample without talking to each other; Merge then
// combines their output folders into one catalogue and index. Every star's
// seed is derived from the survey seed and the star's name alone, so a
// sharded survey gives the same verdicts as a single run.
//
// The layout of an output folder:
//
//	stars/<folder>/          the star's report (activity.WriteReport) and
//	                         survey-star.json, its state and input hash
//	summary.csv              one row per signal
//	summary.fits             the same table as a FITS binary table
//	catalogue.sqlite         stars, signals, evidence, skipped tests, runs
//	index.html               links to every report, sample-wide figures
//	figures/                 the figures as SVG files
//	runs.json                the history of runs into this folder
//	.spotsift.lock           the folder's advisory lock (LockFile)
package survey
