package rvgp

import (
	"fmt"
	"math"
	"sync"

	"spotsift/gp"
	"spotsift/rvfit"
)

var (
	_ rvfit.NoiseGradienter = (*Noise)(nil)
	_ rvfit.NoiseGradienter = (*MultiNoise)(nil)
)

// rotationSolver is the O(N) solver of a rotation-kernel Noise at the
// data epochs: gp.MultiRotation with one output (C = the amplitude, R =
// 0) and one series per instrument, whose jitters are the instruments'.
// It is built for the first epochs the model sees and reused while they
// are the same slices (rvfit.Model passes its own on every call).
type rotationSolver struct {
	mu   sync.Mutex
	t, v *float64
	inst *int
	n    int
	mr   *gp.MultiRotation
	idx  [][]int
}

// get returns the MultiRotation and each series' epochs for (t, variance,
// inst), or nil when an instrument has no epoch (the generic path then
// serves).
func (rs *rotationSolver) get(t, variance []float64, inst []int, nInst int) (*gp.MultiRotation, [][]int) {
	if len(t) == 0 || len(variance) != len(t) || len(inst) != len(t) {
		return nil, nil
	}
	rs.mu.Lock()
	defer rs.mu.Unlock()
	if rs.mr != nil && rs.t == &t[0] && rs.v == &variance[0] && rs.inst == &inst[0] && rs.n == len(t) {
		return rs.mr, rs.idx
	}
	series := make([]gp.Series, nInst)
	idx := make([][]int, nInst)
	for i, j := range inst {
		if j < 0 || j >= nInst {
			return nil, nil
		}
		series[j].T = append(series[j].T, t[i])
		series[j].Variance = append(series[j].Variance, variance[i])
		idx[j] = append(idx[j], i)
	}
	for _, s := range series {
		if len(s.T) == 0 {
			return nil, nil
		}
	}
	mr, err := gp.NewMultiRotation([]string{"rv"}, series)
	if err != nil {
		return nil, nil
	}
	rs.t, rs.v, rs.inst, rs.n, rs.mr, rs.idx = &t[0], &variance[0], &inst[0], len(t), mr, idx
	return mr, idx
}

// rotation returns the MultiRotation form of a RotationSHO noise model at
// params (amplitude, period, quality, gap, mix, jitters), its parameter
// vector and the residuals split per instrument; nil when the kernel is
// not a RotationSHO or the epochs do not suit.
func (n *Noise) rotation(t, resid, variance []float64, inst []int, params []float64) (*gp.MultiRotation, [][]int, []float64, [][]float64) {
	if _, ok := n.base.Kernel.(gp.RotationSHO); !ok || n.rot == nil {
		return nil, nil, nil, nil
	}
	mr, idx := n.rot.get(t, variance, inst, len(n.instrs))
	if mr == nil {
		return nil, nil, nil, nil
	}
	p := append([]float64{params[1], params[2], params[3], params[4], params[0], 0}, params[5:]...)
	r := make([][]float64, len(idx))
	for s, ii := range idx {
		r[s] = make([]float64, len(ii))
		for k, i := range ii {
			r[s][k] = resid[i]
		}
	}
	return mr, idx, p, r
}

// LogLikelihoodGrad implements rvfit.NoiseGradienter. The rotation
// kernel (gp.RotationSHO) goes through gp.MultiRotation: O(N) with the
// analytic gradient of its celerite recurrences; any other kernel
// through gp.Noise.LogLikelihoodGrad (dense, O(N³)) and a solve for
// ∂ln L/∂r = −K⁻¹r.
func (n *Noise) LogLikelihoodGrad(grad, dresid, t, resid, variance []float64, inst []int, params []float64) (float64, error) {
	m, err := n.base.WithParams(params)
	if err != nil {
		return math.Inf(-1), err
	}
	if len(grad) != len(params) || len(dresid) != len(resid) {
		return math.Inf(-1), fmt.Errorf("%w: gradient lengths %d, %d for %d parameters, %d residuals", rvfit.ErrBadParams, len(grad), len(dresid), len(params), len(resid))
	}
	if mr, idx, p, r := n.rotation(t, resid, variance, inst, params); mr != nil {
		gq := make([]float64, mr.NumParams())
		dr := make([][]float64, len(r))
		for s := range r {
			dr[s] = make([]float64, len(r[s]))
		}
		v, err := mr.LogLikelihoodGradResid(gq, dr, p, r)
		if err != nil {
			return math.Inf(-1), err
		}
		grad[0], grad[1], grad[2], grad[3], grad[4] = gq[4], gq[0], gq[1], gq[2], gq[3]
		copy(grad[5:], gq[6:])
		for s, ii := range idx {
			for k, i := range ii {
				dresid[i] = dr[s][k]
			}
		}
		return v, nil
	}
	v, err := m.LogLikelihoodGrad(grad, t, resid, variance, inst)
	if err != nil {
		return math.Inf(-1), err
	}
	sol, err := m.Factor(t, variance, inst)
	if err != nil {
		return math.Inf(-1), err
	}
	alpha, err := sol.Solve(nil, resid)
	if err != nil {
		return math.Inf(-1), err
	}
	for i, a := range alpha {
		dresid[i] = -a
	}
	return v, nil
}

// LogLikelihoodGrad implements rvfit.NoiseGradienter through
// gp.MultiRotation's analytic gradient (O(N)).
func (m *MultiNoise) LogLikelihoodGrad(grad, dresid, t, resid, variance []float64, inst []int, p []float64) (float64, error) {
	q, r, err := m.full(resid, p)
	if err != nil {
		return math.Inf(-1), err
	}
	if len(grad) != len(p) || len(dresid) != len(resid) {
		return math.Inf(-1), fmt.Errorf("%w: gradient lengths %d, %d for %d parameters, %d residuals", rvfit.ErrBadParams, len(grad), len(dresid), len(p), len(resid))
	}
	gq := make([]float64, len(q))
	dr := make([][]float64, len(r))
	for s := range r {
		dr[s] = make([]float64, len(r[s]))
	}
	v, err := m.mr.LogLikelihoodGradResid(gq, dr, q, r)
	if err != nil {
		return math.Inf(-1), err
	}
	// Undo full's layout: an index has no slope in q.
	copy(grad[:6], gq[:6])
	k, kq := 6, 6
	if m.hasInd {
		grad[k] = gq[kq]
		k, kq = k+1, kq+2
	}
	if m.hasBIS {
		grad[k], grad[k+1] = gq[kq], gq[kq+1]
		k, kq = k+2, kq+2
	}
	copy(grad[k:], gq[kq:])
	for s, idx := range m.rvIdx {
		for i, j := range idx {
			dresid[j] = dr[s][i]
		}
	}
	return v, nil
}
