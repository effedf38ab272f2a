package model

import (
	"fmt"
	"math"
)

// Effectiveness kinds of a channel (ChannelSpec.Effectiveness).
const (
	// EffectConstant is one coefficient β over the whole history (the default).
	EffectConstant = "constant"
	// EffectDrifting lets the coefficient move smoothly over the history:
	// β(t) = Σ_j b_j B_j(t), B_j a clamped cubic B-spline basis over the
	// weeks of the fit (non-negative, summing to one), b_j ≥ 0 solved by the
	// fit's non-negative least squares, and each step b_{j+1} − b_j held
	// back by a Gaussian prior (a first-difference penalty, so with no
	// evidence the coefficient stays flat). The horizon response uses the
	// effectiveness at the end of the history, β(T) = b_J.
	EffectDrifting = "drifting"
	// EffectSeasonal lets the coefficient follow the yearly season: β(t) =
	// Σ_j b_j P_j(t), P_j a periodic cubic B-spline basis over the season's
	// period (Spec.Period), b_j ≥ 0, each cyclic step held back by the same
	// Gaussian prior. The horizon response takes each future week's
	// coefficient from the season it falls in.
	EffectSeasonal = "seasonal"
)

// Defaults of the drifting option (common practice, no source). Six
// basis functions over three years put a knot every year or so: enough
// for a steady rise or fall and a bend, too few to chase a quarter's
// noise. The step prior's SD is 20% of the channel's constant-model
// coefficient per step, so over the five steps of the default basis a
// change of about ±45% (√5 × 20%) is one prior SD: a doubling is possible
// when the data insist, a wiggle is not.
const (
	DefaultEffectBasis = 6
	DefaultEffectStep  = 0.2
)

// Drifting reports whether channel c's effectiveness drifts over the history.
func (c *ChannelSpec) Drifting() bool { return c.Effectiveness == EffectDrifting }

// Seasonal reports whether channel c's effectiveness follows the season.
func (c *ChannelSpec) Seasonal() bool { return c.Effectiveness == EffectSeasonal }

// Varying reports whether channel c's effectiveness is not constant.
func (c *ChannelSpec) Varying() bool { return c.Drifting() || c.Seasonal() }

// numColumns is the number of linear coefficients of channel c: one, or
// one per basis function when its effectiveness varies.
func (c *ChannelSpec) numColumns() int {
	if c.Varying() {
		return c.EffectBasis
	}
	return 1
}

// columnLayout returns the first linear column of each channel and the
// total number of media columns.
func (s *Spec) columnLayout() (first []int, total int) {
	first = make([]int, len(s.Channels))
	for k := range s.Channels {
		first[k] = total
		total += s.Channels[k].numColumns()
	}
	return first, total
}

// AnyDrifting reports whether any channel of s has an effectiveness that
// is not constant (drifting or seasonal).
func (s *Spec) AnyDrifting() bool {
	for i := range s.Channels {
		if s.Channels[i].Varying() {
			return true
		}
	}
	return false
}

// SetDrifting switches the named channels ("all" for every one) to a
// drifting effectiveness with the default basis and step prior, keeping
// any basis size or step the spec already sets. It returns an error naming
// a channel that is not in the spec.
func (s *Spec) SetDrifting(names []string) error {
	return s.setEffect(names, EffectDrifting)
}

// SetSeasonal is SetDrifting for a seasonal effectiveness.
func (s *Spec) SetSeasonal(names []string) error {
	return s.setEffect(names, EffectSeasonal)
}

func (s *Spec) setEffect(names []string, kind string) error {
	for _, n := range names {
		found := false
		for i := range s.Channels {
			c := &s.Channels[i]
			if n == "all" || c.Name == n {
				c.Effectiveness = kind
				found = true
			}
		}
		if !found {
			return fmt.Errorf("%s channel %q is not among the model's channels %v", kind, n, s.ChannelNames())
		}
	}
	s.fill()
	return nil
}

// validateEffect checks a channel's effectiveness settings.
func (c *ChannelSpec) validateEffect(field string) error {
	switch c.Effectiveness {
	case EffectConstant, "":
	case EffectDrifting, EffectSeasonal:
		if c.EffectBasis < 4 || c.EffectBasis > 20 {
			return fmt.Errorf("%s.effect_basis: %d must be between 4 and 20", field, c.EffectBasis)
		}
		if !(c.EffectStep > 0 && c.EffectStep <= 10) {
			return fmt.Errorf("%s.effect_step: %g must be positive and at most 10", field, c.EffectStep)
		}
	default:
		return fmt.Errorf("%s.effectiveness: %q is not one of constant, drifting, seasonal", field, c.Effectiveness)
	}
	return nil
}

// fillEffect sets the effectiveness defaults of a channel.
func (c *ChannelSpec) fillEffect() {
	if c.Effectiveness == "" {
		c.Effectiveness = EffectConstant
	}
	if c.Varying() {
		if c.EffectBasis == 0 {
			c.EffectBasis = DefaultEffectBasis
		}
		if c.EffectStep == 0 {
			c.EffectStep = DefaultEffectStep
		}
	}
}

// BSpline returns the J values B_0(u) … B_{J−1}(u) of the clamped cubic
// B-spline basis on [0, 1] with J−4 equally spaced interior knots (J ≥ 4),
// by the Cox–de Boor recursion. The values are non-negative and sum to
// one; at u = 1 only the last is non-zero (it equals 1), at u = 0 only the
// first. u outside [0, 1] is clamped.
func BSpline(J int, u float64) []float64 {
	if J < 4 {
		panic("model: BSpline needs at least 4 basis functions")
	}
	const p = 3
	u = math.Min(1, math.Max(0, u))
	knots := make([]float64, J+p+1)
	inner := J - p // number of knot intervals
	for i := range knots {
		switch {
		case i <= p:
			knots[i] = 0
		case i >= J:
			knots[i] = 1
		default:
			knots[i] = float64(i-p) / float64(inner)
		}
	}
	// The knot interval holding u (the last one for u = 1).
	span := p
	for span < J-1 && u >= knots[span+1] {
		span++
	}
	// Degree-0 values on the spans, raised degree by degree.
	n := make([]float64, J+p)
	n[span] = 1
	for deg := 1; deg <= p; deg++ {
		for i := 0; i < J+p-deg; i++ {
			var v float64
			if d := knots[i+deg] - knots[i]; d > 0 {
				v += (u - knots[i]) / d * n[i]
			}
			if d := knots[i+deg+1] - knots[i+1]; d > 0 {
				v += (knots[i+deg+1] - u) / d * n[i+1]
			}
			n[i] = v
		}
	}
	return n[:J]
}

// effectBasis returns the basis of a channel with J functions over n
// weeks: [j][t] = B_j(t/(n−1)).
func effectBasis(J, n int) [][]float64 {
	out := make([][]float64, J)
	for j := range out {
		out[j] = make([]float64, n)
	}
	for t := range n {
		b := BSpline(J, float64(t)/float64(max(n-1, 1)))
		for j, v := range b {
			out[j][t] = v
		}
	}
	return out
}

// PeriodicBSpline returns the J values of the periodic cubic B-spline
// basis on the circle [0, 1) with J equally spaced knots (J ≥ 4): P_j(u) =
// N((uJ − j) mod J), N the uniform cubic B-spline on [0, 4). The values
// are non-negative and sum to one at every u.
func PeriodicBSpline(J int, u float64) []float64 {
	if J < 4 {
		panic("model: PeriodicBSpline needs at least 4 basis functions")
	}
	u -= math.Floor(u)
	out := make([]float64, J)
	for j := range out {
		x := math.Mod(u*float64(J)-float64(j), float64(J))
		if x < 0 {
			x += float64(J)
		}
		out[j] = cardinalCubic(x)
	}
	return out
}

// cardinalCubic is the uniform cubic B-spline with knots 0, 1, 2, 3, 4.
func cardinalCubic(x float64) float64 {
	switch {
	case x < 0 || x >= 4:
		return 0
	case x < 1:
		return x * x * x / 6
	case x < 2:
		return (-3*x*x*x + 12*x*x - 12*x + 4) / 6
	case x < 3:
		return (3*x*x*x - 24*x*x + 60*x - 44) / 6
	default:
		y := 4 - x
		return y * y * y / 6
	}
}

// channelBasis is channel c's basis over the design's n weeks: [j][t].
func (s *Spec) channelBasis(c *ChannelSpec, n int) [][]float64 {
	if c.Seasonal() {
		out := make([][]float64, c.EffectBasis)
		for j := range out {
			out[j] = make([]float64, n)
		}
		for t := range n {
			for j, v := range PeriodicBSpline(c.EffectBasis, float64(t)/s.Period) {
				out[j][t] = v
			}
		}
		return out
	}
	return effectBasis(c.EffectBasis, n)
}

// EffectWeights are the basis weights of a varying effectiveness: β(t) =
// Σ_j Weights[j] B_j(t), with the clamped basis over Weeks weeks
// (drifting), or the periodic basis of Period weeks (seasonal, Period > 0).
type EffectWeights struct {
	Weights []float64 `json:"weights"`
	Weeks   int       `json:"weeks"`
	Period  float64   `json:"period,omitempty"`
}

// BetaAt is the channel's coefficient in week t of the design it was
// fitted on: Beta for a constant effectiveness; for a drifting one Σ_j
// b_j B_j(t/(W−1)), W = Effect.Weeks, held at its last value after week W−1
// (a fit on the first weeks of a panel predicts the later ones with the
// effectiveness it ended on).
func (cp *ChannelParams) BetaAt(t int) float64 {
	e := cp.Effect
	if e == nil || len(e.Weights) == 0 {
		return cp.Beta
	}
	var s float64
	if e.Period > 0 {
		// Seasonal: the week's place in the season, also beyond the data.
		for j, v := range PeriodicBSpline(len(e.Weights), float64(t)/e.Period) {
			s += e.Weights[j] * v
		}
		return s
	}
	if e.Weeks < 2 {
		return cp.Beta
	}
	u := math.Min(1, float64(t)/float64(e.Weeks-1))
	for j, v := range BSpline(len(e.Weights), u) {
		s += e.Weights[j] * v
	}
	return s
}

// EffectPath returns channel k's coefficient β_k(t) in every week of the
// design (constant for a constant effectiveness).
func (d *Design) EffectPath(p Params, k int) []float64 {
	cp := p.Channels[k]
	out := make([]float64, d.N)
	if cp.Effect == nil {
		for t := range out {
			out[t] = cp.Beta
		}
		return out
	}
	for t := range out {
		out[t] = cp.BetaAt(t)
	}
	return out
}

// effectRow is a prior row on one step of a drifting channel's basis
// weights: weight·(0 − (b_hi − b_lo)), weight = σ/τ with τ the step's
// prior SD. It is linear in the weights and does not depend on θ.
type effectRow struct {
	lo, hi int // linear columns
	weight float64
}

// effectRows lays out the step priors of every drifting channel whose
// prior SD (ChannelPriors.Step) is set.
func (d *Design) effectRows(pri Priors, sigma float64) []effectRow {
	first, _ := d.Spec.columnLayout()
	var out []effectRow
	for k := range d.Spec.Channels {
		c := &d.Spec.Channels[k]
		if !c.Varying() || pri == nil || !(pri[k].Step > 0) {
			continue
		}
		steps := c.EffectBasis - 1
		if c.Seasonal() {
			steps = c.EffectBasis // the last step wraps round to the first
		}
		for j := range steps {
			out = append(out, effectRow{lo: first[k] + j, hi: first[k] + (j+1)%c.EffectBasis, weight: sigma / pri[k].Step})
		}
	}
	return out
}

// resolveSteps returns pri with the step prior of every drifting channel
// that has none set: EffectStep times the channel's coefficient in a
// constant-effectiveness fit of y (the pilot, with the same settings), or
// times the mean of the other channels' when that coefficient is zero. pri
// may be nil (a fit without priors): the result then holds only the step
// priors. The second result is the pilot fit (nil when none was needed).
func (d *Design) resolveSteps(y []float64, rows []int, lifts []Lift, pri Priors, set FitSettings) (Priors, *FitResult, error) {
	need := false
	for k := range d.Spec.Channels {
		if d.Spec.Channels[k].Varying() && (pri == nil || !(pri[k].Step > 0)) {
			need = true
		}
	}
	if !need {
		return pri, nil, nil
	}
	flat := *d
	flat.Spec = d.Spec.Constant()
	fr, err := fitExtended(&flat, y, rows, lifts, set)
	if err != nil {
		return nil, nil, err
	}
	out := make(Priors, len(d.Spec.Channels))
	if pri != nil {
		copy(out, pri)
	} else {
		// No priors but the steps': zero SDs are no prior (varpro.Prior).
		for k := range d.Spec.Channels {
			c := &d.Spec.Channels[k]
			if c.Adstock == AdstockDelayed {
				out[k].Peak = &Normal{}
			}
			if c.Saturation == SaturationHill {
				out[k].Shape = &Normal{}
			}
		}
	}
	var sum float64
	var cnt int
	for _, cp := range fr.Params.Channels {
		if cp.Beta > 0 {
			sum += cp.Beta
			cnt++
		}
	}
	for k := range d.Spec.Channels {
		c := &d.Spec.Channels[k]
		if !c.Varying() || out[k].Step > 0 {
			continue
		}
		b := fr.Params.Channels[k].Beta
		if !(b > 0) && cnt > 0 {
			b = sum / float64(cnt)
		}
		if !(b > 0) {
			b = 1
		}
		out[k].Step = c.EffectStep * b
	}
	return out, fr, nil
}

// Constant returns a copy of s with every channel's effectiveness constant.
func (s Spec) Constant() Spec {
	c := s
	c.Channels = append([]ChannelSpec(nil), s.Channels...)
	for i := range c.Channels {
		c.Channels[i].Effectiveness = EffectConstant
	}
	return c
}

// WithDrifting returns a shallow copy of d whose named channels ("all" for
// every one) have a drifting effectiveness; the data, lift tests and
// scaling are shared.
func (d *Design) WithDrifting(names []string) (*Design, error) {
	c := *d
	c.Spec.Channels = append([]ChannelSpec(nil), d.Spec.Channels...)
	if err := c.Spec.SetDrifting(names); err != nil {
		return nil, err
	}
	return &c, nil
}

// WithSeasonal is WithDrifting for a seasonal effectiveness.
func (d *Design) WithSeasonal(names []string) (*Design, error) {
	c := *d
	c.Spec.Channels = append([]ChannelSpec(nil), d.Spec.Channels...)
	if err := c.Spec.SetSeasonal(names); err != nil {
		return nil, err
	}
	return &c, nil
}

// WithConstant returns a shallow copy of d with every channel's
// effectiveness constant.
func (d *Design) WithConstant() *Design {
	c := *d
	c.Spec = d.Spec.Constant()
	return &c
}

// EffectChange is a drifting channel's effectiveness in the last week over
// its mean over the weeks of the fit (1 for a constant one): above 1 the
// channel works better now than on average in the history.
func (d *Design) EffectChange(p Params, k int) float64 {
	path := d.EffectPath(p, k)
	var m float64
	for _, v := range path {
		m += v
	}
	m /= float64(len(path))
	if !(m > 0) {
		return 1
	}
	return path[len(path)-1] / m
}

// SeasonLift is a seasonal channel's mean coefficient over the next
// horizon over its mean over the year (1 for any other channel): above 1
// the coming weeks are in the channel's better season.
func (d *Design) SeasonLift(p Params, k int) float64 {
	cp := p.Channels[k]
	if cp.Effect == nil || cp.Effect.Period <= 0 {
		return 1
	}
	var year float64
	const steps = 520
	for i := range steps {
		u := float64(i) / steps
		for j, v := range PeriodicBSpline(len(cp.Effect.Weights), u) {
			year += cp.Effect.Weights[j] * v
		}
	}
	year /= steps
	if !(year > 0) {
		return 1
	}
	return cp.Beta / year // Beta is the mean over the next horizon
}
