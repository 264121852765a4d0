package gp

import "math"

func expNeg(x float64) float64 { return math.Exp(-x) }

func sincos(x float64) (s, c float64) { return math.Sincos(x) }

func nan() float64 { return math.NaN() }
