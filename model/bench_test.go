package model

import (
	"fmt"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// benchWorld returns a simulated panel of n weeks and k channels.
func benchWorld(b *testing.B, n, k int) (*Design, []float64) {
	b.Helper()
	tr := &Truth{Seed: 5, Weeks: n, Intercept: 300000, Trend: 20000, Season: 0.08, NoiseSD: 0.05}
	for i := range k {
		c := TrueChannel{Name: fmt.Sprintf("ch%02d", i), MeanSpend: 10000 + 2000*float64(i), Variation: 0.6,
			Dark: 0.1, Decay: 0.1 + 0.05*float64(i%8), HalfSat: 0.8 + 0.2*float64(i%5), Shape: 1 + 0.15*float64(i%4),
			Beta: 60000}
		tr.Channels = append(tr.Channels, c)
	}
	tr.Controls = []TrueControl{{Name: "price", Mean: 1, SD: 0.04, AR: 0.8, Coef: -50000}, {Name: "promo", OnShare: 0.15, Coef: 20000}}
	sim, err := Simulate(tr)
	if err != nil {
		b.Fatal(err)
	}
	d, err := NewDesign(sim.Panel, tr.Spec())
	if err != nil {
		b.Fatal(err)
	}
	return d, sim.Panel.KPI
}

// BenchmarkFit is a full multi-start fit (6 starts, one worker).
func BenchmarkFit(b *testing.B) {
	for _, sz := range []struct{ n, k int }{{156, 6}, {312, 12}} {
		b.Run(fmt.Sprintf("%dx%d", sz.n, sz.k), func(b *testing.B) {
			d, y := benchWorld(b, sz.n, sz.k)
			b.ResetTimer()
			for range b.N {
				if _, err := d.Fit(y, FitSettings{Seed: 1, Workers: 1}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkEvaluate is one objective evaluation (transforms, projection,
// NNLS) against BenchmarkFullQR, a QR solve of the same full design matrix.
func BenchmarkEvaluate(b *testing.B) {
	d, y := benchWorld(b, 156, 6)
	w := newWorkspace(d, y)
	lo, hi := d.bounds()
	th := make([]float64, len(lo))
	for j := range th {
		th[j] = (lo[j] + hi[j]) / 2
	}
	b.ResetTimer()
	for range b.N {
		if _, err := w.solver.Evaluate(th); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkFullQR(b *testing.B) {
	d, y := benchWorld(b, 156, 6)
	p := d.Spec.NumFixed()
	k := len(d.Spec.Channels)
	a := mat.NewDense(d.N, p+k, nil)
	m := make([]float64, d.N)
	for j := range p {
		for t := range d.N {
			a.Set(t, j, d.Fixed.At(t, j))
		}
	}
	for c := range k {
		d.Media(m, c, ChannelParams{Decay: 0.4, HalfSat: 1, Shape: 1.5})
		a.SetCol(p+c, m)
	}
	yv := mat.NewVecDense(d.N, y)
	b.ResetTimer()
	for range b.N {
		var qr mat.QR
		qr.Factorize(a)
		var x mat.VecDense
		if err := qr.SolveVecTo(&x, false, yv); err != nil {
			b.Fatal(err)
		}
	}
}
