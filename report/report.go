// Package report writes the decision brief: one self-contained HTML page per
// decision, for the finance partner who signs it. The page reads the
// decision first (the verdict in a sentence, the money moved, the expected
// gain with its interval and the chance of a loss, who must sign and who has
// signed), then the moves, the charts, the evidence and what is needed to
// rerun the decision.
//
// The page fetches nothing: its style sheet is inline, its charts are inline
// SVG drawn with gonum.org/v1/plot, it has no script and names no URL, so it
// opens from disk and prints (each section starts a page; no chart is cut).
// Every colour comes from the Okabe–Ito palette, which stays distinct under
// the common colour-vision deficiencies, and every series also differs by
// marker shape, line dash or hatching, so the page still reads in greyscale;
// a check's status is always written as a word.
//
// The caller computes the chart data (the CLI has the draws and the model);
// this package only lays it out. Channel names and check details are user
// data and are escaped.
package report

import (
	"bytes"
	"errors"
	"fmt"
	"io"

	"sluice/internal/atomicfile"
	"sluice/record"
)

// CurveBand is one channel's horizon response curve over a grid of weekly
// spend, summarized over the draws.
type CurveBand struct {
	Channel string
	Spend   []float64 // weekly spend grid, increasing
	// P10, P50 and P90 are the horizon response (KPI value, currency) at
	// each grid point: the 80% band and the median over the draws.
	P10, P50, P90 []float64
	// SeenLow and SeenHigh bound the weekly spend the data has seen
	// (4-week averages); the chart shades the range between them.
	SeenLow, SeenHigh           float64
	Current, Proposed, Approved float64 // weekly spend
}

// Holdout is the model's forecast of the weeks held out of its fit, against
// what happened. Low and High bound the forecast band; both may be nil.
type Holdout struct {
	Weeks                       []string
	Actual, Forecast, Low, High []float64
}

// Money says what the brief's amounts mean: the currency they are in and
// how KPI becomes profit. The gain of a plan is, over the horizon,
// Margin × ValuePerKPI × (extra KPI) − (extra spend), against keeping
// current spend (optimize.Economics).
type Money struct {
	Currency    string  `json:"currency,omitempty"` // e.g. "EUR"; "" when the plan names none
	Margin      float64 `json:"margin"`             // share of KPI value that is profit
	ValuePerKPI float64 `json:"value_per_kpi"`      // currency per KPI unit
}

// Signature is one valid sign-off on the record, for the sign-off table.
type Signature struct {
	Role     string `json:"role"`
	KeyID    string `json:"key_id"`    // the signing key's fingerprint (record.KeyID)
	Signer   string `json:"signer"`    // who holds the key, as the policy lists it
	SignedAt string `json:"signed_at"` // UTC, "" when the sign-off did not record it
}

// Contributions split the fitted KPI of every week of the data into the
// base (intercept, trend, season, controls) and each channel's part; the
// fitted KPI is their sum.
type Contributions struct {
	Weeks    []string    `json:"weeks"` // ISO dates
	Actual   []float64   `json:"actual"`
	Base     []float64   `json:"base"`
	Channels []string    `json:"channels"`
	Media    [][]float64 `json:"media"` // per channel, per week
}

// BudgetPoint is the allocator's plan at one total budget, judged over
// the draws like the decision itself (before the policy's gate).
type BudgetPoint struct {
	Change       float64 `json:"change"` // against the status quo's total: -0.1 for -10%
	Budget       float64 `json:"budget"` // total spend over the horizon
	ExpectedGain float64 `json:"expected_gain"`
	P05          float64 `json:"p05"`
	P95          float64 `json:"p95"`
	// MarginalReturn is the profit, net of the spend itself, that one more
	// unit of weekly budget returns at this plan (the allocator's budget
	// multiplier); Known is false when the allocator could not confirm it.
	MarginalReturn float64 `json:"marginal_return"`
	Known          bool    `json:"marginal_known"`
	// Error says why the allocator found no plan at this budget (the
	// plan's constraints cannot all hold there); the figures are then 0.
	Error string `json:"error,omitempty"`
}

// Input is everything the brief shows.
type Input struct {
	Record     *record.Decision
	Signed     []string    // roles that have signed (from the signatures file); may be empty
	Signatures []Signature // the valid sign-offs, for the sign-off table; may be empty
	Curves     []CurveBand // one per channel
	Gains      []float64   // gain of the approved plan under each draw, currency over the horizon
	Holdout    *Holdout    // may be nil
	Title      string      // e.g. the company or brand; "" gives a generic title
	Money      *Money      // nil: currency unnamed, margin and value per KPI unknown to the brief
	// Contributions, when not nil, draws the base and channels over time
	// and the actual against the fitted KPI with its residuals.
	Contributions *Contributions
	Budget        []BudgetPoint // the budget view; may be empty
	// Effect, when not empty, draws each drifting channel's effectiveness
	// over time with its band (the decision's effectiveness choice).
	Effect []EffectPath
	// RecordSHA256 is the hex SHA-256 of the record file's exact bytes. The
	// brief names it in one marked place, read by `sluice verify --brief`:
	// <meta name="sluice-record-sha256" content="HEX"> in the head and the
	// footer line "Rendered from decision record SHA-256 HEX"
	// (record.BriefMetaName, record.BriefHashLabel). "" leaves both out.
	RecordSHA256 string
}

// ErrNoRecord is returned when the input has no decision record.
var ErrNoRecord = errors.New("report: the input has no decision record")

// Render writes the brief for in to w. Nothing is written when an error is
// returned. Slices of mismatched length panic.
func Render(w io.Writer, in Input) error {
	if in.Record == nil {
		return ErrNoRecord
	}
	checkLengths(in)
	v, err := newView(in)
	if err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := briefTemplate.Execute(&buf, v); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	_, err = buf.WriteTo(w)
	return err
}

// Write renders the brief into the file at path, atomically: a reader
// never sees a half-written brief, and on error the file is left as it was.
func Write(path string, in Input) error {
	if in.Record == nil {
		return ErrNoRecord
	}
	var buf bytes.Buffer
	if err := Render(&buf, in); err != nil {
		return err
	}
	return atomicfile.Write(path, buf.Bytes(), 0o644)
}

// checkLengths panics on slices of mismatched length: the caller built them.
func checkLengths(in Input) {
	for _, c := range in.Curves {
		n := len(c.Spend)
		if len(c.P10) != n || len(c.P50) != n || len(c.P90) != n {
			panic("report: curve " + c.Channel + ": spend, P10, P50 and P90 differ in length")
		}
	}
	if c := in.Contributions; c != nil {
		n := len(c.Weeks)
		if len(c.Actual) != n || len(c.Base) != n || len(c.Media) != len(c.Channels) {
			panic("report: contributions: weeks, actual, base and channels differ in length")
		}
		for _, m := range c.Media {
			if len(m) != n {
				panic("report: contributions: a channel's series differs in length from the weeks")
			}
		}
	}
	if h := in.Holdout; h != nil {
		n := len(h.Weeks)
		if len(h.Actual) != n || len(h.Forecast) != n {
			panic("report: holdout weeks, actual and forecast differ in length")
		}
		if (h.Low != nil && len(h.Low) != n) || (h.High != nil && len(h.High) != n) {
			panic("report: holdout band differs in length from its weeks")
		}
		if (h.Low == nil) != (h.High == nil) {
			panic("report: holdout band has only one side")
		}
	}
}
