package rvfit

import (
	"math"
)

// NoiseGradienter is implemented by noise models that give the gradient
// of their log-likelihood: LogLikelihoodGrad takes LogLikelihood's
// arguments, stores ∂ln L/∂params in grad and ∂ln L/∂resid_i in dresid
// (for a Gaussian likelihood −(C⁻¹ r)_i), and returns ln L. With it,
// FitModel's optimiser and Laplace step use the analytic gradient of the
// whole posterior (Model.LogPosteriorGrad) instead of finite differences.
type NoiseGradienter interface {
	LogLikelihoodGrad(grad, dresid, t, resid, variance []float64, inst []int, params []float64) (float64, error)
}

// PriorGradienter is implemented by priors that give d ln p/dx inside
// their support.
type PriorGradienter interface {
	LogProbDeriv(x float64) float64
}

var (
	_ NoiseGradienter = (*WhiteNoise)(nil)
	_ PriorGradienter = Uniform{}
	_ PriorGradienter = LogUniform{}
	_ PriorGradienter = Gaussian{}
	_ PriorGradienter = TruncatedGaussian{}
	_ PriorGradienter = Beta{}
)

// LogProbDeriv returns 0 (the density is flat).
func (u Uniform) LogProbDeriv(x float64) float64 { return 0 }

// LogProbDeriv returns −1/x.
func (u LogUniform) LogProbDeriv(x float64) float64 { return -1 / x }

// LogProbDeriv returns −(x − μ)/σ².
func (g Gaussian) LogProbDeriv(x float64) float64 { return -(x - g.Mu) / (g.Sigma * g.Sigma) }

// LogProbDeriv returns −(x − μ)/σ² (the normalisation does not depend on x).
func (g TruncatedGaussian) LogProbDeriv(x float64) float64 {
	return -(x - g.Mu) / (g.Sigma * g.Sigma)
}

// LogProbDeriv returns (A − 1)/x − (B − 1)/(1 − x).
func (b Beta) LogProbDeriv(x float64) float64 { return (b.A-1)/x - (b.B-1)/(1-x) }

// LogLikelihoodGrad implements NoiseGradienter:
// ∂ln L/∂r_i = −r_i/v_i and ∂ln L/∂s_j = Σ_{i∈j} s_j (r_i²/v_i² − 1/v_i),
// v_i = σ_i² + s_j².
func (w *WhiteNoise) LogLikelihoodGrad(grad, dresid, t, resid, variance []float64, inst []int, params []float64) (float64, error) {
	v, err := w.LogLikelihood(t, resid, variance, inst, params)
	if err != nil {
		return v, err
	}
	for j := range grad {
		grad[j] = 0
	}
	for i, r := range resid {
		s := params[inst[i]]
		vi := variance[i] + s*s
		dresid[i] = -r / vi
		grad[inst[i]] += s * (r*r/(vi*vi) - 1/vi)
	}
	return v, nil
}

// HasGradient reports whether the model's posterior has an analytic
// gradient (LogPosteriorGrad): its noise model implements
// NoiseGradienter and every prior PriorGradienter.
func (m *Model) HasGradient() bool {
	if _, ok := m.noise.(NoiseGradienter); !ok {
		return false
	}
	if _, ok := m.ecc.(PriorGradienter); !ok {
		return false
	}
	for _, p := range m.priors {
		if _, ok := p.(PriorGradienter); p != nil && !ok {
			return false
		}
	}
	return true
}

// LogPosteriorGrad returns ln π(θ) + ln L(θ), as LogPosterior, and stores
// its gradient with respect to θ in grad (nil θ-length slice allowed: then
// only the value). It needs HasGradient; otherwise, or where the posterior
// vanishes, it returns −Inf with grad zeroed.
//
// The Keplerian derivatives follow from v = K[cos(ν + ω) + e cos ω] with
// M = 2π(t − t_c)/P + M_c(e, ω), M_c the mean anomaly at conjunction
// (ν_c = π/2 − ω):
//
//	dν/dM = (1 + e cos ν)²/(1 − e²)^(3/2),
//	∂ν/∂e|_M = sin ν (2 + e cos ν)/(1 − e²),
//	∂M_c/∂ω = −(1 − e²)^(3/2)/(1 + e cos ν_c)²,
//	∂M_c/∂e = −sin ν_c (2 + e cos ν_c) √(1 − e²)/(1 + e cos ν_c)²,
//
// then (√e cos ω, √e sin ω) by the chain rule (e = h² + k², ω =
// atan2(k, h)); the residuals' part comes from the noise model's
// ∂ln L/∂r (standard results of Keplerian motion, e.g. Murray & Dermott
// 1999, Solar System Dynamics, ch. 2, from memory).
func (m *Model) LogPosteriorGrad(grad, theta []float64) float64 {
	for i := range grad {
		grad[i] = 0
	}
	ng, ok := m.noise.(NoiseGradienter)
	if !ok || len(theta) != len(m.names) {
		return math.Inf(-1)
	}
	lp := m.LogPrior(theta)
	if math.IsInf(lp, -1) || math.IsNaN(lp) {
		return math.Inf(-1)
	}
	for p := 0; p < m.nPlanets; p++ {
		q := theta[5*p : 5*p+5]
		if !(q[0] > 0) || !(q[2]*q[2]+q[3]*q[3] < 1) {
			return math.Inf(-1)
		}
	}
	n := len(m.t)
	r := m.Residuals(theta)
	ns := m.noiseStart()
	dr := make([]float64, n)
	ll, err := ng.LogLikelihoodGrad(grad[ns:], dr, m.t, r, m.v, m.inst, theta[ns:])
	if err != nil || math.IsNaN(ll) || math.IsInf(ll, 0) {
		for i := range grad {
			grad[i] = 0
		}
		return math.Inf(-1)
	}
	// The residual is y − prediction: ∂ln L/∂(prediction) = −dr.
	base := 5 * m.nPlanets
	for i := range dr {
		g := -dr[i]
		grad[base+m.inst[i]] += g
		if m.trend > 0 {
			x := m.t[i] - m.tmid
			grad[base+len(m.instr)] += g * x
			if m.trend > 1 {
				grad[base+len(m.instr)+1] += g * x * x
			}
		}
	}
	for p := 0; p < m.nPlanets; p++ {
		m.keplerGrad(grad[5*p:5*p+5], theta[5*p:5*p+5], dr)
	}
	// The prior's gradient.
	for p := 0; p < m.nPlanets; p++ {
		q := theta[5*p : 5*p+5]
		e := q[2]*q[2] + q[3]*q[3]
		de := m.ecc.(PriorGradienter).LogProbDeriv(e)
		grad[5*p+2] += de * 2 * q[2]
		grad[5*p+3] += de * 2 * q[3]
		if m.tcFree[p] {
			grad[5*p] -= 1 / q[0]
		}
	}
	for i, pr := range m.priors {
		if pr != nil {
			grad[i] += pr.(PriorGradienter).LogProbDeriv(theta[i])
		}
	}
	return lp + ll
}

// keplerGrad adds to g (5 values) Σ_i w_i ∂v_i/∂q with w = −dr, v the
// Keplerian of q = (P, K, √e cos ω, √e sin ω, t_c) at the data epochs.
func (m *Model) keplerGrad(g, q, dr []float64) {
	P, K, h, k, tc := q[0], q[1], q[2], q[3], q[4]
	e := h*h + k*k
	if e < 1e-24 {
		// ω is undefined at e = 0 but v is smooth in (h, k): take the
		// limit along h (the derivatives are continuous there).
		h, e = 1e-12, 1e-24
	}
	omega := math.Atan2(k, h)
	sw, cw := math.Sincos(omega)
	beta := math.Sqrt(1 - e*e)
	b3 := beta * beta * beta
	// Conjunction: ν_c = π/2 − ω.
	nuc := math.Pi/2 - omega
	snc, cnc := math.Sincos(nuc)
	dc := 1 + e*cnc
	mc := conjunctionMeanAnomaly(e, omega)
	dMcdw := -b3 / (dc * dc)
	dMcde := -snc * (2 + e*cnc) * beta / (dc * dc)
	n := 2 * math.Pi / P
	var gP, gK, ge, gw, gtc float64
	var mb, sb, cb [256]float64
	for lo := 0; lo < len(m.t); lo += len(mb) {
		hi := min(lo+len(mb), len(m.t))
		M, sE, cE := mb[:hi-lo], sb[:hi-lo], cb[:hi-lo]
		for i := range M {
			M[i] = n*(m.t[lo+i]-tc) + mc
		}
		keplerBatch(M, sE, cE, M, e)
		for i := range M {
			w := -dr[lo+i]
			den := 1 - e*cE[i]
			cn := (cE[i] - e) / den
			sn := beta * sE[i] / den
			// cos(ν + ω), sin(ν + ω)
			cnw := cn*cw - sn*sw
			snw := sn*cw + cn*sw
			f := cnw + e*cw
			dvdnu := -K * snw
			dnudM := (1 + e*cn) * (1 + e*cn) / b3
			dnude := sn * (2 + e*cn) / (beta * beta)
			dMdP := -n * (m.t[lo+i] - tc) / P
			gK += w * f
			gP += w * dvdnu * dnudM * dMdP
			gtc += w * dvdnu * dnudM * (-n)
			ge += w * (K*cw + dvdnu*(dnudM*dMcde+dnude))
			gw += w * (-K*(snw+e*sw) + dvdnu*dnudM*dMcdw)
		}
	}
	// (e, ω) → (h, k): ∂e/∂h = 2h, ∂e/∂k = 2k, ∂ω/∂h = −k/e, ∂ω/∂k = h/e.
	g[0] += gP
	g[1] += gK
	g[2] += ge*2*h - gw*k/e
	g[3] += ge*2*k + gw*h/e
	g[4] += gtc
}

// wrappedLogPosteriorGrad is LogPosteriorGrad with each free t_c wrapped
// into its window first: the wrap t_c' = t_c − jP (j an integer, constant
// where it is differentiable) adds −j ∂/∂t_c' to ∂/∂P.
func (m *Model) wrappedLogPosteriorGrad(grad, theta []float64) float64 {
	th := m.wrap(theta)
	v := m.LogPosteriorGrad(grad, th)
	for p := 0; p < m.nPlanets; p++ {
		if m.tcFree[p] && theta[5*p] > 0 {
			j := math.Round((theta[5*p+4] - th[5*p+4]) / theta[5*p])
			grad[5*p] -= j * grad[5*p+4]
		}
	}
	return v
}
