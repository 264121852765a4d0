package starsim

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

	"github.com/BurntSushi/toml"
)

// Scenario describes a simulated star, its planets and how it is observed.
// Together with a seed it determines every simulated number and byte.
//
// A scenario file is TOML; every key is optional except those marked
// required, and a zero (or absent) value takes the default given in each
// field's comment (see Defaults). An unknown key is an error naming the key.
//
//	name = "Velmora-3"
//	seed = 0                       # 0: use the seed given to Simulate
//
//	[star]
//	teff = 5750                    # K
//	v_eq = 2.1                     # equatorial rotation velocity, km/s (required)
//	inclination = 90               # deg between rotation axis and line of sight
//	rotation_period = 24.0         # equatorial rotation period, days (required)
//
//	[activity]
//	emergence_rate = 0.1           # new active regions per day
//
//	[[planet]]
//	period = 11.3                  # days
//	k = 4.0                        # m/s
//
//	[observing]
//	start = 2460000.7
//	end = 2460400.7
//
//	[[instrument]]
//	name = "ORCA"
//	snr = 120
//
//	[spectrum]
//	full = true                    # false: profiles and tables only
type Scenario struct {
	// Name labels the star in outputs (OBJECT keyword, table comments):
	// printable ASCII, at most 60 characters (default "unnamed").
	Name string `toml:"name"`
	// Seed, when not 0, replaces the seed passed to Simulate, so that a
	// written scenario file reproduces its run by itself.
	Seed uint64 `toml:"seed"`

	// Star is the photosphere and rotation ([star]).
	Star Star `toml:"star"`
	// Activity is the active-region model ([activity], [[activity.region]]).
	Activity Activity `toml:"activity"`
	// Planets are the Keplerian signals ([[planet]]), any number.
	Planets []Planet `toml:"planet"`
	// Observing is the observing plan ([observing]).
	Observing Observing `toml:"observing"`
	// Instruments are the spectrographs ([[instrument]]); none means one
	// instrument "SIM" with the defaults.
	Instruments []Instrument `toml:"instrument"`
	// Spectrum says whether and how full spectra are made ([spectrum]).
	Spectrum SpectrumPlan `toml:"spectrum"`
	// Numerics sets the disk grid and velocity step ([numerics]).
	Numerics Numerics `toml:"numerics"`

	// zeros holds the keys a scenario file set to 0 explicitly.
	zeros map[string]bool
}

// Star holds the photosphere and rotation of the simulated star.
type Star struct {
	// Teff is the photospheric temperature in K (default 5750); it sets the
	// continuum shape (Planck law) and, with Activity.SpotTempDiff, the spot
	// contrast.
	Teff float64 `toml:"teff"`
	// BV is the B−V colour index in mag, written to the star file for the
	// diagnosis (log R'HK); 0 means the value that goes with Teff by the
	// relation of Ballesteros (2012), see BVFromTeff.
	BV float64 `toml:"b_v"`
	// VEq is the equatorial rotation velocity in km/s (required, > 0).
	VEq float64 `toml:"v_eq"`
	// Inclination is the angle between the rotation axis and the line of
	// sight in degrees, in [0, 180] (default 90, equator-on; 0 is pole-on, so
	// an exact 0 cannot be given and means 90).
	Inclination float64 `toml:"inclination"`
	// RotationPeriod is the equatorial rotation period in days (required).
	RotationPeriod float64 `toml:"rotation_period"`
	// DiffRotation is α in Ω(θ) = Ω_eq (1 − α sin²θ), in [0, 0.9]; 0 is
	// rigid rotation (solar α ≈ 0.2).
	DiffRotation float64 `toml:"diff_rotation"`
	// LimbU1 and LimbU2 are the quadratic limb-darkening coefficients
	// (default 0.45 and 0.20, solar-like near 5500 Å, docs/methods.md §13). In a
	// Go literal 0 means the default, so a linear law is asked for with
	// LinearLimb (a file may also write limb_u2 = 0).
	LimbU1 float64 `toml:"limb_u1"`
	LimbU2 float64 `toml:"limb_u2"`
	// LinearLimb reports whether the law is linear (u2 forced to 0).
	LinearLimb bool `toml:"linear_limb"`
	// LineSigma is the Gaussian σ of the local (intrinsic) line profile in
	// km/s (default 2.0).
	LineSigma float64 `toml:"line_sigma"`
	// LineDepth is the central depth of the local line used for the profile
	// measurements, in (0, 1) (default 0.6).
	LineDepth float64 `toml:"line_depth"`
	// ConvectiveBlueshift is the convective blueshift at disk centre in m/s
	// (default 0, i.e. none; the Sun has ≈ 350); the local line of a quiet
	// cell is shifted by −v_cb·μ.
	ConvectiveBlueshift float64 `toml:"convective_blueshift"`
	// Systemic is the star's systemic velocity in m/s, added to every
	// spectrum and RV.
	Systemic float64 `toml:"systemic"`
}

// Activity describes the star's active regions: the random emergence process
// and any regions placed by hand.
type Activity struct {
	// EmergenceRate is the mean number of new active regions per day (a
	// Poisson process); 0 means none emerge at random.
	EmergenceRate float64 `toml:"emergence_rate"`
	// LatMin and LatMax bound the emergence latitude in degrees (both
	// hemispheres, uniform in sin θ); defaults 5 and 35.
	LatMin float64 `toml:"lat_min"`
	LatMax float64 `toml:"lat_max"`
	// ActiveLongitudes, when > 0, makes regions emerge near that many
	// longitudes evenly spaced around the star (with LongitudeSpread), instead
	// of uniformly.
	ActiveLongitudes int `toml:"active_longitudes"`
	// LongitudeSpread is the Gaussian σ in degrees around an active longitude
	// (default 15).
	LongitudeSpread float64 `toml:"longitude_spread"`
	// SpotArea is the mean peak spot area of a region in units of the disk
	// area πR² (so 0.01 covers 1 % of the disk when at disk centre; default
	// 0.005); peak areas are exponentially distributed, capped at 0.2.
	SpotArea float64 `toml:"spot_area"`
	// FaculaRatio is the facular area of a region over its spot area
	// (default 3); the facula is a ring around the spot.
	FaculaRatio float64 `toml:"facula_ratio"`
	// Lifetime is the mean region lifetime in rotation periods (default 2);
	// lifetimes are drawn uniformly in [0.5, 1.5] times it.
	Lifetime float64 `toml:"lifetime"`
	// GrowthFraction is the fraction of a lifetime spent growing, in (0, 1)
	// (default 0.2); the rest is a linear decay of the area.
	GrowthFraction float64 `toml:"growth_fraction"`
	// SpotTempDiff is T_phot − T_spot in K (default 800).
	SpotTempDiff float64 `toml:"spot_temp_diff"`
	// FaculaContrast is c_f in I_fac/I_quiet = 1 + c_f(1 − μ) (default 0.15).
	FaculaContrast float64 `toml:"facula_contrast"`
	// CBSuppression is the fraction of the convective blueshift removed
	// inside spots and faculae, in [0, 1] (default 1, all of it).
	CBSuppression float64 `toml:"cb_suppression"`
	// KeepCB, when true, sets CBSuppression to 0 (in a Go literal 0 means
	// the default; a file may also write cb_suppression = 0).
	KeepCB bool `toml:"keep_cb"`
	// SQuiet is the S-index of the quiet star (default 0.17, solar-like);
	// SGain is dS per unit visible facular filling factor (default 3). They set
	// the strength of the Ca II emission cores.
	SQuiet float64 `toml:"s_quiet"`
	SGain  float64 `toml:"s_gain"`
	// Regions are active regions placed by hand, in addition to random ones.
	Regions []Region `toml:"region"`
}

// Region is one active region: a spot core with a facular ring.
type Region struct {
	// Lat and Lon are the latitude and the longitude in degrees; longitude 0
	// faces the observer's central meridian at BJD Start (at
	// observing.start when Start is 0), and positive longitudes lie on the
	// receding side.
	Lat float64 `toml:"lat"`
	Lon float64 `toml:"lon"`
	// Start is when the region appears (BJD_TDB, days); 0 with Grow and Decay
	// 0 means it is there from the beginning and forever.
	Start float64 `toml:"start"`
	// Grow and Decay are the durations of linear growth and linear decay of
	// the areas, in days; both 0 means a region of constant size.
	Grow  float64 `toml:"grow"`
	Decay float64 `toml:"decay"`
	// SpotArea and FaculaArea are the peak areas in units of the disk area
	// πR² (a region at disk centre covers that fraction of the disk).
	SpotArea   float64 `toml:"spot_area"`
	FaculaArea float64 `toml:"facula_area"`
}

// Planet is one Keplerian signal.
type Planet struct {
	// Name labels the planet's truth column (default "b", "c", ... by order).
	Name string `toml:"name"`
	// Period in days (> 0), K the semi-amplitude in m/s (≥ 0).
	Period float64 `toml:"period"`
	K      float64 `toml:"k"`
	// E is the eccentricity in [0, 0.95]; Omega the argument of periastron of
	// the star's orbit in degrees.
	E     float64 `toml:"e"`
	Omega float64 `toml:"omega"`
	// Tc is a time of inferior conjunction of the planet (transit), BJD_TDB.
	Tc float64 `toml:"tc"`
}

// Observing describes when the star is observed.
type Observing struct {
	// Start and End bound the observations, BJD_TDB in days (required,
	// End > Start). The fraction of a day of Start sets the sidereal time of
	// the nightly visits.
	Start float64 `toml:"start"`
	End   float64 `toml:"end"`
	// Step, when > 0, observes at a uniform cadence of Step days from Start,
	// without seasons, weather or time jitter (for tests).
	Step float64 `toml:"step"`
	// SeasonLength is the number of days per year the star is observable,
	// the first season opening at Start (default 240; 365.25 or more: no gap).
	SeasonLength float64 `toml:"season_length"`
	// ClearFraction is the long-run fraction of clear nights, in (0, 1]
	// (default 0.7).
	ClearFraction float64 `toml:"clear_fraction"`
	// WeatherPersistence is the probability that a cloudy night is followed by
	// another, in [0, 1) (default 0.6): bad weather comes in runs.
	WeatherPersistence float64 `toml:"weather_persistence"`
	// TimeJitter is the Gaussian σ of the visit time around the nightly
	// sidereal slot, in days (default 0.04, about an hour).
	TimeJitter float64 `toml:"time_jitter"`
	// MaxEpochs, when > 0, stops after that many epochs.
	MaxEpochs int `toml:"max_epochs"`
	// NightLength, when > 0, is the length of the dark night in hours,
	// centred on local midnight at the fraction of a day Midnight (BJD, in
	// [0, 1)). The nightly slot (Start + n sidereal days) is then the star's
	// meridian transit: a transit inside the night is observed as it is, one
	// outside at the nearer end of the night if that is within MaxHourAngle
	// hours of the transit, and otherwise not at all, so the seasons follow
	// from the sky (set SeasonLength to 366 to let them). 0 (the default)
	// observes at the slot itself, day or night.
	NightLength float64 `toml:"night_length"`
	// Midnight is the fraction of a BJD day at local midnight: Julian days
	// begin at noon UT, so midnight at Greenwich is 0.5 and at a site of
	// east longitude λ it is 0.5 − λ/360 (mod 1), e.g. 0.694 at 70° W.
	Midnight float64 `toml:"midnight"`
	// MaxHourAngle is the largest hour angle observed, in hours (default 4).
	MaxHourAngle float64 `toml:"max_hour_angle"`
	// BERVAmplitude, when > 0, puts the spectra in the observatory's frame:
	// they are shifted by −BERV(t), BERV(t) = BERVAmplitude ·
	// sin(2π(t − Start)/365.25 + BERVPhase), in km/s (at most 30; 29.8 cos β
	// for a star at ecliptic latitude β), and carry BERV in their header, as
	// a reduction pipeline's spectra do. It is a simple annual model to
	// exercise barycentric corrections, not an ephemeris. 0 (the default)
	// writes barycentric spectra with no BERV.
	BERVAmplitude float64 `toml:"berv_amplitude"`
	// BERVPhase is the phase of that model in degrees.
	BERVPhase float64 `toml:"berv_phase"`
}

// Instrument is one spectrograph.
type Instrument struct {
	// Name labels the epochs it takes (required, unique).
	Name string `toml:"name"`
	// Offset is its zero-point offset in m/s, added to its RVs.
	Offset float64 `toml:"offset"`
	// SNR is the signal-to-noise ratio per pixel of the continuum at 5500 Å
	// (> 0, default 100).
	SNR float64 `toml:"snr"`
	// SNRScatter is the σ of the natural logarithm of the S/N from night to
	// night (seeing, airmass, thin cloud), in [0, 2]; 0 gives every epoch
	// the S/N SNR.
	SNRScatter float64 `toml:"snr_scatter"`
	// Jitter is an instrumental white noise in m/s added in quadrature to
	// the photon noise of the tabulated RVs (default 0).
	Jitter float64 `toml:"jitter"`
	// Resolution is the resolving power λ/Δλ of its Gaussian instrumental
	// profile; 0 means none (infinite resolution).
	Resolution float64 `toml:"resolution"`
	// From and To bound the period it is in use (BJD_TDB); 0 means no bound.
	From float64 `toml:"from"`
	To   float64 `toml:"to"`
	// Weight is its share of the nights when several are in use (default 1).
	Weight float64 `toml:"weight"`
}

// SpectrumPlan says whether and how full spectra are made.
type SpectrumPlan struct {
	// Full reports whether full spectra are written; false gives the
	// profile-based tables only (fast).
	Full bool `toml:"full"`
	// LambdaMin and LambdaMax bound the spectrum in Å, air (defaults 3800 and
	// 6900).
	LambdaMin float64 `toml:"lambda_min"`
	LambdaMax float64 `toml:"lambda_max"`
	// Pixels is the number of pixels of the log-linear grid (default 300000).
	Pixels int `toml:"pixels"`
	// Lines is the number of invented absorption lines (default 3000).
	Lines int `toml:"lines"`
}

// Numerics holds the resolution of the disk model.
type Numerics struct {
	// Grid is the number of cells across the stellar diameter (default 200).
	Grid int `toml:"grid"`
	// VelocityStep is the step of the profile's velocity grid in km/s
	// (default 0.05).
	VelocityStep float64 `toml:"velocity_step"`
}

// Defaults returns a copy of sc with every zero value that has a default
// replaced by it, and planets named. It does not check anything; see Check.
// A scenario read by ParseScenario remembers which keys the file set to 0
// explicitly: those keep their 0 (and Check judges it), so that, e.g.,
// "snr = 0" is an error rather than the default 100 and "limb_u1 = 0" means
// no limb darkening.
func (sc *Scenario) Defaults() *Scenario {
	c := sc.clone()
	if strings.TrimSpace(c.Name) == "" {
		c.Name = "unnamed"
	}
	def := func(p *float64, v float64, key string) {
		if *p == 0 && !c.zeros[key] {
			*p = v
		}
	}
	def(&c.Star.Teff, 5750, "star.teff")
	def(&c.Star.Inclination, 90, "star.inclination")
	def(&c.Star.BV, BVFromTeff(c.Star.Teff), "star.b_v")
	def(&c.Star.LimbU1, 0.45, "star.limb_u1")
	if c.Star.LinearLimb {
		c.Star.LimbU2 = 0
	} else {
		def(&c.Star.LimbU2, 0.20, "star.limb_u2")
	}
	def(&c.Star.LineSigma, 2.0, "star.line_sigma")
	def(&c.Star.LineDepth, 0.6, "star.line_depth")
	a := &c.Activity
	if a.LatMin == 0 && a.LatMax == 0 && !c.zeros["activity.lat_max"] {
		a.LatMin, a.LatMax = 5, 35
	}
	def(&a.LongitudeSpread, 15, "activity.longitude_spread")
	def(&a.SpotArea, 0.005, "activity.spot_area")
	def(&a.FaculaRatio, 3, "activity.facula_ratio")
	def(&a.Lifetime, 2, "activity.lifetime")
	def(&a.GrowthFraction, 0.2, "activity.growth_fraction")
	def(&a.SpotTempDiff, 800, "activity.spot_temp_diff")
	def(&a.FaculaContrast, 0.15, "activity.facula_contrast")
	if a.KeepCB {
		a.CBSuppression = 0
	} else {
		def(&a.CBSuppression, 1, "activity.cb_suppression")
	}
	def(&a.SQuiet, 0.17, "activity.s_quiet")
	def(&a.SGain, 3, "activity.s_gain")
	for i := range c.Planets {
		if c.Planets[i].Name == "" {
			c.Planets[i].Name = string(rune('b' + i%25))
		}
	}
	o := &c.Observing
	def(&o.SeasonLength, 240, "observing.season_length")
	def(&o.ClearFraction, 0.7, "observing.clear_fraction")
	def(&o.WeatherPersistence, 0.6, "observing.weather_persistence")
	def(&o.TimeJitter, 0.04, "observing.time_jitter")
	def(&o.MaxHourAngle, 4, "observing.max_hour_angle")
	if len(c.Instruments) == 0 {
		c.Instruments = []Instrument{{Name: "SIM"}}
	}
	for i := range c.Instruments {
		def(&c.Instruments[i].SNR, 100, fmt.Sprintf("instrument[%d].snr", i+1))
		def(&c.Instruments[i].Weight, 1, fmt.Sprintf("instrument[%d].weight", i+1))
	}
	s := &c.Spectrum
	def(&s.LambdaMin, 3800, "spectrum.lambda_min")
	def(&s.LambdaMax, 6900, "spectrum.lambda_max")
	if s.Pixels == 0 && !c.zeros["spectrum.pixels"] {
		s.Pixels = 300000
	}
	if s.Lines == 0 && !c.zeros["spectrum.lines"] {
		s.Lines = 3000
	}
	if c.Numerics.Grid == 0 && !c.zeros["numerics.grid"] {
		c.Numerics.Grid = 200
	}
	def(&c.Numerics.VelocityStep, 0.05, "numerics.velocity_step")
	return c
}

func (sc *Scenario) clone() *Scenario {
	c := *sc
	c.Activity.Regions = append([]Region(nil), sc.Activity.Regions...)
	c.Planets = append([]Planet(nil), sc.Planets...)
	c.Instruments = append([]Instrument(nil), sc.Instruments...)
	if sc.zeros != nil {
		c.zeros = make(map[string]bool, len(sc.zeros))
		for k, v := range sc.zeros {
			c.zeros[k] = v
		}
	}
	return &c
}

// Check reports the first invalid value of a scenario (defaults applied
// first) as a *ScenarioError naming its key: negative or zero periods,
// an inclination outside [0, 180] degrees, S/N ≤ 0, End ≤ Start,
// eccentricities outside [0, 0.95], and the like. file is used in the
// message.
func (sc *Scenario) Check(file string) error {
	c := sc.Defaults()
	bad := func(key string, v float64, msg string) error {
		return &ScenarioError{File: file, Key: key, Msg: fmt.Sprintf("%v: %s", v, msg)}
	}
	type rng struct {
		key       string
		v, lo, hi float64
		open      bool // lower bound excluded
		msg       string
	}
	rows := []rng{
		{"star.teff", c.Star.Teff, 2000, 50000, false, "must lie in [2000, 50000] K"},
		{"star.b_v", c.Star.BV, -0.4, 2.5, false, "must lie in [-0.4, 2.5] mag"},
		{"star.v_eq", c.Star.VEq, 0, 500, true, "must be > 0 and at most 500 km/s"},
		{"star.inclination", c.Star.Inclination, 0, 180, false, "must lie in [0, 180] degrees"},
		{"star.rotation_period", c.Star.RotationPeriod, 0, 1e4, true, "must be > 0 and at most 10000 days"},
		{"star.diff_rotation", c.Star.DiffRotation, 0, 0.9, false, "must lie in [0, 0.9]"},
		{"star.limb_u1", c.Star.LimbU1, -1, 2, false, "must lie in [-1, 2]"},
		{"star.limb_u2", c.Star.LimbU2, -1, 1, false, "must lie in [-1, 1]"},
		{"star.line_sigma", c.Star.LineSigma, 0.2, 50, false, "must lie in [0.2, 50] km/s"},
		{"star.line_depth", c.Star.LineDepth, 0, 0.99, true, "must lie in (0, 0.99]"},
		{"star.convective_blueshift", c.Star.ConvectiveBlueshift, -3000, 3000, false, "must lie in [-3000, 3000] m/s"},
		{"star.systemic", c.Star.Systemic, -5e5, 5e5, false, "must lie within ±500 km/s"},
		{"activity.emergence_rate", c.Activity.EmergenceRate, 0, 20, false, "must lie in [0, 20] per day"},
		{"activity.lat_min", c.Activity.LatMin, 0, 90, false, "must lie in [0, 90] degrees"},
		{"activity.lat_max", c.Activity.LatMax, c.Activity.LatMin, 90, false, "must lie in [lat_min, 90] degrees"},
		{"activity.active_longitudes", float64(c.Activity.ActiveLongitudes), 0, 12, false, "must lie in [0, 12]"},
		{"activity.longitude_spread", c.Activity.LongitudeSpread, 0, 360, true, "must lie in (0, 360] degrees"},
		{"activity.spot_area", c.Activity.SpotArea, 0, 0.2, true, "must lie in (0, 0.2]"},
		{"activity.facula_ratio", c.Activity.FaculaRatio, 0, 50, false, "must lie in [0, 50]"},
		{"activity.lifetime", c.Activity.Lifetime, 0, 1000, true, "must be > 0 rotations"},
		{"activity.growth_fraction", c.Activity.GrowthFraction, 0, 1, true, "must lie in (0, 1)"},
		{"activity.spot_temp_diff", c.Activity.SpotTempDiff, 0, c.Star.Teff - 1000, false, "must lie in [0, teff − 1000] K"},
		{"activity.facula_contrast", c.Activity.FaculaContrast, 0, 2, false, "must lie in [0, 2]"},
		{"activity.cb_suppression", c.Activity.CBSuppression, 0, 1, false, "must lie in [0, 1]"},
		{"activity.s_quiet", c.Activity.SQuiet, 0.05, 5, false, "must lie in [0.05, 5]"},
		{"activity.s_gain", c.Activity.SGain, 0, 100, false, "must lie in [0, 100]"},
		{"observing.start", c.Observing.Start, -1e7, 1e8, false, "must be a BJD_TDB in days"},
		{"observing.end", c.Observing.End, c.Observing.Start, 1e8, true, fmt.Sprintf("must be after observing.start (%v)", c.Observing.Start)},
		{"observing.step", c.Observing.Step, 0, 1e4, false, "must lie in [0, 10000] days"},
		{"observing.season_length", c.Observing.SeasonLength, 0, 1e4, true, "must be > 0 days"},
		{"observing.clear_fraction", c.Observing.ClearFraction, 0, 1, true, "must lie in (0, 1]"},
		{"observing.weather_persistence", c.Observing.WeatherPersistence, 0, 0.999, false, "must lie in [0, 1)"},
		{"observing.time_jitter", c.Observing.TimeJitter, 0, 0.5, false, "must lie in [0, 0.5] days"},
		{"observing.max_epochs", float64(c.Observing.MaxEpochs), 0, 1e6, false, "must lie in [0, 1000000]"},
		{"observing.berv_amplitude", c.Observing.BERVAmplitude, 0, 30, false, "must lie in [0, 30] km/s"},
		{"observing.berv_phase", c.Observing.BERVPhase, -360, 360, false, "must lie in [-360, 360] degrees"},
		{"observing.night_length", c.Observing.NightLength, 0, 24, false, "must lie in [0, 24] hours"},
		{"observing.midnight", c.Observing.Midnight, 0, 0.999999, false, "must lie in [0, 1) days"},
		{"observing.max_hour_angle", c.Observing.MaxHourAngle, 0, 12, false, "must lie in [0, 12] hours"},
		{"spectrum.lambda_min", c.Spectrum.LambdaMin, 3000, 10000, false, "must lie in [3000, 10000] Å"},
		{"spectrum.lambda_max", c.Spectrum.LambdaMax, c.Spectrum.LambdaMin + 10, 11000, false, "must exceed lambda_min by 10 Å and be at most 11000 Å"},
		{"spectrum.pixels", float64(c.Spectrum.Pixels), 1000, 2e7, false, "must lie in [1000, 20000000]"},
		{"spectrum.lines", float64(c.Spectrum.Lines), 0, 1e6, false, "must lie in [0, 1000000]"},
		{"numerics.grid", float64(c.Numerics.Grid), 20, 2000, false, "must lie in [20, 2000]"},
		{"numerics.velocity_step", c.Numerics.VelocityStep, 0.001, 1, false, "must lie in [0.001, 1] km/s"},
	}
	for i, r := range c.Activity.Regions {
		k := fmt.Sprintf("activity.region[%d].", i+1)
		rows = append(rows,
			rng{k + "lat", r.Lat, -90, 90, false, "must lie in [-90, 90] degrees"},
			rng{k + "lon", r.Lon, -360, 360, false, "must lie in [-360, 360] degrees"},
			rng{k + "grow", r.Grow, 0, 1e5, false, "must be ≥ 0 days"},
			rng{k + "decay", r.Decay, 0, 1e5, false, "must be ≥ 0 days"},
			rng{k + "spot_area", r.SpotArea, 0, 1, false, "must lie in [0, 1]"},
			rng{k + "facula_area", r.FaculaArea, 0, 2, false, "must lie in [0, 2]"},
		)
	}
	for i, p := range c.Planets {
		k := fmt.Sprintf("planet[%d].", i+1)
		rows = append(rows,
			rng{k + "period", p.Period, 0, 1e6, true, "must be > 0 days"},
			rng{k + "k", p.K, 0, 1e6, false, "must be ≥ 0 m/s"},
			rng{k + "e", p.E, 0, 0.95, false, "must lie in [0, 0.95]"},
			rng{k + "omega", p.Omega, -360, 360, false, "must lie in [-360, 360] degrees"},
		)
	}
	for i, in := range c.Instruments {
		k := fmt.Sprintf("instrument[%d].", i+1)
		rows = append(rows,
			rng{k + "snr", in.SNR, 0, 1e5, true, "S/N must be > 0"},
			rng{k + "jitter", in.Jitter, 0, 1e4, false, "must be ≥ 0 m/s"},
			rng{k + "snr_scatter", in.SNRScatter, 0, 2, false, "must lie in [0, 2]"},
			rng{k + "resolution", in.Resolution, 0, 1e7, false, "must be ≥ 0"},
			rng{k + "weight", in.Weight, 0, 1e6, true, "must be > 0"},
			rng{k + "offset", in.Offset, -1e6, 1e6, false, "must lie within ±1000 km/s"},
		)
	}
	for _, r := range rows {
		v := r.v
		if math.IsNaN(v) || math.IsInf(v, 0) || v < r.lo || v > r.hi || (r.open && v == r.lo) {
			return bad(r.key, v, r.msg)
		}
	}
	if c.Observing.Start == 0 && c.Observing.End == 0 {
		return &ScenarioError{File: file, Key: "observing.end", Msg: "missing: the observations need start and end"}
	}
	if span := c.Observing.End - c.Observing.Start; span > 36525 {
		return bad("observing.end", c.Observing.End, "observations may span at most 100 years")
	} else if c.Observing.Step > 0 && span/c.Observing.Step > 1e6 {
		return bad("observing.step", c.Observing.Step, "gives more than 1000000 epochs")
	}
	if c.Observing.ClearFraction < 1 {
		// P(cloudy | clear) = (1 − c)(1 − p)/c must be a probability.
		q := (1 - c.Observing.ClearFraction) * (1 - c.Observing.WeatherPersistence) / c.Observing.ClearFraction
		if q > 1 {
			return bad("observing.weather_persistence", c.Observing.WeatherPersistence,
				fmt.Sprintf("too low for clear_fraction %v (a clear night would have to be followed by cloud more than always)", c.Observing.ClearFraction))
		}
	}
	ascii := func(key, v string) error {
		for _, r := range v {
			if r < 32 || r > 126 {
				return &ScenarioError{File: file, Key: key, Msg: fmt.Sprintf("%q: only printable ASCII goes into FITS headers", v)}
			}
		}
		if len(v) > 60 {
			return &ScenarioError{File: file, Key: key, Msg: fmt.Sprintf("%q: at most 60 characters", v)}
		}
		return nil
	}
	if err := ascii("name", c.Name); err != nil {
		return err
	}
	seen := map[string]bool{}
	for i, in := range c.Instruments {
		if err := ascii(fmt.Sprintf("instrument[%d].name", i+1), in.Name); err != nil {
			return err
		}
		k := fmt.Sprintf("instrument[%d].name", i+1)
		if strings.TrimSpace(in.Name) == "" {
			return &ScenarioError{File: file, Key: k, Msg: "missing: every instrument needs a name"}
		}
		if strings.ContainsAny(in.Name, ",\"\n\r") {
			return &ScenarioError{File: file, Key: k, Msg: fmt.Sprintf("%q: a name may not hold commas, quotes or line breaks", in.Name)}
		}
		if seen[in.Name] {
			return &ScenarioError{File: file, Key: k, Msg: fmt.Sprintf("%q: used twice", in.Name)}
		}
		seen[in.Name] = true
		if in.To != 0 && in.To <= in.From {
			return bad(fmt.Sprintf("instrument[%d].to", i+1), in.To, "must be after from")
		}
	}
	pseen := map[string]bool{}
	for i, p := range c.Planets {
		if strings.ContainsAny(p.Name, ",\"\n\r ") || pseen[p.Name] {
			return &ScenarioError{File: file, Key: fmt.Sprintf("planet[%d].name", i+1), Msg: fmt.Sprintf("%q: names must be unique, without spaces, commas or quotes", p.Name)}
		}
		pseen[p.Name] = true
	}
	return nil
}

// ParseScenario parses and checks scenario text; file names it in error
// messages. An unknown key, a value of the wrong type and every failure of
// Check are *ScenarioError values naming the key. The result has its
// defaults applied.
func ParseScenario(b []byte, file string) (*Scenario, error) {
	var sc Scenario
	md, err := toml.NewDecoder(bytes.NewReader(b)).Decode(&sc)
	if err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, &ScenarioError{File: file, Line: pe.Position.Line, Msg: pe.Message}
		}
		return nil, &ScenarioError{File: file, Msg: err.Error()}
	}
	if und := md.Undecoded(); len(und) > 0 {
		return nil, &ScenarioError{File: file, Key: keyPath(b, und[0]), Msg: "unknown key"}
	}
	sc.zeros = explicitZeros(b)
	if err := sc.Check(file); err != nil {
		return nil, err
	}
	return sc.Defaults(), nil
}

// ReadScenario reads and checks a scenario file (see ParseScenario).
func ReadScenario(path string) (*Scenario, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return ParseScenario(b, path)
}

// EncodeTOML writes sc, defaults applied and with seed as its Seed, as TOML
// that ParseScenario reads back to the same scenario. The output depends
// only on sc and seed.
func (sc *Scenario) EncodeTOML(w io.Writer, seed uint64) error {
	c := sc.Defaults()
	c.Seed = seed
	fmt.Fprintf(w, "# spotsift simulation scenario; with its seed it determines every output byte\n\n")
	return toml.NewEncoder(w).Encode(c)
}

// BVFromTeff returns the B−V colour (mag) of a main-sequence star of
// effective temperature teff (K) by inverting the black-body-based relation
// of Ballesteros (2012, EPL 97, 34008; from memory)
//
//	T = 4600 K [1/(0.92(B−V) + 1.7) + 1/(0.92(B−V) + 0.62)]
//
// by bisection on [−0.4, 2.5]. It gives 0.65 for 5778 K. Temperatures
// outside the relation's range return the nearest end of the interval.
func BVFromTeff(teff float64) float64 {
	T := func(bv float64) float64 { return 4600 * (1/(0.92*bv+1.7) + 1/(0.92*bv+0.62)) }
	lo, hi := -0.4, 2.5
	if teff >= T(lo) {
		return lo
	}
	if teff <= T(hi) {
		return hi
	}
	for i := 0; i < 60; i++ {
		mid := (lo + hi) / 2
		if T(mid) > teff {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}

// keyPath spells key as a dotted path with 1-based indices for arrays of
// tables (the decoder's key has none), e.g. "planet[2].colour".
func keyPath(b []byte, key toml.Key) string {
	var raw map[string]any
	if _, err := toml.Decode(string(b), &raw); err != nil {
		return key.String()
	}
	var parts []string
	var cur any = raw
	for i, k := range key {
		part := k
		switch m := cur.(type) {
		case map[string]any:
			cur = m[k]
		default:
			cur = nil
		}
		if arr, ok := cur.([]map[string]any); ok && i+1 < len(key) {
			for j, el := range arr {
				if _, has := el[key[i+1]]; has {
					part = fmt.Sprintf("%s[%d]", k, j+1)
					cur = el
					break
				}
			}
		}
		parts = append(parts, part)
	}
	return strings.Join(parts, ".")
}

// explicitZeros returns the dotted paths (with 1-based indices for arrays of
// tables) of every numeric key set to 0 in the TOML text b.
func explicitZeros(b []byte) map[string]bool {
	var raw map[string]any
	if _, err := toml.Decode(string(b), &raw); err != nil {
		return nil
	}
	out := map[string]bool{}
	var walk func(prefix string, m map[string]any)
	walk = func(prefix string, m map[string]any) {
		for k, v := range m {
			p := prefix + k
			switch x := v.(type) {
			case map[string]any:
				walk(p+".", x)
			case []map[string]any:
				for i, el := range x {
					walk(fmt.Sprintf("%s[%d].", p, i+1), el)
				}
			case int64:
				if x == 0 {
					out[p] = true
				}
			case float64:
				if x == 0 {
					out[p] = true
				}
			}
		}
	}
	walk("", raw)
	return out
}
