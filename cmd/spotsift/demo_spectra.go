package main

import (
	"context"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"sync"

	"spotsift/activity"
	"spotsift/activity/starsim"
	"spotsift/indicators"
	"spotsift/rvfit"
)

// demoBatch is the number of simulated spectra the demo keeps on disk at
// once (about 1.2 MB each as 32-bit FITS): the spectra are written,
// measured and deleted a batch at a time, so the demo's disk use stays
// near 40 MB above its output instead of the 450 MB of all its spectra.
const demoBatch = 32

// maskSpectra is the number of spectra the line mask is built from, as
// activity.Measure does by default; the first batch holds at least that
// many, so the mask is the one a measurement of the whole folder builds.
const maskSpectra = 20

// batchOptions controls measureInBatches.
type batchOptions struct {
	// Batch is the number of spectra on disk at once (at least
	// maskSpectra for the first batch).
	Batch   int
	Workers int
	// Progress is called with the number of spectra measured.
	Progress func(done, total int)
	// Measure holds the measuring options (Workers, Mask and Progress are
	// set by measureInBatches).
	Measure activity.MeasureOptions
}

// measureInBatches writes the simulated spectra of res as FITS files into
// dir a batch at a time, measures each batch with activity.Measure (the
// code that measures any folder of spectra: reading the FITS file, the
// CCF and every indicator) and, unless keep, deletes the batch's files
// before writing the next. The line mask is built once, from the first
// spectra, as activity.Measure builds it for a whole folder, so the
// series is the one measuring the whole folder at once gives (a test
// checks it), with at most one batch of spectra on disk.
func measureInBatches(ctx context.Context, res *starsim.Result, dir string, keep bool, o *batchOptions) (*rvfit.Series, []activity.MeasureFailure, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, nil, err
	}
	n := res.Len()
	batch := max(o.Batch, 1)
	enc := &indicators.FITSEncoder{Float32: true}
	mo := o.Measure
	mo.Workers = o.Workers
	mo.Progress = nil
	var parts []*rvfit.Series
	var failures []activity.MeasureFailure
	done := 0
	for from := 0; from < n; {
		size := batch
		if from == 0 {
			size = max(batch, maskSpectra)
		}
		to := min(from+size, n)
		paths := make([]string, to-from)
		var mu sync.Mutex
		err := res.EachSpectrumIn(o.Workers, from, to, func(i int, sp *indicators.Spectrum) error {
			p := filepath.Join(dir, starsim.SpectrumFile(i))
			if err := enc.EncodeFile(p, sp); err != nil {
				return err
			}
			mu.Lock()
			paths[i-from] = p
			mu.Unlock()
			return nil
		})
		if err != nil {
			removeAll(paths, keep)
			return nil, nil, err
		}
		if mo.Mask == nil {
			m, err := activity.BuildMask(paths, &activity.MeasureOptions{MaskSpectra: maskSpectra, MaskOptions: mo.MaskOptions, Read: mo.Read})
			if err != nil {
				removeAll(paths, keep)
				return nil, nil, err
			}
			mo.Mask = m
		}
		base := done
		mo.Progress = func(k, _ int) {
			if o.Progress != nil {
				o.Progress(base+k, n)
			}
		}
		s, fails, err := activity.Measure(ctx, paths, &mo)
		removeAll(paths, keep)
		failures = append(failures, fails...)
		switch {
		case errors.Is(err, activity.ErrNoSpectra):
			// Every spectrum of this batch failed; the others may not.
		case err != nil:
			return nil, nil, err
		default:
			parts = append(parts, s)
		}
		done += len(paths)
		from = to
	}
	if len(parts) == 0 {
		return nil, failures, fmt.Errorf("%w: all %d spectra failed", activity.ErrNoSpectra, n)
	}
	return joinBatches(parts), failures, nil
}

// removeAll deletes the files of a measured batch, unless keep.
func removeAll(paths []string, keep bool) {
	if keep {
		return
	}
	for _, p := range paths {
		if p != "" {
			os.Remove(p)
		}
	}
}

// joinBatches joins the series of the batches, given in epoch order, into
// the series measuring every spectrum at once gives: epochs sorted by
// time (ties in file order), the indicator columns in their order, NaN
// where a batch lacks a column.
func joinBatches(parts []*rvfit.Series) *rvfit.Series {
	// Each batch's columns are a subsequence of the same canonical order
	// (activity.Measure leaves out the columns no spectrum of the batch
	// could measure): merge them so that order is kept.
	var names []string
	unit := map[string]string{}
	hasErr := map[string]bool{}
	for _, p := range parts {
		prev := -1
		for _, ind := range p.Indicators {
			at := -1
			for k, nm := range names {
				if nm == ind.Name {
					at = k
				}
			}
			if at < 0 {
				at = prev + 1
				names = append(names[:at], append([]string{ind.Name}, names[at:]...)...)
				unit[ind.Name] = ind.Unit
			}
			hasErr[ind.Name] = hasErr[ind.Name] || ind.Err != nil
			prev = at
		}
	}
	out := &rvfit.Series{Name: "measured spectra"}
	total := 0
	for _, p := range parts {
		total += p.Len()
	}
	cols := make([]rvfit.Indicator, len(names))
	for k, nm := range names {
		cols[k] = rvfit.Indicator{Name: nm, Unit: unit[nm], Value: nanFloats(total)}
		if hasErr[nm] {
			cols[k].Err = nanFloats(total)
		}
	}
	off := 0
	for _, p := range parts {
		out.Time = append(out.Time, p.Time...)
		out.RV = append(out.RV, p.RV...)
		out.RVErr = append(out.RVErr, p.RVErr...)
		out.Instrument = append(out.Instrument, p.Instrument...)
		for _, ind := range p.Indicators {
			for k, nm := range names {
				if nm == ind.Name {
					copy(cols[k].Value[off:], ind.Value)
					if ind.Err != nil {
						copy(cols[k].Err[off:], ind.Err)
					}
				}
			}
		}
		off += p.Len()
	}
	out.Indicators = cols
	// Within a batch the epochs are in time order already; a stable sort
	// on time keeps equal times in file (epoch) order across batches.
	idx := make([]int, total)
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return out.Time[idx[a]] < out.Time[idx[b]] })
	return out.Subset(idx)
}

func nanFloats(n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = math.NaN()
	}
	return v
}
