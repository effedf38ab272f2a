package model

import "testing"

// Support sums each 4-week window afresh (exact, no running sum): on a long,
// wide panel (260 weeks × 16 channels) it must stay far below a fit's cost.
func BenchmarkSupport(b *testing.B) {
	d, _ := benchWorld(b, 260, 16)
	b.ResetTimer()
	for b.Loop() {
		d.Support()
	}
}

// Identify on the same panel (one media pass per channel).
func BenchmarkIdentify(b *testing.B) {
	d, _ := benchWorld(b, 260, 16)
	p := Params{}
	for range d.Spec.Channels {
		p.Channels = append(p.Channels, ChannelParams{Decay: 0.4, HalfSat: 1, Shape: 1.5, Beta: 1e4})
	}
	b.ResetTimer()
	for b.Loop() {
		d.Identify(p)
	}
}
