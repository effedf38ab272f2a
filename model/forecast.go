package model

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// Forecast returns the modelled KPI for the h weeks after the data when
// channel k spends plan[k] per week and control j stands at controls[j]
// (nil: the mean of the last CurrentWeeks weeks). The base continues the
// fitted trend and season; adstock carries over from the history.
func (d *Design) Forecast(p Params, plan, controls []float64, h int) []float64 {
	n := d.N
	ext := &Design{Spec: d.Spec, N: n + h, MeanSpend: d.MeanSpend, TrendScale: d.TrendScale, Spend: make([][]float64, len(d.Spend))}
	for k, x := range d.Spend {
		e := make([]float64, n+h)
		copy(e, x)
		for t := n; t < n+h; t++ {
			e[t] = plan[k]
		}
		ext.Spend[k] = e
	}
	if controls == nil {
		controls = d.recentControls()
	}
	ext.Fixed = d.extendFixed(controls, h)
	return ext.Predict(p)[n:]
}

// recentControls is each control's mean over the last CurrentWeeks weeks.
func (d *Design) recentControls() []float64 {
	nc := len(d.Spec.Controls)
	out := make([]float64, nc)
	first := d.Spec.NumFixed() - nc
	w := min(CurrentWeeks, d.N)
	for j := range nc {
		var s float64
		for t := d.N - w; t < d.N; t++ {
			s += d.Fixed.At(t, first+j)
		}
		out[j] = s / float64(w)
	}
	return out
}

// extendFixed continues the fixed columns h weeks past the data with the
// same trend scale and season phase, controls held at the given values.
func (d *Design) extendFixed(controls []float64, h int) *mat.Dense {
	n, p := d.N, d.Spec.NumFixed()
	f := mat.NewDense(n+h, p, nil)
	f.Slice(0, n, 0, p).(*mat.Dense).Copy(d.Fixed)
	for t := n; t < n+h; t++ {
		c := 0
		f.Set(t, c, 1)
		c++
		if d.Spec.Trend {
			f.Set(t, c, float64(t)/d.TrendScale)
			c++
		}
		for k := 1; k <= d.Spec.Harm; k++ {
			w := 2 * math.Pi * float64(k) * float64(t) / d.Spec.Period
			f.Set(t, c, math.Sin(w))
			f.Set(t, c+1, math.Cos(w))
			c += 2
		}
		for _, v := range controls {
			f.Set(t, c, v)
			c++
		}
	}
	return f
}
