package model

import (
	"fmt"
	"math"

	"sluice/internal/varpro"
)

// Normal is a Gaussian prior N(Mean, SD²). A zero SD means "not set": the
// default applies.
type Normal struct {
	Mean float64 `yaml:"mean" json:"mean"`
	SD   float64 `yaml:"sd" json:"sd"`
}

// LogNormal is a Gaussian prior on the logarithm: log v ~ N(log Median, LogSD²).
type LogNormal struct {
	Median float64 `yaml:"median" json:"median"`
	LogSD  float64 `yaml:"log_sd" json:"log_sd"`
}

// ChannelPriors are the priors of one channel's parameters. The fit is a
// maximum a posteriori fit: every prior adds a penalty
// σ²·((v − mean)/sd)² to the residual sum of squares, σ the noise SD of
// the weeks (FitResult.NoiseSD). The ROI is the channel's modelled
// contribution over the data divided by its spend, in KPI per currency
// unit (the usual ROI for a revenue KPI; divide a currency ROI by the
// value per KPI unit otherwise).
type ChannelPriors struct {
	Decay          Normal    `yaml:"decay" json:"decay"`
	Peak           *Normal   `yaml:"peak" json:"peak,omitempty"` // delayed adstock only
	HalfSaturation LogNormal `yaml:"half_saturation" json:"half_saturation"`
	Shape          *Normal   `yaml:"shape" json:"shape,omitempty"` // Hill only
	ROI            Normal    `yaml:"roi" json:"roi"`
	// ROIDefault is set when the ROI prior is the data-scaled default.
	ROIDefault bool `yaml:"-" json:"roi_default,omitempty"`
}

// Default priors (common practice, no source; weakly informative: each is
// wide against its box and only decides what the data leave open).
//   - decay N(0.3, 0.3²): most weekly media carry over for a few weeks
//     (half-life about half a week at 0.3); the whole default box [0, 0.85]
//     lies within 2 SD.
//   - half saturation κ log-normal, median 1 (half saturated at the
//     steady state of mean spend), log SD 1: κ from 0.14 to 7.4 within 2
//     SD, so a channel deep in saturation (κ ≈ 0.1, common for always-on
//     search) costs little, while κ running off to the box's ends where
//     the level of a saturated channel trades off against the intercept is
//     held back.
//   - Hill shape N(1.5, 0.75²): concave to mildly S-shaped.
//   - delayed peak N(1, 2²) weeks.
//   - ROI N(0, r²) with r = the "whole-KPI ROI", the KPI of the data over
//     all media spend: a channel one SD above zero would explain all of
//     the KPI if every channel performed like it. It only holds back ROIs
//     the data cannot settle (a saturated channel's level against the
//     intercept); it shrinks towards zero, never towards a favoured
//     channel. Set it from last quarter's estimate or a vendor study
//     where one exists.
var (
	DefaultDecayPrior   = Normal{Mean: 0.3, SD: 0.3}
	DefaultHalfSatPrior = LogNormal{Median: 1, LogSD: 1}
	DefaultShapePrior   = Normal{Mean: 1.5, SD: 0.75}
	DefaultPeakPrior    = Normal{Mean: 1, SD: 2}
)

// Priors is every channel's priors, resolved (no field unset).
type Priors []ChannelPriors

// WholeKPIROI is the KPI over the data divided by all media spend (the
// scale of the default ROI prior); 0 if there is no spend.
func (d *Design) WholeKPIROI(y []float64) float64 {
	var sy, sx float64
	for _, v := range y {
		sy += v
	}
	for _, x := range d.Spend {
		for _, v := range x {
			sx += v
		}
	}
	if sx <= 0 || sy <= 0 {
		return 0
	}
	return sy / sx
}

// ResolvePriors fills every prior the spec leaves unset with its default;
// the ROI default is scaled by y (WholeKPIROI).
func (d *Design) ResolvePriors(y []float64) Priors {
	r := d.WholeKPIROI(y)
	out := make(Priors, len(d.Spec.Channels))
	for k, c := range d.Spec.Channels {
		p := ChannelPriors{Decay: DefaultDecayPrior, HalfSaturation: DefaultHalfSatPrior, ROI: Normal{SD: r}, ROIDefault: true}
		if c.Prior.Decay.SD > 0 {
			p.Decay = c.Prior.Decay
		}
		if c.Prior.HalfSaturation.LogSD > 0 {
			p.HalfSaturation = c.Prior.HalfSaturation
		}
		if c.Prior.ROI.SD > 0 {
			p.ROI, p.ROIDefault = c.Prior.ROI, false
		}
		if c.Adstock == AdstockDelayed {
			pk := DefaultPeakPrior
			if c.Prior.Peak != nil && c.Prior.Peak.SD > 0 {
				pk = *c.Prior.Peak
			}
			p.Peak = &pk
		}
		if c.Saturation == SaturationHill {
			sh := DefaultShapePrior
			if c.Prior.Shape != nil && c.Prior.Shape.SD > 0 {
				sh = *c.Prior.Shape
			}
			p.Shape = &sh
		}
		out[k] = p
	}
	return out
}

// validate checks the priors a spec file sets: SDs positive (or
// zero, meaning the default), a positive median, finite values.
func (c *ChannelPriorsSpec) validate(field string) error {
	bad := func(f, format string, a ...any) error {
		return fmt.Errorf("%s.%s: %s", field, f, fmt.Sprintf(format, a...))
	}
	fin := func(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
	norm := func(f string, n *Normal) error {
		if n == nil {
			return nil
		}
		if !fin(n.Mean) || !fin(n.SD) || n.SD < 0 {
			return bad(f, "mean %g and sd %g must be finite, sd positive", n.Mean, n.SD)
		}
		return nil
	}
	for _, e := range []error{norm("decay", &c.Decay), norm("peak", c.Peak), norm("shape", c.Shape), norm("roi", &c.ROI)} {
		if e != nil {
			return e
		}
	}
	if h := c.HalfSaturation; !fin(h.Median) || !fin(h.LogSD) || h.LogSD < 0 || (h.LogSD > 0 && h.Median <= 0) {
		return bad("half_saturation", "median %g must be positive and log_sd %g positive", h.Median, h.LogSD)
	}
	if c.ROI.SD > 0 && c.ROI.Mean < 0 {
		return bad("roi", "mean %g must not be negative (media coefficients are non-negative)", c.ROI.Mean)
	}
	return nil
}

// ChannelPriorsSpec is the priors a spec sets for one channel; unset (zero
// SD) priors take the defaults (ResolvePriors).
type ChannelPriorsSpec struct {
	Decay          Normal    `yaml:"decay"`
	Peak           *Normal   `yaml:"peak"`
	HalfSaturation LogNormal `yaml:"half_saturation"`
	Shape          *Normal   `yaml:"shape"`
	ROI            Normal    `yaml:"roi"`
}

// thetaPriors lays the nonlinear priors out like the parameters (see
// Design.bounds), each with weight sigma.
func (d *Design) thetaPriors(p Priors, sigma float64) []varpro.Prior {
	var out []varpro.Prior
	for k, c := range d.Spec.Channels {
		cp := p[k]
		out = append(out, varpro.Prior{Center: cp.Decay.Mean, Scale: cp.Decay.SD, Weight: sigma})
		if c.Adstock == AdstockDelayed {
			out = append(out, varpro.Prior{Center: cp.Peak.Mean, Scale: cp.Peak.SD, Weight: sigma})
		}
		out = append(out, varpro.Prior{Center: math.Log(cp.HalfSaturation.Median), Scale: cp.HalfSaturation.LogSD, Weight: sigma, Log: true})
		if c.Saturation == SaturationHill {
			out = append(out, varpro.Prior{Center: cp.Shape.Mean, Scale: cp.Shape.SD, Weight: sigma})
		}
	}
	// A parameter fixed by its box (low = high) has no prior to weigh.
	lo, hi := d.bounds()
	for j := range out {
		if lo[j] == hi[j] {
			out[j] = varpro.Prior{}
		}
	}
	return out
}
