package uncertainty

import (
	"sluice/internal/sample"
	"sluice/model"
)

// QuantileType is the sample-quantile definition of every band: Hyndman &
// Fan (1996) type 8 (sample.Default).
const QuantileType = sample.Default

// Band is the spread of one quantity over the draws: its median and the
// ends of its central 80% (P10, P90) and 90% (P05, P95) intervals, as
// Hyndman–Fan type 8 sample quantiles (percentile intervals).
type Band struct {
	Median float64 `json:"median"`
	P05    float64 `json:"p05"`
	P10    float64 `json:"p10"`
	P90    float64 `json:"p90"`
	P95    float64 `json:"p95"`
}

// NewBand summarizes x, which must not be empty. x is not changed.
func NewBand(x []float64) Band {
	s := sample.Sorted(x)
	q := func(p float64) float64 { return sample.Quantile(s, p, QuantileType) }
	return Band{Median: q(0.5), P05: q(0.05), P10: q(0.10), P90: q(0.90), P95: q(0.95)}
}

// ChannelBands are the bands of one channel's ROI over the data and its
// marginal ROI at current spend over the horizon (model.ChannelSummary).
type ChannelBands struct {
	Name string `json:"name"`
	ROI  Band   `json:"roi"`
	MROI Band   `json:"mroi"`
}

// SummarizeDraws returns each channel's ROI and marginal-ROI bands over the
// parameter draws (successful replicates only: Draws.Params), with the
// model's definitions (model.Design.Summarize). draws must not be empty.
func SummarizeDraws(d *model.Design, draws []model.Params, valuePerKPI float64) []ChannelBands {
	if len(draws) == 0 {
		panic("uncertainty: SummarizeDraws of no draws")
	}
	K := len(d.Spec.Channels)
	roi := make([][]float64, K)
	mroi := make([][]float64, K)
	for _, p := range draws {
		for k, s := range d.Summarize(p, valuePerKPI) {
			roi[k] = append(roi[k], s.ROI)
			mroi[k] = append(mroi[k], s.MROI)
		}
	}
	out := make([]ChannelBands, K)
	for k, c := range d.Spec.Channels {
		out[k] = ChannelBands{Name: c.Name, ROI: NewBand(roi[k]), MROI: NewBand(mroi[k])}
	}
	return out
}

// GridPoints is the number of spend levels of a response band.
const GridPoints = 41

// SpendGrid returns points evenly spaced weekly spend levels from 0 to top.
// points must be at least 2.
func SpendGrid(top float64, points int) []float64 {
	if points < 2 {
		panic("uncertainty: spend grid needs at least 2 points")
	}
	g := make([]float64, points)
	for i := range g {
		g[i] = top * (float64(i) / float64(points-1)) // ends exactly at top
	}
	return g
}

// ResponsePoint is the band of a channel's horizon response R(w) (KPI
// units, model.Curve) at weekly spend w.
type ResponsePoint struct {
	Spend float64
	Band
}

// ChannelResponse is one channel's response band over its spend grid.
type ChannelResponse struct {
	Name   string
	Points []ResponsePoint
}

// ResponseBands evaluates every draw's horizon response (model.Design.
// NewCurves with horizon h) at GridPoints weekly spend levels per channel,
// from 0 to twice the highest 4-week average spend the data has seen
// (model.Design.Support, the top of the support guard's range), and
// summarizes it per level. draws must not be empty.
func ResponseBands(d *model.Design, draws []model.Params, h int) []ChannelResponse {
	if len(draws) == 0 {
		panic("uncertainty: ResponseBands of no draws")
	}
	curves := d.NewCurves(draws, h)
	_, high := d.Support()
	out := make([]ChannelResponse, len(d.Spec.Channels))
	r := make([]float64, len(draws))
	for k, c := range d.Spec.Channels {
		grid := SpendGrid(2*high[k], GridPoints)
		cr := ChannelResponse{Name: c.Name, Points: make([]ResponsePoint, len(grid))}
		for i, w := range grid {
			for j := range draws {
				r[j], _ = curves.Eval(j, k, w)
			}
			cr.Points[i] = ResponsePoint{Spend: w, Band: NewBand(r)}
		}
		out[k] = cr
	}
	return out
}
