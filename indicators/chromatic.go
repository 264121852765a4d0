package indicators

import (
	"fmt"
	"math"
)

// ChromaticFit is the weighted straight-line fit of per-order RVs against
// ln λ,
//
//	RV_o = α + β · ln(λ_o/λ_ref),
//
// whose slope β is the chromatic index (Zechmeister et al. 2018, A&A 609,
// A12).
type ChromaticFit struct {
	// Alpha is the RV at λ_ref and Beta the slope, in m/s and m/s per unit
	// ln λ; AlphaErr and BetaErr are their one-sigma errors.
	Alpha, Beta, AlphaErr, BetaErr float64
	// LambdaRef is the reference wavelength in Å.
	LambdaRef float64
}

// FitChromatic fits ChromaticFit by weighted least squares to RVs rv (m/s)
// with errors sigma at wavelengths lambda (Å). lambdaRef ≤ 0 chooses the
// weighted geometric mean wavelength, which makes α and β uncorrelated. It
// needs at least two points of distinct wavelength and positive errors.
func FitChromatic(lambda, rv, sigma []float64, lambdaRef float64) (ChromaticFit, error) {
	n := len(lambda)
	if len(rv) != n || len(sigma) != n {
		return ChromaticFit{}, ErrMismatch
	}
	var sw, swx float64
	for i := 0; i < n; i++ {
		if !(lambda[i] > 0) || !(sigma[i] > 0) || math.IsNaN(rv[i]) || math.IsInf(rv[i]+sigma[i], 0) {
			return ChromaticFit{}, fmt.Errorf("%w: point %d (λ %v, rv %v ± %v)", ErrBadParameter, i, lambda[i], rv[i], sigma[i])
		}
		w := 1 / (sigma[i] * sigma[i])
		sw += w
		swx += w * math.Log(lambda[i])
	}
	if n < 2 {
		return ChromaticFit{}, fmt.Errorf("%w: %d orders, need 2", ErrNoData, n)
	}
	if lambdaRef <= 0 {
		lambdaRef = math.Exp(swx / sw)
	}
	var s, sx, sxx, sy, sxy float64
	for i := 0; i < n; i++ {
		w := 1 / (sigma[i] * sigma[i])
		x := math.Log(lambda[i] / lambdaRef)
		s += w
		sx += w * x
		sxx += w * x * x
		sy += w * rv[i]
		sxy += w * x * rv[i]
	}
	det := s*sxx - sx*sx
	if !(det > 1e-300*s*sxx) {
		return ChromaticFit{}, fmt.Errorf("%w: all orders at one wavelength", ErrBadParameter)
	}
	return ChromaticFit{
		Alpha:     (sxx*sy - sx*sxy) / det,
		Beta:      (s*sxy - sx*sy) / det,
		AlphaErr:  math.Sqrt(sxx / det),
		BetaErr:   math.Sqrt(s / det),
		LambdaRef: lambdaRef,
	}, nil
}
