// Package mapfit is spotsift's one fitting layer: maximum a posteriori
// (MAP) fits through gonum/optimize in transformed coordinates, from
// several starts whose agreement is checked, and the Laplace
// approximation (errors and evidence) at the optimum.
//
// A fit is described by a Space — one Param per coordinate, each with a
// transform that maps the whole real line onto its support (a logarithm
// for scales, a logistic map for bounded parameters, a disk map for a pair
// such as (√e cos ω, √e sin ω)) — and a log-posterior in the natural
// parameters. The optimiser never meets a bound: a parameter whose
// optimum lies on one is driven towards infinity in its transformed
// coordinate, and the result flags it (AtBound).
//
// Unknown numbers are NaN: an error the curvature cannot give, an
// evidence when the Hessian is not positive definite.
package mapfit
