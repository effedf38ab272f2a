package main

import (
	"encoding/csv"
	"io"
	"strings"
	"time"

	"sluice/record"
	"sluice/uncertainty"
)

// The CSV files sluice writes for spreadsheets share one convention: a
// header row of snake_case names, one row per item, amounts as plain
// decimals (a dot, no thousands separator, never scientific notation),
// weekly spend in the plan's currency, shares as fractions (0.85).

// movesCSV is DIR/moves.csv: per channel, the weekly spend now, proposed
// and approved, the safe step and the gate's reasons.
const movesCSV = "moves.csv"

// planCSV is DIR/plan.csv: the approved plan, one row per week of the
// horizon and one column per channel.
const planCSV = "plan.csv"

// decisionCSVs returns the decision's spreadsheet files, name → bytes.
func decisionCSVs(rec *record.Decision) (map[string][]byte, error) {
	var moves strings.Builder
	cw := csv.NewWriter(&moves)
	rows := [][]string{{"channel", "current", "proposed", "approved", "change_approved", "safe_step", "safe_step_per_week", "reasons"}}
	for _, m := range rec.Moves {
		rows = append(rows, []string{m.Channel, csvNumber(m.Current, 2), csvNumber(m.Proposed, 2), csvNumber(m.Approved, 2),
			csvNumber(m.Approved-m.Current, 2), csvNumber(m.SafeStep, 4), csvNumber(m.SafeStepPerWeek, 2), strings.Join(m.Reasons, " | ")})
	}
	if err := cw.WriteAll(rows); err != nil {
		return nil, err
	}

	var plan strings.Builder
	pw := csv.NewWriter(&plan)
	head := append([]string{"week"}, rec.Channels...)
	rows = [][]string{head}
	start, err := time.Parse(time.DateOnly, rec.Forecast.Start)
	for i := range rec.Horizon {
		week := "week " + csvNumber(float64(i+1), 0)
		if err == nil {
			week = start.AddDate(0, 0, 7*i).Format(time.DateOnly)
		}
		row := []string{week}
		for k := range rec.Channels {
			v := 0.0
			if k < len(rec.ApprovedPlan) {
				v = rec.ApprovedPlan[k]
			}
			row = append(row, csvNumber(v, 2))
		}
		rows = append(rows, row)
	}
	if err := pw.WriteAll(rows); err != nil {
		return nil, err
	}
	return map[string][]byte{movesCSV: []byte(moves.String()), planCSV: []byte(plan.String())}, nil
}

// writeBandsCSVPlain writes response-curve bands under the convention
// above: one row per channel and weekly spend level, the horizon response
// in KPI units.
func writeBandsCSVPlain(w io.Writer, rb []uncertainty.ChannelResponse) error {
	cw := csv.NewWriter(w)
	if err := cw.Write([]string{"channel", "spend", "response_median", "response_p10", "response_p90", "response_p05", "response_p95"}); err != nil {
		return err
	}
	for _, c := range rb {
		for _, p := range c.Points {
			if err := cw.Write([]string{c.Name, csvNumber(p.Spend, 2), csvNumber(p.Median, 4), csvNumber(p.P10, 4), csvNumber(p.P90, 4), csvNumber(p.P05, 4), csvNumber(p.P95, 4)}); err != nil {
				return err
			}
		}
	}
	cw.Flush()
	return cw.Error()
}
