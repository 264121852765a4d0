package indicators

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestPropagateExact compares the error propagation through the CCF with a
// brute-force Jacobian: the CCF is linear in the fluxes, so perturbing one
// pixel by one electron gives the exact column ∂CCF/∂F_x.
func TestPropagateExact(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	st := newSynthStar(rng, 5000, 5030, 2e-6, 12, 1e4)
	s := addNoise(st.spectrum(500), rng)
	c, err := ComputeCCF(s, st.mask(), &CCFOptions{Search: -1, Center: 0, HalfWidth: 10e3, Step: 250, Chunks: 3})
	if err != nil {
		t.Fatal(err)
	}
	p := c.plan
	nk := len(c.V)
	g := make([][]float64, propQ)
	for q := range g {
		g[q] = make([]float64, nk)
		for k := range g[q] {
			g[q][k] = rng.NormFloat64()
		}
	}
	sg := make([][]float64, len(c.Segments))
	for i := range sg {
		sg[i] = make([]float64, nk)
		for k := range sg[i] {
			sg[i][k] = rng.NormFloat64()
		}
	}
	vq, vs := p.propagate(g, sg)
	// The serial walk gives the same bits.
	p.serial, p.cov = true, nil
	vq1, vs1 := p.propagate(g, sg)
	p.serial = false
	for q := range vq {
		if vq1[q] != vq[q] {
			t.Errorf("quantity %d: serial %v, parallel %v", q, vq1[q], vq[q])
		}
	}
	for i := range vs {
		if vs1[i] != vs[i] {
			t.Errorf("segment %d: serial %v, parallel %v", i, vs1[i], vs[i])
		}
	}
	want := make([]float64, propQ)
	wantS := make([]float64, len(sg))
	o := &p.orders[0]
	for x := range o.flux {
		orig := o.flux[x]
		o.flux[x] = orig + 1
		c1 := p.run(false)
		o.flux[x] = orig
		c0 := p.run(false)
		for q := range g {
			var d float64
			for k := 0; k < nk; k++ {
				d += g[q][k] * (c1.Value[k] - c0.Value[k])
			}
			want[q] += o.sig2(x) * d * d
		}
		for si := range sg {
			var d float64
			for k := 0; k < nk; k++ {
				d += sg[si][k] * (c1.Segments[si].Value[k] - c0.Segments[si].Value[k])
			}
			wantS[si] += o.sig2(x) * d * d
		}
	}
	for q := range want {
		if math.Abs(vq[q]/want[q]-1) > 1e-6 {
			t.Errorf("quantity %d: variance %.10g, brute force %.10g", q, vq[q], want[q])
		}
	}
	for si := range wantS {
		if math.Abs(vs[si]/wantS[si]-1) > 1e-6 {
			t.Errorf("segment %d: variance %.10g, brute force %.10g", si, vs[si], wantS[si])
		}
	}
}
