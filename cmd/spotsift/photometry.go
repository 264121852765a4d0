package main

import (
	"flag"
	"fmt"

	"spotsift/activity/photometry"
	"spotsift/rvfit"
)

// photometryFlags are the light-curve options of vet.
type photometryFlags struct {
	file, columns string
}

func (p *photometryFlags) add(fs *flag.FlagSet) {
	fs.StringVar(&p.file, "photometry", "", "the star's light curve, a table `file` (time, flux or mag, its error, optional sector)")
	fs.StringVar(&p.columns, "photometry-columns", "", "map the light curve's columns onto spotsift's, e.g. `flux=sap_flux,time=btjd`")
}

// load reads the light curve, or returns nil when none was given.
func (p *photometryFlags) load(e *env, quiet bool) (*photometry.LightCurve, error) {
	if p.file == "" {
		return nil, nil
	}
	cols, err := rvfit.ParseColumnMap(p.columns)
	if err != nil {
		return nil, fmt.Errorf("--photometry-columns: %w", err)
	}
	lc, warns, err := photometry.Read(p.file, &photometry.ReadOptions{Columns: cols})
	if err != nil {
		return nil, err
	}
	for _, w := range warns {
		warnf(e, quiet, "%s", w)
	}
	return lc, nil
}
