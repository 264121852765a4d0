package mapfit

import (
	"errors"
	"fmt"
	"math"
)

// ErrSpace reports an inconsistent Space or a point outside it.
var ErrSpace = errors.New("mapfit: bad parameter space")

// Kind is the transform between a natural parameter x and the
// unconstrained coordinate u the optimiser moves.
type Kind int

const (
	// Free: x = Scale·u, for a location parameter (an offset, a period,
	// a time) with no bounds the optimiser must respect.
	Free Kind = iota
	// Positive: x = e^u, for a scale with no upper limit.
	Positive
	// Bounded: x = Lo + (Hi − Lo)·s(u), s(u) = 1/(1 + e^(−u)), for a
	// parameter with a uniform-like prior on [Lo, Hi].
	Bounded
	// LogBounded: ln x = ln Lo + (ln Hi − ln Lo)·s(u), for a scale with a
	// log-uniform-like prior on [Lo, Hi], 0 < Lo.
	LogBounded
	// DiskPair marks the first of two consecutive parameters (h, k)
	// confined to h² + k² < Hi² (for example √e cos ω and √e sin ω with
	// e < Hi²): (h, k) = Hi·tanh(ρ)·(u1, u2)/ρ with ρ = |(u1, u2)|. The
	// second parameter's Kind is ignored.
	DiskPair
)

// Param is one coordinate of a Space. Lo and Hi bound Bounded and
// LogBounded parameters; Hi is the radius of a DiskPair; Scale (zero
// means 1) is the natural step of a Free parameter, the size of a change
// that matters: it sets the optimiser's units and the Laplace step.
type Param struct {
	Name   string
	Kind   Kind
	Lo, Hi float64
	Scale  float64
}

// Space is an ordered list of parameters with their transforms.
type Space []Param

// Validate checks bounds, scales and disk pairs.
func (s Space) Validate() error {
	for i := 0; i < len(s); i++ {
		p := s[i]
		switch p.Kind {
		case Free:
			if p.Scale < 0 || math.IsInf(p.Scale, 0) || math.IsNaN(p.Scale) {
				return fmt.Errorf("%w: parameter %q: scale %g", ErrSpace, p.Name, p.Scale)
			}
		case Positive:
		case Bounded:
			if !(p.Lo < p.Hi) || math.IsInf(p.Lo, 0) || math.IsInf(p.Hi, 0) {
				return fmt.Errorf("%w: parameter %q: bounds [%g, %g]", ErrSpace, p.Name, p.Lo, p.Hi)
			}
		case LogBounded:
			if !(p.Lo > 0 && p.Lo < p.Hi) || math.IsInf(p.Hi, 0) {
				return fmt.Errorf("%w: parameter %q: log bounds [%g, %g] (want 0 < lower < upper)", ErrSpace, p.Name, p.Lo, p.Hi)
			}
		case DiskPair:
			if i+1 >= len(s) || !(p.Hi > 0) || math.IsInf(p.Hi, 0) {
				return fmt.Errorf("%w: parameter %q: disk pair needs a following parameter and a radius > 0 (radius %g)", ErrSpace, p.Name, p.Hi)
			}
			i++
		default:
			return fmt.Errorf("%w: parameter %q: unknown kind %d", ErrSpace, p.Name, p.Kind)
		}
	}
	return nil
}

// Names returns the parameter names.
func (s Space) Names() []string {
	out := make([]string, len(s))
	for i, p := range s {
		out[i] = p.Name
	}
	return out
}

func sigmoid(u float64) float64 {
	if u >= 0 {
		return 1 / (1 + math.Exp(-u))
	}
	e := math.Exp(u)
	return e / (1 + e)
}

func logit(s float64) float64 { return math.Log(s) - math.Log1p(-s) }

func (p Param) scale() float64 {
	if p.Scale > 0 {
		return p.Scale
	}
	return 1
}

// ToX maps u to the natural parameters, into dst (allocated when nil).
func (s Space) ToX(dst, u []float64) []float64 {
	if dst == nil {
		dst = make([]float64, len(s))
	}
	for i := 0; i < len(s); i++ {
		p := s[i]
		switch p.Kind {
		case Free:
			dst[i] = p.scale() * u[i]
		case Positive:
			dst[i] = math.Exp(u[i])
		case Bounded:
			dst[i] = p.Lo + (p.Hi-p.Lo)*sigmoid(u[i])
		case LogBounded:
			dst[i] = math.Exp(math.Log(p.Lo) + math.Log(p.Hi/p.Lo)*sigmoid(u[i]))
		case DiskPair:
			rho := math.Hypot(u[i], u[i+1])
			f := p.Hi // lim tanh(ρ)/ρ = 1
			if rho > 1e-8 {
				f = p.Hi * math.Tanh(rho) / rho
			}
			dst[i], dst[i+1] = f*u[i], f*u[i+1]
			i++
		}
	}
	return dst
}

// ToU maps natural parameters x to u. A value on or outside a bound is
// first moved inside by a small fraction of the range (1e-9); NaN or an
// infinite value is an error.
func (s Space) ToU(dst, x []float64) ([]float64, error) {
	if len(x) != len(s) {
		return nil, fmt.Errorf("%w: %d values for %d parameters", ErrSpace, len(x), len(s))
	}
	if dst == nil {
		dst = make([]float64, len(s))
	}
	const eps = 1e-9
	clamp := func(v float64) float64 { return math.Min(1-eps, math.Max(eps, v)) }
	for i := 0; i < len(s); i++ {
		p := s[i]
		if math.IsNaN(x[i]) || math.IsInf(x[i], 0) {
			return nil, fmt.Errorf("%w: parameter %q = %g", ErrSpace, p.Name, x[i])
		}
		switch p.Kind {
		case Free:
			dst[i] = x[i] / p.scale()
		case Positive:
			dst[i] = math.Log(math.Max(x[i], 1e-300))
		case Bounded:
			dst[i] = logit(clamp((x[i] - p.Lo) / (p.Hi - p.Lo)))
		case LogBounded:
			v := math.Max(x[i], 1e-300)
			dst[i] = logit(clamp(math.Log(v/p.Lo) / math.Log(p.Hi/p.Lo)))
		case DiskPair:
			if math.IsNaN(x[i+1]) || math.IsInf(x[i+1], 0) {
				return nil, fmt.Errorf("%w: parameter %q = %g", ErrSpace, s[i+1].Name, x[i+1])
			}
			r := math.Hypot(x[i], x[i+1])
			if r < 1e-12 {
				dst[i], dst[i+1] = x[i]/p.Hi, x[i+1]/p.Hi
			} else {
				q := clamp(r / p.Hi)
				rho := math.Atanh(q)
				dst[i], dst[i+1] = rho*x[i]/r, rho*x[i+1]/r
			}
			i++
		}
	}
	return dst, nil
}

// jacobian returns dx/du at u as a dense row-major d×d matrix (block
// diagonal) and ln |det dx/du|.
func (s Space) jacobian(u []float64) ([]float64, float64) {
	d := len(s)
	J := make([]float64, d*d)
	logdet := 0.0
	for i := 0; i < d; i++ {
		p := s[i]
		switch p.Kind {
		case Free:
			J[i*d+i] = p.scale()
			logdet += math.Log(p.scale())
		case Positive:
			J[i*d+i] = math.Exp(u[i])
			logdet += u[i]
		case Bounded:
			sg := sigmoid(u[i])
			J[i*d+i] = (p.Hi - p.Lo) * sg * (1 - sg)
			logdet += math.Log(p.Hi-p.Lo) + logSigmoid(u[i]) + logSigmoid(-u[i])
		case LogBounded:
			sg := sigmoid(u[i])
			b := math.Log(p.Hi / p.Lo)
			lx := math.Log(p.Lo) + b*sg
			J[i*d+i] = math.Exp(lx) * b * sg * (1 - sg)
			logdet += lx + math.Log(b) + logSigmoid(u[i]) + logSigmoid(-u[i])
		case DiskPair:
			u1, u2 := u[i], u[i+1]
			rho := math.Hypot(u1, u2)
			R := p.Hi
			var f, fp float64 // f = R tanh ρ/ρ, fp = df/dρ / ρ
			if rho < 1e-4 {
				// tanh ρ/ρ = 1 − ρ²/3 + …: f' /ρ → −2R/3.
				f = R * (1 - rho*rho/3)
				fp = -2 * R / 3
			} else {
				th := math.Tanh(rho)
				f = R * th / rho
				fp = R * ((1-th*th)/rho - th/(rho*rho)) / rho
			}
			// x = f(ρ) u, ∂x_a/∂u_b = f δ_ab + (f'/ρ) u_a u_b.
			J[i*d+i] = f + fp*u1*u1
			J[i*d+i+1] = fp * u1 * u2
			J[(i+1)*d+i] = fp * u1 * u2
			J[(i+1)*d+i+1] = f + fp*u2*u2
			// det = f (f + ρ f') = R tanh ρ/ρ · R sech² ρ.
			if rho < 1e-4 {
				logdet += 2*math.Log(R) - 4*rho*rho/3
			} else {
				th := math.Tanh(rho)
				logdet += 2*math.Log(R) + math.Log(th/rho) + math.Log1p(-th*th)
			}
			i++
		}
	}
	return J, logdet
}

// logSigmoid returns ln s(u) without overflow.
func logSigmoid(u float64) float64 {
	if u >= 0 {
		return -math.Log1p(math.Exp(-u))
	}
	return u - math.Log1p(math.Exp(u))
}

// Bound says whether a parameter sits on a bound of its support.
type Bound string

const (
	// Inside means the parameter is away from its bounds.
	Inside Bound = ""
	// AtLower means the parameter is within 1e-4 of its range of the
	// lower bound (in ln x for LogBounded, in the radius for a disk).
	AtLower Bound = "lower bound"
	// AtUpper is the same for the upper bound (the rim of a disk).
	AtUpper Bound = "upper bound"
)

// boundTol is the fraction of a parameter's range within which it counts
// as at a bound: a logistic coordinate |u| ≥ 9.2 (common practice for
// reporting; far beyond any start).
const boundTol = 1e-4

// AtBound returns, for each parameter, whether x sits on a bound.
func (s Space) AtBound(x []float64) []Bound {
	out := make([]Bound, len(s))
	for i := 0; i < len(s); i++ {
		p := s[i]
		var f float64
		switch p.Kind {
		case Bounded:
			f = (x[i] - p.Lo) / (p.Hi - p.Lo)
		case LogBounded:
			f = math.Log(x[i]/p.Lo) / math.Log(p.Hi/p.Lo)
		case DiskPair:
			if r := math.Hypot(x[i], x[i+1]) / p.Hi; r >= 1-boundTol {
				out[i], out[i+1] = AtUpper, AtUpper
			}
			i++
			continue
		default:
			continue
		}
		switch {
		case f <= boundTol:
			out[i] = AtLower
		case f >= 1-boundTol:
			out[i] = AtUpper
		}
	}
	return out
}

// logScale returns Σ ln x_i over the scale parameters (Positive and
// LogBounded): the log Jacobian from x to ln x.
func (s Space) logScale(x []float64) float64 {
	v := 0.0
	for i, q := range s {
		if q.Kind == Positive || q.Kind == LogBounded {
			v += math.Log(x[i])
		}
	}
	return v
}
