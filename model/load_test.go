package model

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"
	"time"

	"sluice/internal/refcheck"
)

// The panel every refusal case below starts from. Each data row has the same
// layout, so a cell's byte column (1-based, as encoding/csv's FieldPos counts
// it) is the same on every line, counted by hand:
//
//	week 1, revenue 12, tv 17, social 21, price 25, note 29
//
// and in the header: week 1, revenue 6, tv 14, social 17, price 24, note 30.
const (
	head = "week,revenue,tv,social,price,note\n"
	row1 = "2024-01-01,1000,100,050,9.5,a\n"
	row2 = "2024-01-08,1100,120,060,9.5,b\n"
)

var baseCols = Columns{KPI: "revenue", Channels: []string{"tv", "social"}, Controls: []string{"price"}}

func TestReadPanelRefuses(t *testing.T) {
	noWeek := "revenue,tv,social,price,note\n1000,100,050,9.5,a\n"
	cases := []struct {
		name   string
		csv    string
		cols   Columns // zero means baseCols
		prefix string  // exact "file:line:col:" (or shorter) start of Error()
		words  []string
		hint   string // a part of Hint, or "" for no check
	}{
		// Cells that are not numbers, by role.
		{name: "spend not a number", csv: head + row1 + "2024-01-08,1100,abc,060,9.5,b\n",
			prefix: "weekly.csv:3:17: ", words: []string{`spend "abc" in column "tv" is not a number`}},
		{name: "kpi not a number", csv: head + row1 + "2024-01-08,n/a,120,060,9.5,b\n",
			prefix: "weekly.csv:3:12: ", words: []string{`kpi value "n/a" in column "revenue" is not a number`}},
		{name: "control not a number", csv: head + row1 + "2024-01-08,1100,120,060,high,b\n",
			prefix: "weekly.csv:3:25: ", words: []string{`control value "high" in column "price" is not a number`}},
		// strconv.ParseFloat would take hexadecimal; a CSV number is decimal
		// (common practice, no source).
		{name: "hexadecimal", csv: head + row1 + "2024-01-08,1100,0x10,060,9.5,b\n",
			prefix: "weekly.csv:3:17: ", words: []string{`spend "0x10"`, "not a number"}},
		{name: "currency sign", csv: head + row1 + "2024-01-08,1100,$120,060,9.5,b\n",
			prefix: "weekly.csv:3:17: ", words: []string{`spend "$120"`, "not a number"}, hint: "currency"},
		// Thousands separators: the quoted "1,100" (RFC 4180 section 2 rule 6
		// lets a quoted field hold a comma), a blank, and the European
		// 1.100.000; FieldPos points a quoted field at its opening quote.
		{name: "thousands comma", csv: head + row1 + "2024-01-08,\"1,100\",120,060,9.5,b\n",
			prefix: "weekly.csv:3:12: ", words: []string{`kpi value "1,100"`, "not a number"}, hint: "thousands separators"},
		{name: "thousands blank", csv: head + row1 + "2024-01-08,1 100,120,060,9.5,b\n",
			prefix: "weekly.csv:3:12: ", words: []string{`kpi value "1 100"`, "not a number"}, hint: "thousands separators"},
		{name: "thousands dots", csv: head + row1 + "2024-01-08,1.100.000,120,060,9.5,b\n",
			prefix: "weekly.csv:3:12: ", words: []string{`"1.100.000"`, "not a number"}, hint: "thousands separators"},

		// Not finite: IEEE 754 NaN and infinities, and a value beyond the
		// largest binary64 number, about 1.8e308 (IEEE 754-2019, table 3.5).
		{name: "NaN spend", csv: head + row1 + "2024-01-08,1100,120,NaN,9.5,b\n",
			prefix: "weekly.csv:3:21: ", words: []string{`spend "NaN" in column "social" is not a finite number`}},
		{name: "Inf kpi", csv: head + row1 + "2024-01-08,+Inf,120,060,9.5,b\n",
			prefix: "weekly.csv:3:12: ", words: []string{`kpi value "+Inf"`, "not a finite number"}},
		{name: "infinite control", csv: head + row1 + "2024-01-08,1100,120,060,-infinity,b\n",
			prefix: "weekly.csv:3:25: ", words: []string{`control value "-infinity"`, "not a finite number"}},
		{name: "overflow", csv: head + row1 + "2024-01-08,1100,1e309,060,9.5,b\n",
			prefix: "weekly.csv:3:17: ", words: []string{`spend "1e309"`, "not a finite number"}},

		// Empty cells.
		{name: "empty spend", csv: head + row1 + "2024-01-08,1100,,060,9.5,b\n",
			prefix: "weekly.csv:3:17: ", words: []string{`spend in column "tv" is empty`}, hint: "write 0"},
		{name: "empty kpi", csv: head + row1 + "2024-01-08,,120,060,9.5,b\n",
			prefix: "weekly.csv:3:12: ", words: []string{`kpi value in column "revenue" is empty`}},
		{name: "empty control", csv: head + row1 + "2024-01-08,1100,120,060,,b\n",
			prefix: "weekly.csv:3:25: ", words: []string{`control value in column "price" is empty`}},
		{name: "blank spend", csv: head + row1 + "2024-01-08,1100,  ,060,9.5,b\n",
			prefix: "weekly.csv:3:17: ", words: []string{`spend in column "tv" is empty`}},

		// Negative spend and KPI.
		{name: "negative spend", csv: head + row1 + "2024-01-08,1100,-5,060,9.5,b\n",
			prefix: "weekly.csv:3:17: ", words: []string{`spend "-5" in column "tv" is negative`}},
		{name: "negative kpi", csv: head + row1 + "2024-01-08,-1e2,120,060,9.5,b\n",
			prefix: "weekly.csv:3:12: ", words: []string{`kpi value "-1e2" in column "revenue" is negative`}},

		// Dates (ISO 8601 calendar dates, extended format YYYY-MM-DD).
		{name: "not ISO date", csv: head + row1 + "01/08/2024,1100,120,060,9.5,b\n",
			prefix: "weekly.csv:3:1: ", words: []string{`date "01/08/2024" in column "week" is not YYYY-MM-DD`}, hint: "dates must be YYYY-MM-DD"},
		{name: "date and time", csv: head + row1 + "2024-01-08T00:00:00,1100,120,060,9.5,b\n",
			prefix: "weekly.csv:3:1: ", words: []string{`"2024-01-08T00:00:00"`, "is not YYYY-MM-DD"}, hint: "dates must be YYYY-MM-DD"},
		{name: "one-digit month", csv: head + "2024-1-01,1000,100,050,9.5,a\n",
			prefix: "weekly.csv:2:1: ", words: []string{`"2024-1-01"`, "is not YYYY-MM-DD"}},
		// 2023 is not a leap year in the Gregorian calendar (divisible by 4,
		// not by 100 unless by 400; ISO 8601 uses the Gregorian calendar).
		{name: "no such day", csv: head + "2023-02-29,1000,100,050,9.5,a\n",
			prefix: "weekly.csv:2:1: ", words: []string{`date "2023-02-29" in column "week" is not a calendar date`}},
		{name: "1900 not leap", csv: head + "1900-02-29,1000,100,050,9.5,a\n",
			prefix: "weekly.csv:2:1: ", words: []string{`"1900-02-29"`, "not a calendar date"}},
		{name: "month 13", csv: head + "2024-13-01,1000,100,050,9.5,a\n",
			prefix: "weekly.csv:2:1: ", words: []string{`"2024-13-01"`, "not a calendar date"}},
		{name: "first column is not a date", csv: "revenue,tv,social,price,note\n" + "1000,100,050,9.5,a\n",
			cols:   Columns{KPI: "tv", Channels: []string{"social"}},
			prefix: "weekly.csv:2:1: ", words: []string{`date "1000" in column "revenue" is not YYYY-MM-DD`}, hint: `no "week" column`},
		{name: "unnamed first column", csv: ",revenue,tv\n0,1000,100\n",
			cols:   Columns{KPI: "revenue", Channels: []string{"tv"}},
			prefix: "weekly.csv:2:1: ", words: []string{`date "0" in the unnamed column 1 is not YYYY-MM-DD`}},
		{name: "empty date", csv: head + row1 + ",1100,120,060,9.5,b\n",
			prefix: "weekly.csv:3:1: ", words: []string{`date in column "week" is empty`}},

		// Week sequence.
		{name: "duplicate week", csv: head + row1 + "2024-01-01,1100,120,060,9.5,b\n",
			prefix: "weekly.csv:3:1: ", words: []string{"week 2024-01-01 appears twice (lines 2 and 3)"}},
		{name: "missing week", csv: head + row1 + "2024-01-15,1100,120,060,9.5,b\n",
			prefix: "weekly.csv:3:1: ", words: []string{"week 2024-01-08 is missing", "from 2024-01-01 to 2024-01-15"}},
		{name: "missing weeks", csv: head + row1 + "2024-01-29,1100,120,060,9.5,b\n",
			prefix: "weekly.csv:3:1: ", words: []string{"3 weeks are missing, 2024-01-08 to 2024-01-22"}},
		{name: "out of order", csv: head + row2 + row1,
			prefix: "weekly.csv:3:1: ", words: []string{"rows are out of order: week 2024-01-01 (line 3) comes after week 2024-01-08 (line 2)"}, hint: "sort"},
		// Weeks 1, 3, 2: the jump from 1 to 3 looks like a missing week, but
		// the next row shows the rows are only out of order.
		{name: "out of order after a jump", csv: head + row1 + "2024-01-15,1100,120,060,9.5,b\n" + row2,
			prefix: "weekly.csv:4:1: ", words: []string{"rows are out of order: week 2024-01-08 (line 4) comes after week 2024-01-15 (line 3)"}, hint: "sort"},
		// A real jump is still reported first when a later row has another problem.
		{name: "missing week before a bad cell", csv: head + row1 + "2024-01-15,1100,120,060,9.5,b\n" + "2024-01-22,x,120,060,9.5,b\n",
			prefix: "weekly.csv:3:1: ", words: []string{"week 2024-01-08 is missing"}},
		// A huge cell is quoted only in part (40 bytes) with its length.
		{name: "huge cell", csv: head + "2024-01-01," + strings.Repeat("9x", 5000) + ",100,050,9.5,a\n",
			prefix: "weekly.csv:2:12: ", words: []string{`kpi value "9x9x9x9x9x9x9x9x9x9x9x9x9x9x9x9x9x9x9x9x"… (10000 bytes) in column "revenue" is not a number`}},
		{name: "not 7 days apart", csv: head + row1 + "2024-01-09,1100,120,060,9.5,b\n",
			prefix: "weekly.csv:3:1: ", words: []string{"week 2024-01-09 is 8 days after week 2024-01-01", "exactly 7 days apart"}},
		{name: "daily rows", csv: head + row1 + "2024-01-02,1100,120,060,9.5,b\n",
			prefix: "weekly.csv:3:1: ", words: []string{"is 1 day after"}},

		// Row shape.
		{name: "too few fields", csv: head + row1 + "2024-01-08,1100,120,060,9.5\n",
			prefix: "weekly.csv:3:28: ", words: []string{`row has 5 fields, the header has 6: the row ends before column "note" (field 6)`}},
		// An unquoted 1,100 splits into two fields; the error points at the
		// first field beyond the header's six ("b", byte 30).
		{name: "too many fields", csv: head + row1 + "2024-01-08,1,100,120,060,9.5,b\n",
			prefix: "weekly.csv:3:30: ", words: []string{"row has 7 fields, the header has 6"}, hint: "thousands separators"},
		// Bare and unbalanced quotes break RFC 4180 section 2 rules 5 and 7;
		// encoding/csv reports where it noticed.
		{name: "bare quote", csv: head + row1 + "2024-01-08,1100,12\"0,060,9.5,b\n",
			prefix: "weekly.csv:3:19: ", words: []string{`bare "`}, hint: "double quotes"},
		{name: "unclosed quote", csv: head + row1 + "2024-01-08,1100,120,060,9.5,\"b\n",
			prefix: "weekly.csv:3:", words: []string{`missing "`}, hint: "closing"},

		// Header.
		{name: "column twice in header", csv: "week,revenue,tv,social,tv,note\n" + row1,
			prefix: "weekly.csv:1:24: ", words: []string{`header names column "tv" twice (fields 3 and 5)`}},
		{name: "channel not in header", csv: head + row1,
			cols:   Columns{KPI: "revenue", Channels: []string{"tv", "search"}},
			prefix: "weekly.csv:1: ", words: []string{`channel column "search" is not in the header`},
			hint: `available columns: "week", "revenue", "tv", "social", "price", "note"`},
		{name: "kpi not in header", csv: head + row1,
			cols:   Columns{KPI: "sales", Channels: []string{"tv"}},
			prefix: "weekly.csv:1: ", words: []string{`kpi column "sales" is not in the header`}, hint: `"revenue"`},
		{name: "control not in header", csv: head + row1,
			cols:   Columns{KPI: "revenue", Channels: []string{"tv"}, Controls: []string{"temp"}},
			prefix: "weekly.csv:1: ", words: []string{`control column "temp" is not in the header`}},
		{name: "date not in header", csv: head + row1,
			cols:   Columns{Date: "date", KPI: "revenue", Channels: []string{"tv"}},
			prefix: "weekly.csv:1: ", words: []string{`date column "date" is not in the header`}},
		{name: "wrong case", csv: head + row1,
			cols:   Columns{KPI: "revenue", Channels: []string{"TV"}},
			prefix: "weekly.csv:1: ", words: []string{`"TV" is not in the header`}, hint: `did you mean "tv"?`},
		{name: "no header row", csv: row1 + row2,
			prefix: "weekly.csv:1: ", words: []string{`kpi column "revenue" is not in the header`}, hint: "looks like data"},
		{name: "CR-only line endings", csv: strings.ReplaceAll(head+row1+row2, "\n", "\r"),
			prefix: "weekly.csv:1: ", words: []string{"carriage return"}, hint: "line endings"},
		{name: "UTF-16", csv: "\xff\xfew\x00e\x00e\x00k\x00",
			prefix: "weekly.csv: ", words: []string{"UTF-16"}, hint: "UTF-8"},

		// Roles.
		{name: "channel and control", csv: head + row1,
			cols:   Columns{KPI: "revenue", Channels: []string{"tv", "price"}, Controls: []string{"price"}},
			prefix: "weekly.csv: ", words: []string{`column "price" is given two roles: channel and control`}},
		{name: "kpi and channel", csv: head + row1,
			cols:   Columns{KPI: "revenue", Channels: []string{"revenue"}},
			prefix: "weekly.csv: ", words: []string{`column "revenue" is given two roles: kpi and channel`}},
		{name: "date and control", csv: head + row1,
			cols:   Columns{KPI: "revenue", Channels: []string{"tv"}, Controls: []string{"week"}},
			prefix: "weekly.csv: ", words: []string{`column "week" is given two roles: date and control`}},
		{name: "first column taken as date is the kpi", csv: noWeek,
			prefix: "weekly.csv: ", words: []string{`column "revenue" is given two roles: date and kpi`}, hint: "name the date column"},
		{name: "channel twice", csv: head + row1,
			cols:   Columns{KPI: "revenue", Channels: []string{"tv", "tv"}},
			prefix: "weekly.csv: ", words: []string{`channel column "tv" is named twice`}},
		{name: "no kpi", csv: head + row1, cols: Columns{Channels: []string{"tv"}},
			prefix: "weekly.csv: ", words: []string{"no kpi column"}},
		{name: "no channels", csv: head + row1, cols: Columns{KPI: "revenue"},
			prefix: "weekly.csv: ", words: []string{"no channel columns"}},

		// Whole columns and whole file; column problems point at the header cell.
		{name: "all-zero kpi", csv: head + "2024-01-01,0,100,050,9.5,a\n2024-01-08,0.0,120,060,9.5,b\n",
			prefix: "weekly.csv:1:6: ", words: []string{`kpi column "revenue" is zero in all 2 weeks`}},
		{name: "all-zero channel", csv: head + "2024-01-01,1000,100,0,9.5,a\n2024-01-08,1100,120,-0,9.5,b\n",
			prefix: "weekly.csv:1:17: ", words: []string{`channel "social" has zero spend in all 2 weeks`}},
		{name: "no data rows", csv: head,
			prefix: "weekly.csv:1: ", words: []string{"no data rows"}},
		{name: "empty file", csv: "",
			prefix: "weekly.csv: ", words: []string{"file is empty"}},
		{name: "BOM only", csv: "\xef\xbb\xbf",
			prefix: "weekly.csv: ", words: []string{"file is empty"}},

		// Line numbers count the lines inside a quoted field (RFC 4180 section
		// 2 rule 6 allows line breaks there): the bad cell is on line 5.
		{name: "line after multi-line field", csv: head + "2024-01-01,1000,100,050,9.5,\"two\nlines\"\n" + row2 + "2024-01-15,1100,xyz,060,9.5,c\n",
			prefix: "weekly.csv:5:17: ", words: []string{`spend "xyz"`}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			cols := c.cols
			if cols.KPI == "" && cols.Channels == nil {
				cols = baseCols
			}
			p, err := ReadPanel(strings.NewReader(c.csv), "weekly.csv", cols)
			if err == nil {
				t.Fatalf("accepted: %+v", p)
			}
			var de *DataError
			if !errors.As(err, &de) {
				t.Fatalf("error %T %v, want *DataError", err, err)
			}
			msg := err.Error()
			if !strings.HasPrefix(msg, c.prefix) {
				t.Errorf("error %q, want prefix %q", msg, c.prefix)
			}
			for _, w := range c.words {
				if !strings.Contains(msg, w) {
					t.Errorf("error %q lacks %q", msg, w)
				}
			}
			if !strings.Contains(de.Hint, c.hint) {
				t.Errorf("hint %q lacks %q", de.Hint, c.hint)
			}
		})
	}
}

func TestReadPanel(t *testing.T) {
	// Numbers in every form the loader takes: a leading '+', a leading '.',
	// exponents (upper and lower case), leading zeros, blanks around a
	// cell; a negative control; a quoted ignored cell holding a comma and a
	// line break (RFC 4180 section 2 rules 5-7). The weeks cross the leap
	// day of 2024 (Gregorian calendar: 2024-02-26 + 7 days = 2024-03-04).
	const in = "week,revenue,tv,extra,social,price\n" +
		"2024-02-19,+1.5e3,100,\"x, \"\"y\"\"\nz\",.5,-2\n" +
		"2024-02-26,1E2,0, ,0,  3.25 \n" +
		"2024-03-04, 0 ,007,,2.5e-1,-1e-3\n"
	p, err := ReadPanel(strings.NewReader(in), "in.csv", Columns{KPI: "revenue", Channels: []string{"social", "tv"}, Controls: []string{"price"}})
	if err != nil {
		t.Fatal(err)
	}
	want := &Panel{
		Source:   "in.csv",
		DateName: "week",
		Weeks: []time.Time{
			time.Date(2024, 2, 19, 0, 0, 0, 0, time.UTC),
			time.Date(2024, 2, 26, 0, 0, 0, 0, time.UTC),
			time.Date(2024, 3, 4, 0, 0, 0, 0, time.UTC),
		},
		KPIName:  "revenue",
		KPI:      []float64{1500, 100, 0},
		Channels: []string{"social", "tv"}, // the order of Columns.Channels, not of the file
		Spend:    [][]float64{{0.5, 0, 0.25}, {100, 0, 7}},
		Controls: []string{"price"},
		Control:  [][]float64{{-2, 3.25, -0.001}},
	}
	if !reflect.DeepEqual(p, want) {
		t.Errorf("got\n%+v\nwant\n%+v", p, want)
	}
	if p.NumWeeks() != 3 {
		t.Errorf("NumWeeks %d", p.NumWeeks())
	}
}

// A file saved by a spreadsheet program for Windows: a UTF-8 byte order mark
// (U+FEFF encoded as EF BB BF, RFC 3629 section 6; Unicode Standard
// section 23.8) and CRLF line endings (RFC 4180 section 2 rule 1) give the
// same panel as the plain file.
func TestReadPanelBOMAndCRLF(t *testing.T) {
	plain := head + row1 + row2 + "2024-01-15,1050,090,070,-1.5,c\n"
	want, err := ReadPanel(strings.NewReader(plain), "weekly.csv", baseCols)
	if err != nil {
		t.Fatal(err)
	}
	crlf := strings.ReplaceAll(plain, "\n", "\r\n")
	variants := map[string]string{
		"BOM":       "\xef\xbb\xbf" + plain,
		"CRLF":      crlf,
		"BOM+CRLF":  "\xef\xbb\xbf" + crlf,
		"no final":  strings.TrimSuffix(crlf, "\r\n"),
		"blank end": crlf + "\r\n\r\n",
	}
	for name, in := range variants {
		got, err := ReadPanel(strings.NewReader(in), "weekly.csv", baseCols)
		if err != nil {
			t.Errorf("%s: %v", name, err)
			continue
		}
		if !reflect.DeepEqual(got, want) {
			t.Errorf("%s: got %+v, want %+v", name, got, want)
		}
	}
	// Positions in a CRLF file are those of the LF file: the CR is the
	// line's end, not a column.
	bad := strings.ReplaceAll(head+row1+"2024-01-08,1100,120,060,oops,b\n", "\n", "\r\n")
	_, err = ReadPanel(strings.NewReader("\xef\xbb\xbf"+bad), "weekly.csv", baseCols)
	if err == nil || !strings.HasPrefix(err.Error(), "weekly.csv:3:25: ") {
		t.Errorf("CRLF error %v, want weekly.csv:3:25:", err)
	}
}

// Live reference check: Python's csv module (RFC 4180 dialect "excel"),
// datetime.date (proleptic Gregorian calendar) and float() (correctly
// rounded to IEEE 754 binary64) read testdata/panel_reference.csv, a
// BOM + CRLF file with quoted cells, a line break inside a quoted cell and
// the decimal strings that are hard to round (2^53+1, 1e23, the largest
// subnormal 2.2250738585072011e-308, the smallest 4.9e-324, the largest
// finite 1.7976931348623157e308). Every value must agree to the last bit,
// every date to the day.
func TestReadPanelMatchesPython(t *testing.T) {
	data, err := os.ReadFile("testdata/panel_reference.csv")
	if err != nil {
		t.Fatal(err)
	}
	cols := Columns{KPI: "sales", Channels: []string{"video", "search"}, Controls: []string{"temp"}}
	out := refcheck.Python(t, []string{"csv", "datetime", "json"}, "testdata/panel_reference.py", data,
		"week", cols.KPI, strings.Join(cols.Channels, ","), strings.Join(cols.Controls, ","))
	var ref struct {
		Weeks    []string
		Gaps     []int
		Weekdays []int
		KPI      []string
		Spend    [][]string
		Control  [][]string
	}
	if err := json.Unmarshal(out, &ref); err != nil {
		t.Fatalf("%v: %s", err, out)
	}
	p, err := ReadPanel(bytes.NewReader(data), "panel_reference.csv", cols)
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Weeks) != len(ref.Weeks) {
		t.Fatalf("%d weeks, Python reads %d", len(p.Weeks), len(ref.Weeks))
	}
	for i, w := range p.Weeks {
		if got := w.Format("2006-01-02"); got != ref.Weeks[i] {
			t.Errorf("week %d: %s, Python %s", i, got, ref.Weeks[i])
		}
		if got := int(w.Weekday()+6)%7 + 1; got != ref.Weekdays[i] { // ISO weekday, Monday = 1
			t.Errorf("week %d: weekday %d, Python %d", i, got, ref.Weekdays[i])
		}
		if i > 0 && ref.Gaps[i-1] != 7 {
			t.Errorf("accepted a gap of %d days before week %d (Python's calendar)", ref.Gaps[i-1], i)
		}
	}
	same := func(what string, got []float64, want []string) {
		t.Helper()
		if len(got) != len(want) {
			t.Fatalf("%s: %d values, Python %d", what, len(got), len(want))
		}
		for i, h := range want {
			v, err := strconv.ParseFloat(h, 64)
			if err != nil {
				t.Fatalf("%s: Python's %q: %v", what, h, err)
			}
			if math.Float64bits(got[i]) != math.Float64bits(v) {
				t.Errorf("%s week %d: %v (%x), Python %v (%s)", what, i, got[i], got[i], v, h)
			}
		}
	}
	same("kpi", p.KPI, ref.KPI)
	for k, c := range p.Channels {
		same(c, p.Spend[k], ref.Spend[k])
	}
	for j, c := range p.Controls {
		same(c, p.Control[j], ref.Control[j])
	}
}

func TestReadPanelDateColumn(t *testing.T) {
	cases := []struct {
		name string
		csv  string
		cols Columns
	}{
		{"explicit", "y,date,a\n1,2024-01-01,2\n2,2024-01-08,3\n", Columns{Date: "date", KPI: "y", Channels: []string{"a"}}},
		{"week anywhere", "y,a,week\n1,2,2024-01-01\n2,3,2024-01-08\n", Columns{KPI: "y", Channels: []string{"a"}}},
		{"blanks around names", " week , y ,a \n2024-01-01,1,2\n2024-01-08,2,3\n", Columns{KPI: "y", Channels: []string{"a"}}},
		{"first column", "day,y,a\n2024-01-01,1,2\n2024-01-08,2,3\n", Columns{KPI: "y", Channels: []string{"a"}}},
		// A spreadsheet's unnamed index column is ignored.
		{"unnamed columns", ",week,y,,a\n0,2024-01-01,1,x,2\n1,2024-01-08,2,y,3\n", Columns{KPI: "y", Channels: []string{"a"}}},
	}
	for _, c := range cases {
		p, err := ReadPanel(strings.NewReader(c.csv), "f.csv", c.cols)
		if err != nil {
			t.Errorf("%s: %v", c.name, err)
			continue
		}
		w := []time.Time{time.Date(2024, 1, 1, 0, 0, 0, 0, time.UTC), time.Date(2024, 1, 8, 0, 0, 0, 0, time.UTC)}
		if !reflect.DeepEqual(p.Weeks, w) || !reflect.DeepEqual(p.KPI, []float64{1, 2}) || !reflect.DeepEqual(p.Spend, [][]float64{{2, 3}}) {
			t.Errorf("%s: got %+v", c.name, p)
		}
	}
}

// Calendar facts the week check relies on: 7 days after a date across a
// month end, a leap day and a year end (Gregorian calendar, as ISO 8601
// uses; common practice, no source).
func TestReadPanelCalendar(t *testing.T) {
	for _, pair := range [][2]string{
		{"2024-02-26", "2024-03-04"}, // 2024 is a leap year: February has 29 days
		{"2023-02-22", "2023-03-01"}, // 2023 is not
		{"2000-02-26", "2000-03-04"}, // 2000 is (divisible by 400)
		{"2100-02-22", "2100-03-01"}, // 2100 is not (divisible by 100)
		{"2024-12-30", "2025-01-06"},
		{"2024-03-25", "2024-04-01"}, // a summer-time change in Europe: UTC has none
	} {
		in := "week,y,a\n" + pair[0] + ",1,1\n" + pair[1] + ",1,1\n"
		if _, err := ReadPanel(strings.NewReader(in), "f.csv", Columns{KPI: "y", Channels: []string{"a"}}); err != nil {
			t.Errorf("%s then %s: %v", pair[0], pair[1], err)
		}
	}
}

func TestDataErrorFormat(t *testing.T) {
	// The forms the issue asks for.
	cases := []struct {
		e    DataError
		want string
	}{
		{DataError{File: "weekly.csv", Line: 42, Column: 3, Msg: `spend "abc" in column "social" is not a number`},
			`weekly.csv:42:3: spend "abc" in column "social" is not a number`},
		{DataError{File: "weekly.csv", Line: 42, Msg: "row has 5 fields, the header has 6", Hint: "not shown"},
			"weekly.csv:42: row has 5 fields, the header has 6"},
		{DataError{File: "weekly.csv", Column: 3, Msg: "no data rows"}, "weekly.csv: no data rows"},
		{DataError{Msg: "no data rows"}, "no data rows"},
	}
	for _, c := range cases {
		if got := c.e.Error(); got != c.want {
			t.Errorf("got %q, want %q", got, c.want)
		}
	}
}

func TestRequireWeeks(t *testing.T) {
	p := &Panel{Source: "weekly.csv", Weeks: make([]time.Time, 20)}
	err := p.RequireWeeks(41, "the model has 31 parameters")
	// The message the issue gives as its example.
	const want = "weekly.csv: 20 weeks is too few: the model has 31 parameters and needs at least 41 weeks"
	var de *DataError
	if !errors.As(err, &de) || err.Error() != want || de.Line != 0 {
		t.Errorf("got %v, want %q", err, want)
	}
	if err := p.RequireWeeks(20, "x"); err != nil {
		t.Errorf("20 weeks for 20: %v", err)
	}
	if err := p.RequireWeeks(21, ""); err == nil || !strings.Contains(err.Error(), "20 weeks is too few: at least 21 are needed") {
		t.Errorf("no reason: %v", err)
	}
}

func TestLoadPanel(t *testing.T) {
	path := filepath.Join(t.TempDir(), "weekly.csv")
	if err := os.WriteFile(path, []byte(head+row1+"2024-01-08,1100,abc,060,9.5,b\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := LoadPanel(path, baseCols)
	if want := path + ":3:17: "; err == nil || !strings.HasPrefix(err.Error(), want) {
		t.Errorf("got %v, want prefix %q", err, want)
	}
	if _, err := LoadPanel(filepath.Join(t.TempDir(), "none.csv"), baseCols); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v", err)
	}
}

// benchPanel is a 260-week (5-year) file with 12 channels and 2 controls.
func benchPanel() []byte {
	var b strings.Builder
	b.WriteString("week,revenue")
	for k := range 12 {
		fmt.Fprintf(&b, ",ch%02d", k)
	}
	b.WriteString(",price,holiday\n")
	start := time.Date(2020, 1, 6, 0, 0, 0, 0, time.UTC)
	for w := range 260 {
		fmt.Fprintf(&b, "%s,%.2f", start.AddDate(0, 0, 7*w).Format("2006-01-02"), 1e5+1e3*math.Sin(float64(w)))
		for k := range 12 {
			fmt.Fprintf(&b, ",%.2f", 1000*float64(k+1)*(1+math.Cos(float64(w*(k+1)))))
		}
		fmt.Fprintf(&b, ",%.3f,%d\n", 9.99-float64(w%7)/10, w%13/12)
	}
	return []byte(b.String())
}

func BenchmarkReadPanel(b *testing.B) {
	data := benchPanel()
	cols := Columns{KPI: "revenue", Controls: []string{"price", "holiday"}}
	for k := range 12 {
		cols.Channels = append(cols.Channels, fmt.Sprintf("ch%02d", k))
	}
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
		if _, err := ReadPanel(bytes.NewReader(data), "bench.csv", cols); err != nil {
			b.Fatal(err)
		}
	}
}
