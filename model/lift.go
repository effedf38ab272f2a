package model

// LiftEffect is the model's estimate of what a lift test of channel k over
// weeks [from, to] (inclusive, indices of the design) measures: the KPI
// caused inside the window by the channel's spend there,
//
//	β Σ_{t∈W} [ sat(adstock(x))_t − sat(adstock(x⁰))_t ],
//
// with x⁰ the channel's spend with the weeks of W zeroed. Carryover of the
// window's spend after the window is not counted, as an experiment that
// compares the test period only does not see it; spend before the window
// carries into it in both terms and cancels.
func (d *Design) LiftEffect(k int, cp ChannelParams, from, to int) float64 {
	if from < 0 || to >= d.N || from > to {
		panic("model: LiftEffect: window out of range")
	}
	if cp.Beta == 0 && cp.Effect == nil {
		return 0
	}
	m := d.Media(make([]float64, d.N), k, cp)
	m0 := d.withSpendZeroed(k, from, to).Media(make([]float64, d.N), k, cp)
	var s float64
	for t := from; t <= to; t++ {
		s += cp.BetaAt(t) * (m[t] - m0[t])
	}
	return s
}
