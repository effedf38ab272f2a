// Package model holds the weekly response model: loading and checking a
// weekly panel, the adstock and saturation transforms, the fit by variable
// projection, prediction, contributions and horizon response curves.
package model

import "time"

// Panel is a weekly data set: one row per consecutive week.
type Panel struct {
	Source   string      // file name, for messages
	Weeks    []time.Time // first day of each week, strictly 7 days apart
	DateName string      // the date column's name in the file; "" means "week"
	KPIName  string
	KPI      []float64   // per week
	Channels []string    // spend column names
	Spend    [][]float64 // [channel][week], currency, >= 0
	Controls []string    // control column names
	Control  [][]float64 // [control][week]
}

// NumWeeks returns the number of weeks in the panel.
func (p *Panel) NumWeeks() int { return len(p.Weeks) }
