package model

import (
	"fmt"
	"math"
	"time"
)

// Scale is what gives a design's parameters their meaning beyond the spec:
// the first week of the fitted data (week 0 of the trend and the season's
// phase), the number of fitted weeks (the trend runs from 0 at the first to
// 1 at the last) and each channel's mean weekly spend (the unit of κ). A
// forecast stores it so that its parameters can be applied to later data.
type Scale struct {
	Origin    time.Time
	Weeks     int
	MeanSpend []float64
}

// ScaleOf returns the scale of d, a design built from a panel whose first
// week is origin.
func (d *Design) ScaleOf(origin time.Time) Scale {
	return Scale{Origin: origin, Weeks: d.N, MeanSpend: append([]float64(nil), d.MeanSpend...)}
}

// NewDesignScaled builds the design of panel p under a given scale instead
// of p's own, so parameters fitted on other weeks (those of sc) predict p's
// weeks: the trend and season continue from sc's origin, κ keeps sc's unit.
// p may start before or after the origin and have any length.
func NewDesignScaled(p *Panel, spec Spec, sc Scale) (*Design, error) {
	if err := spec.Validate("spec"); err != nil {
		return nil, err
	}
	if len(spec.Channels) != len(p.Channels) || len(sc.MeanSpend) != len(p.Channels) {
		panic("model: NewDesignScaled: spec, scale and panel channel counts differ")
	}
	for k, m := range sc.MeanSpend {
		if !(m > 0) || math.IsInf(m, 0) {
			return nil, fmt.Errorf("scale: mean spend of %s is %g; it must be positive", p.Channels[k], m)
		}
	}
	if sc.Weeks < 2 {
		return nil, fmt.Errorf("scale: %d fitted weeks; at least 2 are needed", sc.Weeks)
	}
	n := p.NumWeeks()
	d := &Design{Spec: spec, N: n, Spend: p.Spend, MeanSpend: append([]float64(nil), sc.MeanSpend...)}
	d.Fixed = fixedColumns(p, spec)
	// fixedColumns indexes weeks from p's start over p's length; move the
	// trend and season to sc's origin and length.
	for t := range n {
		tau := math.Round(p.Weeks[t].Sub(sc.Origin).Hours() / (24 * 7))
		c := 1
		if spec.Trend {
			d.Fixed.Set(t, c, tau/float64(sc.Weeks-1))
			c++
		}
		for h := 1; h <= spec.Harm; h++ {
			w := 2 * math.Pi * float64(h) * tau / spec.Period
			d.Fixed.Set(t, c, math.Sin(w))
			d.Fixed.Set(t, c+1, math.Cos(w))
			c += 2
		}
	}
	return d, nil
}
