package indicators

// VacuumToAir converts a vacuum wavelength in Å to air with the IAU standard
// formula for dry air at 15 °C, 101 325 Pa and 450 ppm CO₂ (Morton 2000,
// ApJS 130, 403, after Birch & Downs 1994, Metrologia 31, 315):
//
//	s = 10⁴/λ_vac  (µm⁻¹)
//	n = 1 + 8.34254e-5 + 2.406147e-2/(130 − s²) + 1.5998e-4/(38.9 − s²)
//	λ_air = λ_vac / n
//
// Wavelengths below 2000 Å are returned unchanged, by the convention that
// they are always given in vacuum.
func VacuumToAir(lambda float64) float64 {
	if lambda < 2000 {
		return lambda
	}
	s := 1e4 / lambda
	s2 := s * s
	n := 1 + 8.34254e-5 + 2.406147e-2/(130-s2) + 1.5998e-4/(38.9-s2)
	return lambda / n
}

// AirToVacuum converts an air wavelength in Å to vacuum with the inverse fit
// of N. Piskunov to the Morton (2000) formula (as published on the VALD
// documentation pages, from memory of its origin):
//
//	s = 10⁴/λ_air  (µm⁻¹)
//	n = 1 + 8.336624212083e-5 + 2.408926869968e-2/(130.1065924522 − s²)
//	      + 1.599740894897e-4/(38.92568793293 − s²)
//	λ_vac = λ_air · n
//
// It inverts VacuumToAir to better than 1e-5 Å above 2000 Å. Wavelengths
// below 2000 Å are returned unchanged.
func AirToVacuum(lambda float64) float64 {
	if lambda < 2000 {
		return lambda
	}
	s := 1e4 / lambda
	s2 := s * s
	n := 1 + 8.336624212083e-5 + 2.408926869968e-2/(130.1065924522-s2) + 1.599740894897e-4/(38.92568793293-s2)
	return lambda * n
}

// ToVacuum returns a copy of s with vacuum wavelengths (converted with
// AirToVacuum when s is in air).
func ToVacuum(s *Spectrum) *Spectrum {
	c := s.Clone()
	if !c.Vacuum {
		for o := range c.Orders {
			for i, w := range c.Orders[o].Wavelength {
				c.Orders[o].Wavelength[i] = AirToVacuum(w)
			}
		}
		c.Vacuum = true
	}
	return c
}

// ToAir returns a copy of s with air wavelengths (converted with
// VacuumToAir when s is in vacuum).
func ToAir(s *Spectrum) *Spectrum {
	c := s.Clone()
	if c.Vacuum {
		for o := range c.Orders {
			for i, w := range c.Orders[o].Wavelength {
				c.Orders[o].Wavelength[i] = VacuumToAir(w)
			}
		}
		c.Vacuum = false
	}
	return c
}

// onScale converts a wavelength λ given on the air (vacuum=false) or vacuum
// scale to the scale wantVacuum.
func onScale(lambda float64, vacuum, wantVacuum bool) float64 {
	switch {
	case vacuum == wantVacuum:
		return lambda
	case wantVacuum:
		return AirToVacuum(lambda)
	default:
		return VacuumToAir(lambda)
	}
}
