package model

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"time"

	"sluice/internal/groundtruth"
	"sluice/internal/strictyaml"
)

// Truth describes a synthetic world: the spend each channel gets, the true
// response of the KPI to it, the baseline, controls and noise. Simulate
// draws a panel from it, so a fit can be checked against a known answer.
type Truth struct {
	Seed    uint64 `yaml:"seed" json:"seed"`
	Weeks   int    `yaml:"weeks" json:"weeks"`                 // default 156
	Start   string `yaml:"start" json:"start"`                 // first week, YYYY-MM-DD; default 2023-01-02
	KPIName string `yaml:"kpi" json:"kpi"`                     // default "revenue"
	Horizon int    `yaml:"horizon_weeks" json:"horizon_weeks"` // default 13

	Intercept float64 `yaml:"intercept" json:"intercept"` // baseline KPI per week
	Trend     float64 `yaml:"trend" json:"trend"`         // baseline change from first to last week
	Season    float64 `yaml:"season" json:"season"`       // amplitude of the yearly cycle, as a share of the intercept

	NoiseSD float64 `yaml:"noise_sd" json:"noise_sd"` // noise SD as a share of the mean KPI; default 0.05
	NoiseAR float64 `yaml:"noise_ar" json:"noise_ar"` // AR(1) coefficient of the noise

	Channels []TrueChannel `yaml:"channels" json:"channels"`
	Controls []TrueControl `yaml:"controls" json:"controls"`

	// DateName names the panel's date column; default "week".
	DateName string `yaml:"date_column" json:"date_column,omitempty"`
}

// TrueChannel is one channel of a synthetic world.
type TrueChannel struct {
	Name       string  `yaml:"name" json:"name"`
	MeanSpend  float64 `yaml:"mean_spend" json:"mean_spend"`     // weekly
	Variation  float64 `yaml:"variation" json:"variation"`       // SD of log spend; default 0.3
	Dark       float64 `yaml:"dark" json:"dark"`                 // share of weeks with no spend (flighting)
	Follows    string  `yaml:"follows" json:"follows,omitempty"` // spend moves with this channel's
	Adstock    string  `yaml:"adstock" json:"adstock"`
	Saturation string  `yaml:"saturation" json:"saturation"`
	MaxLag     int     `yaml:"max_lag" json:"max_lag,omitempty"`
	Decay      float64 `yaml:"decay" json:"decay"`
	Peak       float64 `yaml:"peak" json:"peak,omitempty"`
	HalfSat    float64 `yaml:"half_saturation" json:"half_saturation"`
	Shape      float64 `yaml:"shape" json:"shape,omitempty"`
	Beta       float64 `yaml:"beta" json:"beta"`
	// Drift is the relative change of the channel's effectiveness over the
	// history, linear in time: β(t) = Beta·(1 + Drift·t/(n−1)), so the
	// last week's is Beta·(1 + Drift) and the horizon's truth uses that.
	// 0 (the default) is a constant effectiveness; it must exceed −1.
	Drift float64 `yaml:"drift" json:"drift,omitempty"`
	// DriftStart is the week the drift begins: before it the effectiveness
	// is Beta, from it to the last week it ramps linearly to
	// Beta·(1 + Drift): β(t) = Beta·(1 + Drift·max(0, t−s)/(n−1−s)). 0 (the
	// default) ramps over the whole history; a late start is a change the
	// history's average hides.
	DriftStart int `yaml:"drift_start_week" json:"drift_start_week,omitempty"`
	// SeasonEffect is the amplitude of a seasonal effectiveness: the
	// coefficient is multiplied by 1 + SeasonEffect·cos(2πt/52.18), also in
	// the horizon's weeks; 0 (the default) is none; |SeasonEffect| < 1.
	SeasonEffect float64 `yaml:"season_effect" json:"season_effect,omitempty"`
	// SpendShape adds flighting, a launch week and holiday spikes.
	SpendShape `yaml:",inline"`
}

// TrueControl is a control variable of a synthetic world: an AR(1) series
// around Mean with the given SD, entering the KPI with coefficient Coef.
type TrueControl struct {
	Name string  `yaml:"name" json:"name"`
	Mean float64 `yaml:"mean" json:"mean"`
	SD   float64 `yaml:"sd" json:"sd"`
	AR   float64 `yaml:"ar" json:"ar"`
	Coef float64 `yaml:"coef" json:"coef"`
	// Binary controls (a promotion flag) are on in this share of weeks.
	OnShare float64 `yaml:"on_share" json:"on_share,omitempty"`
}

// LoadTruth reads a truth file strictly and checks it.
func LoadTruth(path string) (*Truth, error) {
	var t Truth
	if err := strictyaml.ReadFile(path, &t); err != nil {
		return nil, err
	}
	if err := t.fill(path); err != nil {
		return nil, err
	}
	return &t, nil
}

func (t *Truth) fill(source string) error {
	if t.Weeks == 0 {
		t.Weeks = 156
	}
	if t.Start == "" {
		t.Start = "2023-01-02"
	}
	if t.KPIName == "" {
		t.KPIName = "revenue"
	}
	if t.Horizon == 0 {
		t.Horizon = DefaultHorizon
	}
	if t.NoiseSD == 0 {
		t.NoiseSD = 0.05
	}
	bad := func(field, format string, a ...any) error {
		return fmt.Errorf("%s: %s: %s", source, field, fmt.Sprintf(format, a...))
	}
	if _, err := time.Parse(time.DateOnly, t.Start); err != nil {
		return bad("start", "%q is not a date YYYY-MM-DD", t.Start)
	}
	if t.Weeks < 20 || t.Weeks > 2000 {
		return bad("weeks", "%d must be between 20 and 2000", t.Weeks)
	}
	if t.NoiseSD < 0 || math.Abs(t.NoiseAR) >= 1 {
		return bad("noise", "noise_sd must be >= 0 and |noise_ar| < 1")
	}
	if len(t.Channels) == 0 {
		return bad("channels", "at least one channel is needed")
	}
	names := map[string]bool{}
	for i := range t.Channels {
		c := &t.Channels[i]
		p := fmt.Sprintf("channels[%d]", i)
		if c.Name == "" || names[c.Name] {
			return bad(p+".name", "%q is empty or repeated", c.Name)
		}
		names[c.Name] = true
		if c.Adstock == "" {
			c.Adstock = AdstockGeometric
		}
		if c.Saturation == "" {
			c.Saturation = SaturationHill
		}
		if c.Adstock == AdstockDelayed && c.MaxLag == 0 {
			c.MaxLag = DefaultMaxLag
		}
		if c.Saturation == SaturationHill && c.Shape == 0 {
			c.Shape = 1
		}
		if c.Variation == 0 {
			c.Variation = 0.3
		}
		if c.MeanSpend <= 0 || c.HalfSat <= 0 || c.Beta < 0 || c.Decay < 0 || c.Decay >= 1 || c.Dark < 0 || c.Dark >= 1 {
			return bad(p, "needs mean_spend > 0, half_saturation > 0, beta >= 0, 0 <= decay < 1, 0 <= dark < 1")
		}
		if !(c.Drift > -1 && c.Drift <= 10) {
			return bad(p+".drift", "%g must be above -1 and at most 10", c.Drift)
		}
		if c.DriftStart < 0 || c.DriftStart >= t.Weeks-1 {
			return bad(p+".drift_start_week", "%d must lie between 0 and the weeks less two (%d)", c.DriftStart, t.Weeks-2)
		}
		if !(math.Abs(c.SeasonEffect) < 1) {
			return bad(p+".season_effect", "%g must lie strictly between -1 and 1", c.SeasonEffect)
		}
		if err := c.SpendShape.check(p, t.Weeks); err != nil {
			return fmt.Errorf("%s: %w", source, err)
		}
	}
	for i, c := range t.Channels {
		if c.Follows != "" && (!names[c.Follows] || c.Follows == c.Name) {
			return bad(fmt.Sprintf("channels[%d].follows", i), "%q is not another channel", c.Follows)
		}
		if c.Follows != "" {
			j := slices.IndexFunc(t.Channels, func(o TrueChannel) bool { return o.Name == c.Follows })
			if j > i {
				return bad(fmt.Sprintf("channels[%d].follows", i), "%q must be listed before %q", c.Follows, c.Name)
			}
		}
	}
	return nil
}

// Spec returns the model structure of the truth (its true kinds, default bounds).
func (t *Truth) Spec() Spec {
	var ch, ctl []string
	for _, c := range t.Channels {
		ch = append(ch, c.Name)
	}
	for _, c := range t.Controls {
		ctl = append(ctl, c.Name)
	}
	s := NewSpec(ch, ctl)
	for i, c := range t.Channels {
		s.Channels[i].Adstock = c.Adstock
		s.Channels[i].Saturation = c.Saturation
		s.Channels[i].MaxLag = c.MaxLag
	}
	s.Horizon = t.Horizon
	s.fill()
	return s
}

// Simulated is a synthetic panel with its truth.
type Simulated struct {
	Panel   *Panel
	Truth   *Truth
	Params  Params           // true parameters in the model's layout (Fixed: intercept, trend, season terms, controls)
	Summary []ChannelSummary // true ROI, marginal ROI, ... per channel
	// Response is each channel's true horizon response at current spend.
	Response []float64
	// EffectPath is each channel's true coefficient in every week
	// (constant unless the truth has a drift); Params holds the last
	// week's, which the horizon's truth uses.
	EffectPath [][]float64
}

// ErrTruth reports a truth that cannot be simulated.
var ErrTruth = errors.New("model: invalid truth")

// Simulate draws a panel from t. The same truth (including its seed) gives
// the same panel.
func Simulate(t *Truth) (*Simulated, error) {
	if err := t.fill("truth"); err != nil {
		return nil, err
	}
	rng := rand.New(rand.NewPCG(t.Seed, 0x5eed))
	n := t.Weeks
	start, _ := time.Parse(time.DateOnly, t.Start)
	p := &Panel{Source: "simulated", KPIName: t.KPIName, DateName: t.DateName}
	for w := range n {
		p.Weeks = append(p.Weeks, start.AddDate(0, 0, 7*w))
	}
	// Spend: log-normal AR(1) around the mean, flighting, following.
	logs := map[string][]float64{}
	for _, c := range t.Channels {
		z := ar1(rng, n, 0.6)
		if c.Follows != "" {
			lead := logs[c.Follows]
			for i := range z {
				z[i] = lead[i] + 0.1*z[i] // nearly the same pattern
			}
		}
		logs[c.Name] = z
		x := make([]float64, n)
		for i := range x {
			x[i] = math.Exp(c.Variation * z[i])
		}
		if c.Dark > 0 {
			for i := range x {
				if rng.Float64() < c.Dark {
					x[i] = 0
				}
			}
		}
		c.SpendShape.apply(rng, p.Weeks, x)
		if allZero(x) {
			return nil, fmt.Errorf("%w: channel %q is dark in every week: its flighting and launch week leave no week with spend", ErrTruth, c.Name)
		}
		scale := c.MeanSpend / meanOf(x)
		for i := range x {
			x[i] = math.Round(x[i]*scale*100) / 100
		}
		p.Channels = append(p.Channels, c.Name)
		p.Spend = append(p.Spend, x)
	}
	for _, c := range t.Controls {
		z := ar1(rng, n, c.AR)
		x := make([]float64, n)
		for i := range x {
			if c.OnShare > 0 {
				if rng.Float64() < c.OnShare {
					x[i] = 1
				}
				continue
			}
			x[i] = math.Round((c.Mean+c.SD*z[i])*1e4) / 1e4
		}
		p.Controls = append(p.Controls, c.Name)
		p.Control = append(p.Control, x)
	}
	spec := t.Spec()
	d := buildDesign(p, spec)
	params := Params{Fixed: []float64{t.Intercept, t.Trend}}
	for h := 1; h <= spec.Harm; h++ {
		if h == 1 {
			params.Fixed = append(params.Fixed, t.Season*t.Intercept, 0)
		} else {
			params.Fixed = append(params.Fixed, 0, 0)
		}
	}
	for _, c := range t.Controls {
		params.Fixed = append(params.Fixed, c.Coef)
	}
	for _, c := range t.Channels {
		params.Channels = append(params.Channels, ChannelParams{Decay: c.Decay, Peak: c.Peak, HalfSat: c.HalfSat, Shape: shapeOf(c), Beta: c.Beta})
	}
	world := TrueWorld(d, params)
	mu := world.MeanPath()
	// Drifting channels: the mean path takes β(t) instead of Beta, and the
	// truth of the horizon the last week's β (the response is linear in β).
	paths := make([][]float64, len(t.Channels))
	contrib := make([]float64, len(t.Channels))
	season := func(c TrueChannel, i int) float64 {
		return 1 + c.SeasonEffect*math.Cos(2*math.Pi*float64(i)/spec.Period)
	}
	for k, c := range t.Channels {
		paths[k] = make([]float64, n)
		for i := range paths[k] {
			ramp := float64(max(0, i-c.DriftStart)) / float64(max(n-1-c.DriftStart, 1))
			paths[k][i] = c.Beta * (1 + c.Drift*ramp) * season(c, i)
		}
		if c.Drift == 0 && c.SeasonEffect == 0 {
			continue
		}
		unit := world.Channels[k]
		unit.Beta = 1
		for i, v := range unit.Media(unit.Spend) {
			mu[i] += (paths[k][i] - c.Beta) * v
			contrib[k] += paths[k][i] * v
		}
		end := c.Beta * (1 + c.Drift) // the drift's level at the end, without the season
		world.Channels[k].Beta, params.Channels[k].Beta = end, end
	}
	noise := ar1(rng, n, t.NoiseAR)
	sd := t.NoiseSD * meanOf(mu)
	p.KPI = make([]float64, n)
	for i := range mu {
		p.KPI[i] = math.Max(0, math.Round((mu[i]+sd*noise[i])*100)/100)
	}
	sim := &Simulated{Panel: p, Truth: t, Params: params, Summary: trueSummary(d, params, world), EffectPath: paths}
	driftSummary(sim.Summary, t, p.Spend, contrib)
	for k, c := range t.Channels {
		cur := world.CurrentSpend(k)
		if c.SeasonEffect != 0 {
			// Each future week's coefficient is the end level times that
			// week's season (groundtruth's response has one coefficient).
			beta := func(i int) float64 { return params.Channels[k].Beta * season(c, i) }
			sim.Response = append(sim.Response, seasonalResponse(world.Channels[k], world.Horizon, cur, beta))
			if h := 1e-4 * cur; h > 0 {
				up := seasonalResponse(world.Channels[k], world.Horizon, cur+h, beta)
				down := seasonalResponse(world.Channels[k], world.Horizon, cur-h, beta)
				sim.Summary[k].MROI = (up - down) / (2 * h) / float64(world.Horizon)
			}
			continue
		}
		sim.Response = append(sim.Response, world.Response(k, cur))
	}
	return sim, nil
}

// TrueWorld describes the world of design d under parameters p for package
// groundtruth, which computes its truth apart from this package's
// transforms, prediction and curves: the baseline is the fixed columns
// times p.Fixed, the rest the channels' own parameters.
func TrueWorld(d *Design, p Params) *groundtruth.World {
	w := &groundtruth.World{Horizon: d.Spec.Horizon, Base: make([]float64, d.N)}
	for t := range d.N {
		for j, g := range p.Fixed {
			w.Base[t] += g * d.Fixed.At(t, j)
		}
	}
	for k, c := range d.Spec.Channels {
		cp := p.Channels[k]
		w.Channels = append(w.Channels, groundtruth.Channel{Spend: d.Spend[k], Adstock: c.Adstock, Saturation: c.Saturation,
			Decay: cp.Decay, Peak: cp.Peak, MaxLag: c.MaxLag, HalfSat: cp.HalfSat, Shape: cp.Shape, Beta: cp.Beta})
	}
	return w
}

// trueSummary is the truth's per-channel figures, computed by package
// groundtruth (not by Summarize, which the tests grade against it).
func trueSummary(d *Design, p Params, w *groundtruth.World) []ChannelSummary {
	out := make([]ChannelSummary, len(p.Channels))
	var spendAll, contribAll float64
	for k, c := range d.Spec.Channels {
		cur := w.CurrentSpend(k)
		ch := &w.Channels[k]
		var g float64
		for _, v := range ch.Kernel() {
			g += v
		}
		var spend float64
		for _, v := range ch.Spend {
			spend += v
		}
		s := ChannelSummary{Name: c.Name, Contribution: w.Contribution(k), CurrentSpend: cur, ROI: w.ROI(k),
			MROI: w.MarginalROI(k, cur), HalfLifeWeeks: halfLife(c, p.Channels[k]),
			Saturation: ch.Sat(cur*g, ch.HalfSatLevel()), SpendShare: spend}
		spendAll += spend
		contribAll += s.Contribution
		out[k] = s
	}
	for k := range out {
		out[k].SpendShare /= spendAll
		if contribAll > 0 {
			out[k].ContributionShare = out[k].Contribution / contribAll
		}
	}
	return out
}

// seasonalResponse is groundtruth's horizon response of channel c at
// weekly spend s over h weeks with a coefficient beta(t) per week (t
// counted from the first week of the data): the media of the spend with
// and without the horizon's, each week weighed by its coefficient, summed
// over the horizon and the kernel's whole tail.
func seasonalResponse(c groundtruth.Channel, h int, s float64, beta func(int) float64) float64 {
	n := len(c.Spend)
	tail := len(c.Kernel())
	with := make([]float64, n+h+tail)
	without := make([]float64, n+h+tail)
	copy(with, c.Spend)
	copy(without, c.Spend)
	for t := n; t < n+h; t++ {
		with[t] = s
	}
	c.Beta = 1
	m1, m0 := c.Media(with), c.Media(without)
	var r float64
	for t := n; t < len(with); t++ {
		r += beta(t) * (m1[t] - m0[t])
	}
	return r
}

// driftSummary puts the contribution and ROI over the data of drifting
// channels (β(t) week by week, in contrib) into the truth's summary;
// trueSummary computed them with the last week's β.
func driftSummary(out []ChannelSummary, t *Truth, spend [][]float64, contrib []float64) {
	drift := false
	for k, c := range t.Channels {
		if c.Drift == 0 && c.SeasonEffect == 0 {
			continue
		}
		drift = true
		var sx float64
		for _, v := range spend[k] {
			sx += v
		}
		out[k].Contribution = contrib[k]
		out[k].ROI = 0
		if sx > 0 {
			out[k].ROI = contrib[k] / sx
		}
	}
	if !drift {
		return
	}
	var all float64
	for _, s := range out {
		all += s.Contribution
	}
	for k := range out {
		out[k].ContributionShare = 0
		if all > 0 {
			out[k].ContributionShare = out[k].Contribution / all
		}
	}
}

func shapeOf(c TrueChannel) float64 {
	if c.Saturation == SaturationHill {
		return c.Shape
	}
	return 0
}

// ar1 is AR1 (noise.go), the project's one AR(1) generator.
func ar1(rng *rand.Rand, n int, phi float64) []float64 { return AR1(rng, n, phi) }
