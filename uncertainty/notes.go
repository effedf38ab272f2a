package uncertainty

import (
	"fmt"
	"strings"
)

// BoundShare is, for one channel, the share of the successful replicates
// whose parameter lies on an edge of its box (within 1e-6 of the box's
// width). A parameter fixed by its box (low = high) is not counted (-1).
// Many replicates on a bound mean the data do not settle the parameter
// within the box: the prior and the box, not the data, decide it.
type BoundShare struct {
	Channel        string  `json:"channel"`
	Decay          float64 `json:"decay"`
	Peak           float64 `json:"peak,omitempty"` // delayed only
	HalfSaturation float64 `json:"half_saturation"`
	Shape          float64 `json:"shape,omitempty"` // Hill only
	Any            float64 `json:"any"`             // any of the channel's parameters on a bound
}

// OnBound computes each channel's bound shares from the header's boxes.
func (d *Draws) OnBound() []BoundShare {
	ps := d.Params()
	out := make([]BoundShare, len(d.Header.Model.Channels))
	for k, c := range d.Header.Model.Channels {
		out[k].Channel = c.Name
		var nd, np, nk, ns, na int
		on := func(v float64, box []float64) (bool, bool) {
			if len(box) != 2 || box[0] == box[1] {
				return false, false
			}
			tol := 1e-6 * (box[1] - box[0])
			return v <= box[0]+tol || v >= box[1]-tol, true
		}
		counted := [4]bool{}
		for _, p := range ps {
			cp := p.Channels[k]
			bd, okd := on(cp.Decay, c.Decay)
			bp, okp := on(cp.Peak, c.Peak)
			bk, okk := on(cp.HalfSat, c.HalfSaturation)
			bs, oks := on(cp.Shape, c.Shape)
			counted = [4]bool{okd, okp, okk, oks}
			nd, np, nk, ns = nd+b2i(bd), np+b2i(bp), nk+b2i(bk), ns+b2i(bs)
			if bd || bp || bk || bs {
				na++
			}
		}
		n := float64(max(len(ps), 1))
		share := func(c int, ok bool) float64 {
			if !ok {
				return -1
			}
			return float64(c) / n
		}
		out[k].Decay, out[k].HalfSaturation, out[k].Any = share(nd, counted[0]), share(nk, counted[2]), float64(na)/n
		if c.Peak != nil {
			out[k].Peak = share(np, counted[1])
		}
		if c.Shape != nil {
			out[k].Shape = share(ns, counted[3])
		}
	}
	return out
}

func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}

// Note is something about a bootstrap run the user must hear, with a hint
// where a fix is likely.
type Note struct {
	Text string `json:"text"`
	Hint string `json:"hint,omitempty"`
}

// Thresholds of the notes (common practice, no source).
const (
	// FailedShareNote: more failed refits than this share is reported.
	FailedShareNote = 0.05
	// BoundShareNote: a parameter on a bound in more than this share of
	// replicates is reported.
	BoundShareNote = 0.25
)

// Notes lists what is suspicious about the draws: many failed refits, an
// automatic block length held at its cap, a full-fit parameter on a bound
// of its box, parameters that pile up on a bound over the replicates.
func (d *Draws) Notes() []Note {
	var out []Note
	if n, f := len(d.Replicates), d.Failed(); n > 0 && float64(f) > FailedShareNote*float64(n) {
		out = append(out, Note{Text: fmt.Sprintf("%d of %d bootstrap refits failed (%.0f%%); the bands are made of the rest and may be too narrow",
			f, n, 100*float64(f)/float64(n)),
			Hint: "fix bounds that are too tight or parameters the data cannot settle (a prior in the spec), or raise --starts"})
	}
	if r := d.Header.BlockRule; r != nil && r.Capped {
		out = append(out, Note{Text: fmt.Sprintf("the block length is held at its cap of %g weeks (the rule asked %.1f; residual lag-1 autocorrelation %.2f): the residuals carry dependence the model misses",
			r.Cap, r.Rule, r.Lag1),
			Hint: "look for a missing control, carryover or seasonality; --method stationary with a longer --block-length widens the bands"})
	}
	for k, c := range d.Header.Model.Channels {
		if k >= len(d.Header.FullFit.Params.Channels) {
			break
		}
		cp := d.Header.FullFit.Params.Channels[k]
		var which []string
		for _, p := range []struct {
			name string
			v    float64
			box  []float64
		}{{"decay", cp.Decay, c.Decay}, {"peak", cp.Peak, c.Peak}, {"half_saturation", cp.HalfSat, c.HalfSaturation}, {"shape", cp.Shape, c.Shape}} {
			if len(p.box) == 2 && p.box[0] < p.box[1] {
				tol := 1e-6 * (p.box[1] - p.box[0])
				if p.v <= p.box[0]+tol || p.v >= p.box[1]-tol {
					which = append(which, fmt.Sprintf("%s %.4g (box [%g, %g])", p.name, p.v, p.box[0], p.box[1]))
				}
			}
		}
		if len(which) > 0 {
			out = append(out, Note{Text: fmt.Sprintf("the full fit has channel %s on a bound of its box: %s", c.Name, strings.Join(which, ", ")),
				Hint: fmt.Sprintf("a bound that is not a real limit decides this channel: widen it in the spec (channels.%s), or give it a prior from other evidence", c.Name)})
		}
	}
	for _, b := range d.OnBound() {
		var which []string
		for _, p := range []struct {
			name  string
			share float64
		}{{"decay", b.Decay}, {"peak", b.Peak}, {"half_saturation", b.HalfSaturation}, {"shape", b.Shape}} {
			if p.share > BoundShareNote {
				which = append(which, fmt.Sprintf("%s %.0f%%", p.name, 100*p.share))
			}
		}
		if len(which) > 0 {
			out = append(out, Note{Text: fmt.Sprintf("channel %s: replicates on a bound of the box: %s; the data do not settle it there",
				b.Channel, strings.Join(which, ", ")),
				Hint: fmt.Sprintf("widen the box in the spec if the bound is not a real limit, or set a prior for channels.%s from other evidence", b.Channel)})
		}
	}
	return out
}
