package model

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"slices"
	"strings"
	"time"
)

// Event is a named set of dates on which something unusual happened or
// will happen: a holiday, a sale, an outage. The model gets one indicator
// column per event, 1 in every week that contains one of its dates and 0
// elsewhere, as a control: two Fourier harmonics of the year cannot follow
// a single peak week.
//
// Events come from a spec's events list or an events file (LoadEvents):
//
//	name,date
//	christmas,2023-12-25
//	christmas,2024-12-25
//	summer_sale,2024-07-01
type Event struct {
	Name  string   `yaml:"name"`
	Dates []string `yaml:"dates"` // ISO dates, YYYY-MM-DD
}

// EventPrefix starts the name of an event's indicator column, so that it
// cannot clash with a column of the data file.
const EventPrefix = "event:"

// MaxEventsBytes bounds an events file.
const MaxEventsBytes = 1 << 20

// LoadEvents reads an events file: CSV with the header name,date and one
// row per date of an event.
func LoadEvents(path string) ([]Event, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	data, err := io.ReadAll(io.LimitReader(f, MaxEventsBytes+1))
	if err != nil {
		return nil, err
	}
	if len(data) > MaxEventsBytes {
		return nil, &DataError{File: path, Msg: fmt.Sprintf("events file is larger than %d bytes", MaxEventsBytes)}
	}
	return ParseEvents(data, path)
}

// ParseEvents reads an events file's contents; source names it in errors,
// which give the line and column of the bad cell.
func ParseEvents(data []byte, source string) ([]Event, error) {
	data = bytes.TrimPrefix(data, []byte("\xef\xbb\xbf"))
	r := csv.NewReader(bytes.NewReader(data))
	r.FieldsPerRecord = 2
	r.ReuseRecord = true
	header, err := r.Read()
	if err != nil {
		return nil, eventsCSVError(source, err)
	}
	if strings.TrimSpace(header[0]) != "name" || strings.TrimSpace(header[1]) != "date" {
		return nil, &DataError{File: source, Line: 1, Msg: fmt.Sprintf("header %q, want name,date", strings.Join(header, ",")),
			Hint: "the first row of an events file is name,date; then one row per date of an event"}
	}
	var out []Event
	for {
		rec, err := r.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, eventsCSVError(source, err)
		}
		line, _ := r.FieldPos(0)
		name, date := strings.TrimSpace(rec[0]), strings.TrimSpace(rec[1])
		if err := checkEventName(name); err != nil {
			return nil, &DataError{File: source, Line: line, Column: 1, Msg: err.Error()}
		}
		if _, err := time.Parse(time.DateOnly, date); err != nil {
			_, col := r.FieldPos(1)
			return nil, &DataError{File: source, Line: line, Column: col, Msg: fmt.Sprintf("date %q of event %s is not an ISO date (YYYY-MM-DD)", date, name)}
		}
		i := slices.IndexFunc(out, func(e Event) bool { return e.Name == name })
		if i < 0 {
			out = append(out, Event{Name: name})
			i = len(out) - 1
		}
		out[i].Dates = append(out[i].Dates, date)
	}
	if len(out) == 0 {
		return nil, &DataError{File: source, Msg: "the events file lists no event"}
	}
	return out, nil
}

func eventsCSVError(source string, err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return &DataError{File: source, Line: pe.Line, Column: pe.Column, Msg: pe.Err.Error()}
	}
	if errors.Is(err, io.EOF) {
		return &DataError{File: source, Msg: "the events file is empty", Hint: "the first row of an events file is name,date"}
	}
	return &DataError{File: source, Msg: err.Error()}
}

func checkEventName(name string) error {
	if name == "" {
		return errors.New("event name is empty")
	}
	if len(name) > 64 || strings.ContainsAny(name, ",\"\n\r\t") {
		return fmt.Errorf("event name %q: want a short name without commas, quotes or line breaks", name)
	}
	return nil
}

// AddEvents appends one indicator column per event to the panel's
// controls and returns their names (EventPrefix + event name), for the
// spec's controls. A date outside the data's weeks is kept out of the
// data (it matters for a forecast, not the fit). An event whose column
// would be constant over the data (no week, or every week) or equal to an
// earlier event's is refused: the fit could not tell it from the base.
func AddEvents(p *Panel, events []Event, source string) ([]string, error) {
	n := p.NumWeeks()
	var names []string
	var cols [][]float64
	for _, e := range events {
		if err := checkEventName(e.Name); err != nil {
			return nil, fmt.Errorf("%s: %w", source, err)
		}
		name := EventPrefix + e.Name
		if slices.Contains(names, name) || slices.Contains(p.Controls, name) {
			return nil, fmt.Errorf("%s: event %s is given twice", source, e.Name)
		}
		col := make([]float64, n)
		for _, ds := range e.Dates {
			d, err := time.Parse(time.DateOnly, strings.TrimSpace(ds))
			if err != nil {
				return nil, fmt.Errorf("%s: event %s: date %q is not an ISO date (YYYY-MM-DD)", source, e.Name, ds)
			}
			if t, ok := p.weekOf(d); ok {
				col[t] = 1
			}
		}
		on := 0
		for _, v := range col {
			on += int(v)
		}
		switch {
		case on == 0:
			return nil, fmt.Errorf("%s: event %s falls in no week of the data (%s to %s)", source, e.Name,
				p.Weeks[0].Format(time.DateOnly), p.Weeks[n-1].Format(time.DateOnly))
		case on == n:
			return nil, fmt.Errorf("%s: event %s falls in every week of the data; the base already carries a constant", source, e.Name)
		}
		for j, c := range cols {
			if slices.Equal(c, col) {
				return nil, fmt.Errorf("%s: events %s and %s fall in the same weeks; the fit cannot tell them apart", source, strings.TrimPrefix(names[j], EventPrefix), e.Name)
			}
		}
		names = append(names, name)
		cols = append(cols, col)
	}
	p.Controls = append(p.Controls, names...)
	p.Control = append(p.Control, cols...)
	return names, nil
}

// weekOf returns the index of the week of the data that contains d: the
// week starting on its date and running 7 days.
func (p *Panel) weekOf(d time.Time) (int, bool) {
	n := p.NumWeeks()
	if n == 0 || d.Before(p.Weeks[0]) || !d.Before(p.Weeks[n-1].AddDate(0, 0, 7)) {
		return 0, false
	}
	i := int(d.Sub(p.Weeks[0]).Hours() / 24 / 7)
	return i, true
}
