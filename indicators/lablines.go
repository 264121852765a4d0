package indicators

// LabLine is a laboratory wavelength of a strong stellar absorption line.
type LabLine struct {
	// Species names the atom or ion, e.g. "Fe I".
	Species string
	// Air is the wavelength in standard air, Å.
	Air float64
}

// LabLines lists strong absorption lines of FGKM stars between 3800 and
// 6700 Å with their laboratory wavelengths in standard air (Å), used by
// BuildMask to give a self-built mask an absolute zero point.
//
// Source: the NIST Atomic Spectra Database and the solar line identifications
// of Moore, Minnaert & Houtgast 1966 (The Solar Spectrum 2935 Å to 8770 Å,
// NBS Monograph 61). Every value here is FROM MEMORY of those tables, not
// copied from them: each is believed good to about 0.01 Å (0.5–0.8 km/s);
// errors of that size average out over the tens of lines a spectrum
// matches, and the velocity found also carries the star's convective
// blueshift and gravitational redshift (a few hundred m/s), so an absolute
// velocity from this list is good to about 0.5 km/s, not better. The
// Balmer lines and Ca II H and K are broad; they take part in the match
// like the others.
var LabLines = []LabLine{
	{"Fe I", 3820.425}, {"Fe I", 3859.911}, {"Si I", 3905.523},
	{"Ca II", 3933.663}, {"Al I", 3944.006}, {"Al I", 3961.520}, {"Ca II", 3968.468},
	{"Mn I", 4030.753}, {"Mn I", 4033.062}, {"Mn I", 4034.483},
	{"Fe I", 4045.812}, {"Fe I", 4063.594}, {"Fe I", 4071.738}, {"Sr II", 4077.709},
	{"H I", 4101.734}, {"Fe I", 4132.058}, {"Fe I", 4143.868}, {"Fe I", 4202.029},
	{"Sr II", 4215.519}, {"Ca I", 4226.728}, {"Fe II", 4233.172}, {"Fe I", 4250.787},
	{"Cr I", 4254.332}, {"Fe I", 4260.474}, {"Fe I", 4271.760}, {"Cr I", 4274.796},
	{"Ca I", 4283.011}, {"Ca I", 4289.367}, {"Cr I", 4289.716}, {"Ca I", 4302.528},
	{"Fe I", 4307.902}, {"Ca I", 4318.652}, {"Fe I", 4325.762}, {"H I", 4340.462},
	{"Fe I", 4383.545}, {"Fe I", 4404.750}, {"Fe I", 4415.122}, {"Ca I", 4425.437},
	{"Ca I", 4434.957}, {"Ca I", 4435.679}, {"Ti II", 4443.794}, {"Ca I", 4454.779},
	{"Ti II", 4468.507}, {"Ti II", 4501.270}, {"Fe I", 4528.614}, {"Ba II", 4554.029},
	{"Ti II", 4563.757}, {"Ti II", 4571.971}, {"Mg I", 4702.991}, {"H I", 4861.323},
	{"Fe I", 4890.755}, {"Fe I", 4891.492}, {"Fe I", 4920.502}, {"Fe II", 4923.927},
	{"Fe I", 4957.597}, {"Fe II", 5018.440}, {"Mg I", 5167.321}, {"Fe II", 5169.033},
	{"Mg I", 5172.684}, {"Mg I", 5183.604}, {"Fe II", 5197.577}, {"Cr I", 5204.506},
	{"Cr I", 5206.038}, {"Cr I", 5208.419}, {"Fe I", 5227.189}, {"Fe I", 5232.940},
	{"Fe II", 5234.625}, {"Fe I", 5269.537}, {"Fe II", 5316.615}, {"Fe I", 5328.039},
	{"Fe I", 5371.490}, {"Fe I", 5397.128}, {"Fe I", 5405.775}, {"Fe I", 5429.697},
	{"Fe I", 5434.524}, {"Fe I", 5446.917}, {"Fe I", 5455.609}, {"Ni I", 5476.904},
	{"Mg I", 5528.405}, {"Fe I", 5569.618}, {"Fe I", 5572.842}, {"Fe I", 5586.756},
	{"Ca I", 5588.749}, {"Fe I", 5615.644}, {"Ba II", 5853.668}, {"Ca I", 5857.451},
	{"Na I", 5889.951}, {"Na I", 5895.924}, {"Ca I", 6102.723}, {"Ca I", 6122.217},
	{"Fe I", 6136.615}, {"Fe I", 6137.692}, {"Ba II", 6141.713}, {"Ca I", 6162.173},
	{"Fe I", 6191.558}, {"Fe I", 6230.723}, {"Fe I", 6252.555}, {"Fe I", 6393.601},
	{"Fe I", 6400.001}, {"Fe I", 6421.351}, {"Fe I", 6430.846}, {"Ca I", 6439.075},
	{"Ca I", 6449.808}, {"Ca I", 6493.781}, {"Fe I", 6494.980}, {"Ba II", 6496.897},
	{"H I", 6562.797}, {"Fe I", 6592.914}, {"Fe I", 6677.987},
}
