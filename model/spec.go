package model

import (
	"fmt"
	"math"
	"slices"

	"sluice/internal/strictyaml"
)

// Adstock kinds.
const (
	AdstockGeometric = "geometric"
	AdstockDelayed   = "delayed" // delayed peak (Jin et al. 2017)
)

// Saturation kinds.
const (
	SaturationHill        = "hill"
	SaturationExponential = "exponential"
)

// Range is a closed interval [Lo, Hi] of a parameter.
type Range [2]float64

// ChannelSpec is the model structure of one channel. In a Spec built in Go,
// a zero Range means the default (NewSpec, fill); in a spec file, a range
// that is written, even [0, 0], is kept as written: low = high fixes the
// parameter (decay: [0, 0] is "no carryover").
type ChannelSpec struct {
	Name       string `yaml:"-"`
	Adstock    string `yaml:"adstock"`    // "geometric" (default) or "delayed"
	Saturation string `yaml:"saturation"` // "hill" (default) or "exponential"
	Decay      Range  `yaml:"decay"`      // λ; default DefaultDecay [0, 0.85]
	Peak       Range  `yaml:"peak"`       // θ in weeks, delayed only; default DefaultPeak [0, 4]
	MaxLag     int    `yaml:"max_lag"`    // L, delayed only; default 13
	// HalfSaturation bounds κ, the steady-state adstock at half saturation
	// as a multiple of that of the channel's mean weekly spend (κ = 1: half
	// saturated at mean spend); default DefaultHalfSaturation [0.05, 10].
	HalfSaturation Range `yaml:"half_saturation"`
	Shape          Range `yaml:"shape"` // Hill shape s; default DefaultShape [1, 3]
	// Prior sets the channel's priors; unset ones take the defaults
	// (ResolvePriors).
	Prior ChannelPriorsSpec `yaml:"prior"`
}

// channelFile is a channel as a spec file writes it: a range that is
// present is kept even when it is [0, 0].
type channelFile struct {
	Adstock        string            `yaml:"adstock"`
	Saturation     string            `yaml:"saturation"`
	Decay          *Range            `yaml:"decay"`
	Peak           *Range            `yaml:"peak"`
	MaxLag         int               `yaml:"max_lag"`
	HalfSaturation *Range            `yaml:"half_saturation"`
	Shape          *Range            `yaml:"shape"`
	Prior          ChannelPriorsSpec `yaml:"prior"`
}

// Spec is the model structure: which columns play which role, and the form
// and bounds of every transform. The zero values of its fields mean the
// defaults documented on each.
type Spec struct {
	Channels []ChannelSpec
	Controls []string
	Trend    bool    // linear trend; default on (see NoTrend in SpecFile)
	Harm     int     // Fourier harmonics of the yearly season; default 2
	Period   float64 // season length in weeks; default 52.18
	Horizon  int     // planning horizon in weeks; default 13
	Starts   int     // multi-start count of the fit; default 6
}

// SpecFile is the YAML form of a spec (--spec model.yaml).
type SpecFile struct {
	Channels  map[string]channelFile `yaml:"channels"`
	Controls  []string               `yaml:"controls"`
	Trend     *bool                  `yaml:"trend"`
	Harmonics *int                   `yaml:"harmonics"`
	Period    float64                `yaml:"period_weeks"`
	Horizon   int                    `yaml:"horizon_weeks"`
	Starts    int                    `yaml:"starts"`
}

// Default boxes (common practice, no source: typical ranges for weekly
// media data). Decay up to 0.85 is a half-life of up to about four weeks.
// Half saturation κ from 0.05 to 10 times the steady state of mean spend:
// the low end admits a channel deep in saturation at current spend (half
// saturated at a twentieth of it, as always-on search often is), the high
// end a channel still nearly linear; the log-normal prior
// (DefaultHalfSatPrior) rather than the box keeps κ from running off where
// the data cannot settle it. The Hill shape starts at 1: below 1 the first
// currency unit has an infinite return. Peaks up to 4 weeks for delayed
// adstock.
var (
	DefaultDecay          = Range{0, 0.85}
	DefaultPeak           = Range{0, 4}
	DefaultMaxLag         = 13
	DefaultHalfSaturation = Range{0.05, 10}
	DefaultShape          = Range{1, 3}
)

const (
	DefaultHarmonics = 2
	DefaultPeriod    = 52.18 // mean weeks per year
	DefaultHorizon   = 13
	DefaultStarts    = 6
)

// NewSpec returns the default spec for the named channels and controls.
func NewSpec(channels, controls []string) Spec {
	s := Spec{Controls: slices.Clone(controls), Trend: true, Harm: DefaultHarmonics,
		Period: DefaultPeriod, Horizon: DefaultHorizon, Starts: DefaultStarts}
	for _, c := range channels {
		s.Channels = append(s.Channels, ChannelSpec{Name: c})
	}
	s.fill()
	return s
}

// fill replaces zero values with defaults.
func (s *Spec) fill() {
	for i := range s.Channels {
		c := &s.Channels[i]
		if c.Adstock == "" {
			c.Adstock = AdstockGeometric
		}
		if c.Saturation == "" {
			c.Saturation = SaturationHill
		}
		if c.Decay == (Range{}) {
			c.Decay = DefaultDecay
		}
		if c.Adstock == AdstockDelayed {
			if c.Peak == (Range{}) {
				c.Peak = DefaultPeak
			}
			if c.MaxLag == 0 {
				c.MaxLag = DefaultMaxLag
			}
		}
		if c.HalfSaturation == (Range{}) {
			c.HalfSaturation = DefaultHalfSaturation
		}
		if c.Saturation == SaturationHill && c.Shape == (Range{}) {
			c.Shape = DefaultShape
		}
	}
	s.fillSpec()
}

// fillSpec replaces the spec-wide zero values with defaults; channels are
// left as they are.
func (s *Spec) fillSpec() {
	if s.Period == 0 {
		s.Period = DefaultPeriod
	}
	if s.Horizon == 0 {
		s.Horizon = DefaultHorizon
	}
	if s.Starts == 0 {
		s.Starts = DefaultStarts
	}
}

// ApplyFile overlays a spec file onto s. Channels in the file must be among
// s's channels; those not in the file keep their defaults.
func (s *Spec) ApplyFile(f *SpecFile, source string) error {
	for name, cf := range f.Channels {
		i := slices.IndexFunc(s.Channels, func(c ChannelSpec) bool { return c.Name == name })
		if i < 0 {
			return fmt.Errorf("%s: channels.%s: channel is not among the model's channels %v", source, name, s.ChannelNames())
		}
		if err := cf.Prior.validate(source + ": channels." + name + ".prior"); err != nil {
			return err
		}
		// Start from the defaults of the channel's kinds, then keep every
		// range the file writes, whatever its value.
		cs := ChannelSpec{Name: name, Adstock: cf.Adstock, Saturation: cf.Saturation, MaxLag: cf.MaxLag, Prior: cf.Prior}
		one := Spec{Channels: []ChannelSpec{cs}}
		one.fill()
		cs = one.Channels[0]
		for _, r := range []struct {
			dst *Range
			src *Range
		}{{&cs.Decay, cf.Decay}, {&cs.Peak, cf.Peak}, {&cs.HalfSaturation, cf.HalfSaturation}, {&cs.Shape, cf.Shape}} {
			if r.src != nil {
				*r.dst = *r.src
			}
		}
		s.Channels[i] = cs
	}
	if f.Controls != nil {
		s.Controls = slices.Clone(f.Controls)
	}
	if f.Trend != nil {
		s.Trend = *f.Trend
	}
	if f.Harmonics != nil {
		s.Harm = *f.Harmonics
	}
	if f.Period != 0 {
		s.Period = f.Period
	}
	if f.Horizon != 0 {
		s.Horizon = f.Horizon
	}
	if f.Starts != 0 {
		s.Starts = f.Starts
	}
	s.fillSpec()
	return s.Validate(source)
}

// LoadSpecFile reads a YAML spec file strictly.
func LoadSpecFile(path string) (*SpecFile, error) {
	var f SpecFile
	if err := strictyaml.ReadFile(path, &f); err != nil {
		return nil, err
	}
	return &f, nil
}

// ParseSpecFile reads a YAML spec strictly from data; source names it in
// messages.
func ParseSpecFile(data []byte, source string) (*SpecFile, error) {
	var f SpecFile
	if err := strictyaml.Decode(data, source, &f); err != nil {
		return nil, err
	}
	return &f, nil
}

// Validate checks kinds and bounds; source names the spec in messages.
func (s *Spec) Validate(source string) error {
	bad := func(field, format string, a ...any) error {
		return fmt.Errorf("%s: %s: %s", source, field, fmt.Sprintf(format, a...))
	}
	if len(s.Channels) == 0 {
		return bad("channels", "at least one channel is needed")
	}
	rng := func(field string, r Range, lo, hi float64) error {
		if !(r[0] >= lo && r[1] <= hi && r[0] <= r[1]) || math.IsNaN(r[0]) || math.IsNaN(r[1]) {
			return bad(field, "range [%g, %g] must lie within [%g, %g] with low <= high", r[0], r[1], lo, hi)
		}
		return nil
	}
	for _, c := range s.Channels {
		p := "channels." + c.Name
		if err := c.Prior.validate(source + ": " + p + ".prior"); err != nil {
			return err
		}
		switch c.Adstock {
		case AdstockGeometric:
		case AdstockDelayed:
			if err := rng(p+".peak", c.Peak, 0, 52); err != nil {
				return err
			}
			if c.MaxLag < 1 || c.MaxLag > 104 || float64(c.MaxLag) <= c.Peak[1] {
				return bad(p+".max_lag", "%d must be between 1 and 104 and beyond the largest peak", c.MaxLag)
			}
		default:
			return bad(p+".adstock", "%q is not one of geometric, delayed", c.Adstock)
		}
		switch c.Saturation {
		case SaturationHill:
			if err := rng(p+".shape", c.Shape, 0.05, 20); err != nil {
				return err
			}
		case SaturationExponential:
		default:
			return bad(p+".saturation", "%q is not one of hill, exponential", c.Saturation)
		}
		if err := rng(p+".decay", c.Decay, 0, 0.99); err != nil {
			return err
		}
		if err := rng(p+".half_saturation", c.HalfSaturation, 1e-3, 1e3); err != nil {
			return err
		}
		if c.HalfSaturation[0] <= 0 {
			return bad(p+".half_saturation", "must be positive")
		}
	}
	if s.Harm < 0 || s.Harm > 10 {
		return bad("harmonics", "%d must be between 0 and 10", s.Harm)
	}
	if s.Period <= 1 {
		return bad("period_weeks", "%g must exceed 1", s.Period)
	}
	if s.Horizon < 1 || s.Horizon > 104 {
		return bad("horizon_weeks", "%d must be between 1 and 104", s.Horizon)
	}
	if s.Starts < 1 || s.Starts > 200 {
		return bad("starts", "%d must be between 1 and 200", s.Starts)
	}
	return nil
}

// ChannelNames returns the channel names in order.
func (s *Spec) ChannelNames() []string {
	out := make([]string, len(s.Channels))
	for i, c := range s.Channels {
		out[i] = c.Name
	}
	return out
}

// NumFixed is the number of columns that do not depend on the nonlinear
// parameters: intercept, trend, 2 per harmonic, one per control.
func (s *Spec) NumFixed() int {
	n := 1 + 2*s.Harm + len(s.Controls)
	if s.Trend {
		n++
	}
	return n
}

// numNonlinear is the number of nonlinear parameters of channel c.
func (c *ChannelSpec) numNonlinear() int {
	n := 2 // decay, half saturation
	if c.Adstock == AdstockDelayed {
		n++
	}
	if c.Saturation == SaturationHill {
		n++
	}
	return n
}

// NumParams is the total number of estimated parameters.
func (s *Spec) NumParams() int {
	n := s.NumFixed()
	for i := range s.Channels {
		n += 1 + s.Channels[i].numNonlinear()
	}
	return n
}
