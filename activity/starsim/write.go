package starsim

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"

	"spotsift/indicators"
	"spotsift/rvfit"

	"spotsift/internal/worker"
)

// Names of the files WriteFiles writes inside its directory.
const (
	ScenarioFile = "scenario.toml" // the scenario, defaults applied, with its seed
	TruthFile    = "truth.csv"     // the truth per epoch (WriteTruth)
	TableFile    = "epochs.csv"    // the simulated measurements (Series, rvfit.WriteTable)
	StarFile     = "star.toml"     // the star's parameters in the activity package's star-file format
	SpectraDir   = "spectra"       // one FITS file per epoch, when Spectrum.Full
)

// WriteOptions controls WriteFiles. A nil *WriteOptions uses the defaults.
type WriteOptions struct {
	// Workers is the number of spectra made in parallel; 0 means
	// runtime.GOMAXPROCS(0). The files do not depend on it.
	Workers int
	// Progress, when not nil, is called after each spectrum is written with
	// the number done and the total (from several goroutines, one call at a
	// time).
	Progress func(done, total int)
	// Creator names the writing program in the table's comment line
	// (default "spotsift starsim").
	Creator string
	// Float32 reports whether spectra are written with 32-bit float flux
	// (half the size; 7 significant digits, ample for photon counts) instead
	// of 64-bit.
	Float32 bool
}

// SpectrumFile returns the file name of epoch i's spectrum inside
// SpectraDir: epoch-NNNN.fits, numbered from 1.
func SpectrumFile(i int) string { return fmt.Sprintf("epoch-%04d.fits", i+1) }

// WriteFiles writes the simulation into dir (created if needed): the
// scenario (ScenarioFile), the truth (TruthFile), the star file
// (StarFile), the measured table (TableFile) and, when the scenario asks for full spectra, one FITS file
// per epoch in SpectraDir (indicators.FITSEncoder: 1-D, log-linear air
// wavelength WCS, DATE-OBS and MJD-OBS, and the keywords OBJECT, INSTRUME,
// ORIGIN, SIMSEED, SIMEPOCH, SNR5500, EXPTYPE). Each file is written to a temporary
// file and renamed. Spectra are made and written one at a time per worker,
// so memory stays bounded whatever the number of epochs.
func (r *Result) WriteFiles(dir string, opts *WriteOptions) error {
	if opts == nil {
		opts = &WriteOptions{}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := r.Scenario.EncodeTOML(&buf, r.Seed); err != nil {
		return err
	}
	if err := rvfit.WriteFileAtomic(filepath.Join(dir, ScenarioFile), func(w io.Writer) error {
		_, err := w.Write(buf.Bytes())
		return err
	}); err != nil {
		return err
	}
	if err := rvfit.WriteFileAtomic(filepath.Join(dir, TruthFile), r.WriteTruth); err != nil {
		return err
	}
	if err := rvfit.WriteFileAtomic(filepath.Join(dir, StarFile), r.WriteStar); err != nil {
		return err
	}
	creator := opts.Creator
	if creator == "" {
		creator = "spotsift starsim"
	}
	if err := rvfit.WriteTable(filepath.Join(dir, TableFile), r.Series(), &rvfit.WriteOptions{Creator: creator}); err != nil {
		return err
	}
	if !r.Scenario.Spectrum.Full {
		return nil
	}
	sdir := filepath.Join(dir, SpectraDir)
	if err := os.MkdirAll(sdir, 0o755); err != nil {
		return err
	}
	var mu sync.Mutex
	done := 0
	enc := &indicators.FITSEncoder{Float32: opts.Float32}
	return r.EachSpectrum(opts.Workers, func(i int, sp *indicators.Spectrum) error {
		if err := enc.EncodeFile(filepath.Join(sdir, SpectrumFile(i)), sp); err != nil {
			return err
		}
		if opts.Progress != nil {
			mu.Lock()
			done++
			opts.Progress(done, len(r.Epochs))
			mu.Unlock()
		}
		return nil
	})
}

// EachSpectrum makes the spectrum of every epoch (as Result.Spectrum does)
// and hands it to fn, on workers goroutines (0: runtime.GOMAXPROCS(0)), so
// fn must be safe for concurrent use. Each worker reuses one flux buffer:
// the spectrum passed to fn is valid only until fn returns (Clone it to keep
// it). Memory stays bounded by the number of workers, whatever the number of
// epochs. The first error from fn stops the remaining epochs and is
// returned, wrapped with the epoch number.
func (r *Result) EachSpectrum(workers int, fn func(i int, s *indicators.Spectrum) error) error {
	return r.EachSpectrumIn(workers, 0, len(r.Epochs), fn)
}

// EachSpectrumIn is EachSpectrum for the epochs from (included) to to
// (excluded), clamped to the epochs there are: a caller can make the
// spectra a batch at a time. Epoch i's spectrum is the same whichever
// batch makes it.
func (r *Result) EachSpectrumIn(workers, from, to int, fn func(i int, s *indicators.Spectrum) error) error {
	nw := (&Options{Workers: workers}).workers()
	from, to = max(from, 0), min(to, len(r.Epochs))
	n := max(to-from, 0)
	errs := make([]error, n)
	next := make(chan int)
	stop := make(chan struct{})
	var once sync.Once
	var wg worker.Group
	for w := 0; w < min(nw, n); w++ {
		wg.Go(func() {
			ws := r.s.newWorkspace()
			flux := make([]float64, r.s.spec.n)
			for k := range next {
				i := from + k
				if errs[k] = fn(i, r.s.spectrum(ws, r, i, flux)); errs[k] != nil {
					once.Do(func() { close(stop) })
				}
			}
		})
	}
feed:
	for k := 0; k < n; k++ {
		select {
		case next <- k:
		case <-stop:
			break feed
		case <-wg.Stopped():
			break feed
		}
	}
	close(next)
	if err := wg.Wait(); err != nil {
		return fmt.Errorf("starsim: %w", err)
	}
	for k, err := range errs {
		if err != nil {
			return fmt.Errorf("starsim: spectrum of epoch %d: %w", from+k+1, err)
		}
	}
	return nil
}

// WriteTruth writes the truth per epoch as CSV to w. Comment lines (#) name
// the star, the seed and each column's unit; the columns are
//
//	time            BJD_TDB, days
//	instrument      spectrograph name
//	snr             the epoch's S/N per pixel at 5500 Å
//	berv            barycentric correction of the spectrum, m/s
//	rv_activity     activity RV, m/s (Epoch.ActivityRV)
//	rv_<planet>     each planet's Keplerian RV, m/s, in scenario order
//	rv_planets      their sum, m/s
//	spot_filling    fraction of the projected disk covered by spots
//	facula_filling  fraction covered by faculae
//	flux            flux at RefWavelength relative to the quiet star
//	fwhm, bis       noise-free FWHM and bisector span of the profile, m/s
//	contrast        noise-free contrast of the profile
//	s_index         noise-free S-index of the synthetic spectrum
//	emission        relative strength of the chromospheric emission cores
//
// Numbers are written in the shortest form that reads back exactly (times
// without an exponent).
func (r *Result) WriteTruth(w io.Writer) error {
	bw := bufio.NewWriter(w)
	fmt.Fprintf(bw, "# truth of a spotsift simulation: star %q, seed %d\n", r.Scenario.Name, r.Seed)
	fmt.Fprintf(bw, "# units: time=d rv_*=m/s fwhm=m/s bis=m/s; filling factors are fractions of the projected disk; flux relative to the quiet star at %g A\n", RefWavelength)
	cols := []string{"time", "instrument", "snr", "berv", "rv_activity"}
	for _, p := range r.Scenario.Planets {
		cols = append(cols, "rv_"+p.Name)
	}
	cols = append(cols, "rv_planets", "spot_filling", "facula_filling", "flux", "fwhm", "bis", "contrast", "s_index", "emission")
	for i, c := range cols {
		if i > 0 {
			bw.WriteByte(',')
		}
		bw.WriteString(c)
	}
	bw.WriteByte('\n')
	f := func(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
	for _, e := range r.Epochs {
		row := []string{strconv.FormatFloat(e.Time, 'f', -1, 64), e.Instrument, f(e.SNR), f(e.BERV), f(e.ActivityRV)}
		var sum float64
		for _, p := range e.PlanetRV {
			row = append(row, f(p))
			sum += p
		}
		row = append(row, f(sum), f(e.SpotFilling), f(e.FaculaFilling), f(e.Flux),
			f(e.TrueFWHM), f(e.TrueBIS), f(e.TrueContrast), f(e.TrueSIndex), f(e.Emission))
		for i, c := range row {
			if i > 0 {
				bw.WriteByte(',')
			}
			bw.WriteString(c)
		}
		bw.WriteByte('\n')
	}
	return bw.Flush()
}

// WriteStar writes the simulated star's parameters to w as a star file of
// the activity package (TOML: name, b_v, teff, vsini in km/s, the equatorial
// rotation_period in days, vacuum = false since the spectra are in air, and
// the S-index calibration a = 1, b = 0, since the tabulated s_index is
// already on the Mount Wilson-like scale). Note that an S-index measured on
// the simulated spectra in the spectrograph form (H + K)/(R + V), as
// indicators.SIndex does, must be multiplied by SIndexScale to match the
// table.
func (r *Result) WriteStar(w io.Writer) error {
	st := &r.Scenario.Star
	vsini := st.VEq * math.Sin(st.Inclination*math.Pi/180)
	_, err := fmt.Fprintf(w, "# star file of a spotsift simulation (seed %d)\nname = %q\nb_v = %s\nteff = %s\nvsini = %s\nrotation_period = %s\nvacuum = false\n\n# the simulated spectrograph's S-index calibration: S_MW = a (H+K)/(R+V) + b\n[s_index]\na = %s\nb = 0.0\n",
		r.Seed, r.Scenario.Name, fmtG(st.BV), fmtG(st.Teff), fmtG(vsini), fmtG(st.RotationPeriod), fmtG(SIndexScale))
	return err
}

// fmtG formats x in the shortest form that reads back exactly, with a
// decimal point so that TOML reads a float.
func fmtG(x float64) string {
	s := strconv.FormatFloat(x, 'g', -1, 64)
	if !strings.ContainsAny(s, ".eE") {
		s += ".0"
	}
	return s
}
