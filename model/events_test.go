package model

import (
	"errors"
	"slices"
	"strings"
	"testing"
	"time"
)

func eventPanel() *Panel {
	p := &Panel{Source: "weekly.csv", KPIName: "revenue", Channels: []string{"search"}}
	start := time.Date(2024, 12, 16, 0, 0, 0, 0, time.UTC) // a Monday
	for i := range 5 {
		p.Weeks = append(p.Weeks, start.AddDate(0, 0, 7*i))
		p.KPI = append(p.KPI, 100)
	}
	p.Spend = [][]float64{{1, 2, 3, 4, 5}}
	return p
}

// TestAddEvents: the indicator of each event is 1 in the weeks that hold
// one of its dates. The weeks are 2024-12-16, -23, -30, 2025-01-06, -13;
// the expected columns are read off a calendar by hand.
func TestAddEvents(t *testing.T) {
	p := eventPanel()
	names, err := AddEvents(p, []Event{
		{Name: "christmas", Dates: []string{"2024-12-25", "2023-12-25"}}, // a Wednesday; the 2023 date is before the data
		{Name: "new_year", Dates: []string{"2025-01-01"}},
		{Name: "sale", Dates: []string{"2025-01-06", "2025-01-19", "2025-01-20"}}, // a week's first and last day; the 20th is after the data
	}, "spec.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if want := []string{"event:christmas", "event:new_year", "event:sale"}; !slices.Equal(names, want) || !slices.Equal(p.Controls, want) {
		t.Fatalf("names %q, controls %q, want %q", names, p.Controls, want)
	}
	want := [][]float64{{0, 1, 0, 0, 0}, {0, 0, 1, 0, 0}, {0, 0, 0, 1, 1}}
	for k := range want {
		if !slices.Equal(p.Control[k], want[k]) {
			t.Errorf("%s: %v, want %v", names[k], p.Control[k], want[k])
		}
	}
}

func TestAddEventsRefuses(t *testing.T) {
	for _, tt := range []struct {
		name   string
		events []Event
		want   string
	}{
		{"no week of the data", []Event{{Name: "old", Dates: []string{"2020-01-01"}}}, "falls in no week of the data (2024-12-16 to 2025-01-13)"},
		{"every week", []Event{{Name: "always", Dates: []string{"2024-12-16", "2024-12-23", "2024-12-30", "2025-01-06", "2025-01-13"}}}, "every week"},
		{"same weeks", []Event{{Name: "a", Dates: []string{"2024-12-24"}}, {Name: "b", Dates: []string{"2024-12-26"}}}, "events a and b fall in the same weeks"},
		{"twice", []Event{{Name: "a", Dates: []string{"2024-12-24"}}, {Name: "a", Dates: []string{"2025-01-06"}}}, "event a is given twice"},
		{"bad date", []Event{{Name: "a", Dates: []string{"24/12/2024"}}}, `date "24/12/2024" is not an ISO date`},
		{"bad name", []Event{{Name: "a,b", Dates: []string{"2024-12-24"}}}, "without commas"},
	} {
		t.Run(tt.name, func(t *testing.T) {
			p := eventPanel()
			_, err := AddEvents(p, tt.events, "spec.yaml")
			if err == nil || !strings.Contains(err.Error(), tt.want) || !strings.HasPrefix(err.Error(), "spec.yaml: ") {
				t.Errorf("err = %v, want spec.yaml: ...%s", err, tt.want)
			}
			if len(p.Controls) != 0 || len(p.Control) != 0 {
				t.Errorf("a refused event changed the panel")
			}
		})
	}
}

// TestParseEvents: rows group into events in file order; bad cells are
// named by line and column (1-based, as encoding/csv counts them).
func TestParseEvents(t *testing.T) {
	ev, err := ParseEvents([]byte("\xef\xbb\xbfname,date\r\nchristmas,2024-12-25\r\nsale,2024-07-01\r\nchristmas,2023-12-25\r\n"), "events.csv")
	if err != nil {
		t.Fatal(err)
	}
	want := []Event{{Name: "christmas", Dates: []string{"2024-12-25", "2023-12-25"}}, {Name: "sale", Dates: []string{"2024-07-01"}}}
	if len(ev) != 2 || ev[0].Name != want[0].Name || !slices.Equal(ev[0].Dates, want[0].Dates) || ev[1].Name != want[1].Name || !slices.Equal(ev[1].Dates, want[1].Dates) {
		t.Errorf("events %+v, want %+v", ev, want)
	}
	for _, tt := range []struct{ src, want string }{
		{"", "events.csv: the events file is empty"},
		{"event,day\n", "events.csv:1: header"},
		{"name,date\n", "events.csv: the events file lists no event"},
		{"name,date\nxmas,25.12.2024\n", `events.csv:2:6: date "25.12.2024" of event xmas is not an ISO date`},
		{"name,date\n,2024-12-25\n", "events.csv:2:1: event name is empty"},
		{"name,date\nxmas\n", "events.csv:2:"},
	} {
		_, err := ParseEvents([]byte(tt.src), "events.csv")
		var de *DataError
		if err == nil || !errors.As(err, &de) || !strings.HasPrefix(err.Error(), tt.want) {
			t.Errorf("%q: err = %v, want %q...", tt.src, err, tt.want)
		}
	}
}

func FuzzParseEvents(f *testing.F) {
	f.Add([]byte("name,date\nchristmas,2024-12-25\n"))
	f.Add([]byte("name,date\n\"a\"\"b\",2024-01-01\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		ev, err := ParseEvents(data, "events.csv")
		if err != nil {
			return
		}
		for _, e := range ev {
			if checkEventName(e.Name) != nil || len(e.Dates) == 0 {
				t.Fatalf("accepted event %+v", e)
			}
			for _, d := range e.Dates {
				if _, err := time.Parse(time.DateOnly, d); err != nil {
					t.Fatalf("accepted date %q", d)
				}
			}
		}
	})
}
