package validation

import (
	"errors"
	"strings"
	"testing"
	"time"

	"sluice/model"
)

// liftPanel is a 20-week panel from Monday 2024-01-01 with two channels,
// each spending 1000 a week, social nothing in weeks 10–12.
func liftPanel() *model.Panel {
	p := &model.Panel{Source: "weekly.csv", KPIName: "revenue", Channels: []string{"search", "social"}}
	start := time.Date(2024, 1, 1, 0, 0, 0, 0, time.UTC)
	for i := range 20 {
		p.Weeks = append(p.Weeks, start.AddDate(0, 0, 7*i))
		p.KPI = append(p.KPI, 100)
	}
	p.Spend = [][]float64{make([]float64, 20), make([]float64, 20)}
	for k := range p.Spend {
		for t := range p.Spend[k] {
			if k == 0 || t < 10 || t > 12 {
				p.Spend[k][t] = 1000
			}
		}
	}
	return p
}

func TestReadLifts(t *testing.T) {
	in := "\ufeffchannel,start,end,incremental,std_error\r\n" +
		"search,2024-01-08,2024-02-04,12500.5,2000\r\n" +
		" social , 2024-01-03 ,2024-01-03,-40,1e2\r\n"
	got, err := ReadLifts(strings.NewReader(in), "lifts.csv", liftPanel())
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 2 {
		t.Fatalf("%d tests", len(got))
	}
	// 2024-01-08 is week 1 (a Monday); 2024-02-04 is the Sunday ending week
	// 4; 2024-01-03 is a Wednesday inside week 0.
	a, b := got[0], got[1]
	if a.ChannelIndex != 0 || a.From != 1 || a.To != 4 || a.Incremental != 12500.5 || a.StdError != 2000 || a.Line != 2 {
		t.Errorf("first: %+v", a)
	}
	if b.Channel != "social" || b.ChannelIndex != 1 || b.From != 0 || b.To != 0 || b.Incremental != -40 || b.StdError != 100 || b.Line != 3 {
		t.Errorf("second: %+v", b)
	}
	// Columns in another order.
	in2 := "std_error,incremental,end,start,channel\n5,10,2024-01-14,2024-01-08,social\n"
	got2, err := ReadLifts(strings.NewReader(in2), "l.csv", liftPanel())
	if err != nil || got2[0].Channel != "social" || got2[0].StdError != 5 || got2[0].From != 1 || got2[0].To != 1 {
		t.Errorf("reordered: %+v %v", got2, err)
	}
}

// Every problem is reported at its cell: file:line:column (columns count
// bytes from 1, as encoding/csv does).
func TestReadLiftsErrors(t *testing.T) {
	const h = "channel,start,end,incremental,std_error\n"
	cases := []struct{ name, in, want string }{
		{"empty", "", "lifts.csv: the file is empty"},
		{"header only", h, "lifts.csv: the file has no lift tests"},
		{"unknown column", "channel,start,end,incremental,se\n", "lifts.csv:1:31: unknown column \"se\""},
		{"duplicate column", "channel,start,end,incremental,std_error,start\n", "lifts.csv:1:41: column \"start\" appears twice"},
		{"missing column", "channel,start,end,incremental\n", "lifts.csv:1: missing column \"std_error\""},
		{"channel", h + "tv,2024-01-08,2024-01-14,1,1\n", "lifts.csv:2:1: channel \"tv\" is not one of the model's channels"},
		{"date", h + "search,2024-1-8,2024-01-14,1,1\n", "lifts.csv:2:8: start \"2024-1-8\" is not a date"},
		{"impossible date", h + "search,2024-01-08,2024-02-30,1,1\n", "lifts.csv:2:19: end \"2024-02-30\" is not a date"},
		{"before panel", h + "search,2023-12-31,2024-01-14,1,1\n", "lifts.csv:2:8: start 2023-12-31 is outside the panel's weeks 2024-01-01 to 2024-05-19"},
		{"after panel", h + "search,2024-01-08,2024-05-20,1,1\n", "lifts.csv:2:19: end 2024-05-20 is outside"},
		{"end before start", h + "search,2024-02-08,2024-01-14,1,1\n", "lifts.csv:2:19: end 2024-01-14 is before start 2024-02-08"},
		{"number", h + "search,2024-01-08,2024-01-14,1,000,1\n", "lifts.csv:2:"},
		{"not a number", h + "search,2024-01-08,2024-01-14,$100,1\n", "lifts.csv:2:30: incremental \"$100\" is not a number"},
		{"nan", h + "search,2024-01-08,2024-01-14,NaN,1\n", "lifts.csv:2:30: incremental \"NaN\" is not a number"},
		{"inf", h + "search,2024-01-08,2024-01-14,1e400,1\n", "lifts.csv:2:30: incremental \"1e400\" is not a number"},
		{"hex", h + "search,2024-01-08,2024-01-14,0x10,1\n", "lifts.csv:2:30: incremental \"0x10\" is not a number"},
		{"zero se", h + "search,2024-01-08,2024-01-14,1,0\n", "lifts.csv:2:32: std_error 0 must be positive"},
		{"negative se", h + "search,2024-01-08,2024-01-14,1,-2\n", "lifts.csv:2:32: std_error -2 must be positive"},
		{"empty se", h + "search,2024-01-08,2024-01-14,1,\n", "lifts.csv:2:32: std_error \"\" is not a number"},
		{"field count", h + "search,2024-01-08,2024-01-14,1\n", "lifts.csv:2:1: wrong number of fields"},
		{"bare quote", h + "search,2024-01-08,2024-01-14,1\"2,1\n", "lifts.csv:2:31: bare \" in non-quoted-field"},
		{"dark window", h + "social,2024-03-11,2024-03-24,1,1\n", "lifts.csv:2:8: social spent nothing in the panel from 2024-03-11 to 2024-03-24, the test's window"},
		{"second row", h + "search,2024-01-08,2024-01-14,1,1\nsocial,2024-01-08,2024-01-14,1,x\n", "lifts.csv:3:32: std_error \"x\" is not a number"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := ReadLifts(strings.NewReader(c.in), "lifts.csv", liftPanel())
			if err == nil || !strings.HasPrefix(err.Error(), c.want) {
				t.Fatalf("got %v\nwant %s...", err, c.want)
			}
			var de *model.DataError
			if !errors.As(err, &de) {
				t.Errorf("not a *model.DataError: %T", err)
			}
		})
	}
}

// FuzzReadLifts: the parser never panics; what it accepts satisfies the
// invariants the checks rely on; every error names the file.
func FuzzReadLifts(f *testing.F) {
	f.Add([]byte("channel,start,end,incremental,std_error\nsearch,2024-01-08,2024-02-04,12500.5,2000\n"))
	p := liftPanel()
	f.Fuzz(func(t *testing.T, b []byte) {
		got, err := ReadLifts(strings.NewReader(string(b)), "f.csv", p)
		if err != nil {
			if !strings.HasPrefix(err.Error(), "f.csv") {
				t.Fatalf("error without the file name: %v", err)
			}
			return
		}
		for _, lt := range got {
			if lt.From < 0 || lt.To >= p.NumWeeks() || lt.From > lt.To || !(lt.StdError > 0) ||
				p.Channels[lt.ChannelIndex] != lt.Channel || lt.Line < 2 {
				t.Fatalf("accepted a bad test: %+v", lt)
			}
		}
	})
}

// FuzzParseForecast: the forecast reader never panics, and what it accepts
// can be reconciled without panicking (on a panel that may not fit it).
func FuzzParseForecast(f *testing.F) {
	f.Add([]byte(`{"start":"2024-03-04","weeks":1,"plan":{"search":1,"social":2},"params":{"channels":[{"decay":0.1,"half_saturation":1,"shape":1,"beta":5},{"decay":0.2,"half_saturation":2,"shape":1.5,"beta":3}],"fixed":[100,1]},"model":{"data_start":"2024-01-01","data_weeks":9,"channels":[{"name":"search","adstock":"geometric","saturation":"hill","mean_spend":1},{"name":"social","adstock":"geometric","saturation":"hill","mean_spend":2}],"fixed_columns":["intercept","trend"],"period_weeks":52.18},"band":{"p05":[90],"p50":[100],"p95":[110]}}`))
	p := liftPanel()
	f.Fuzz(func(t *testing.T, b []byte) {
		fc, err := ParseForecast(b, "f.json")
		if err != nil {
			if !strings.HasPrefix(err.Error(), "f.json") {
				t.Fatalf("error without the file name: %v", err)
			}
			return
		}
		r, err := Reconcile(p, fc)
		if err == nil && (r.Weeks < 1 || r.Coverage < 0 || r.Coverage > 1) {
			t.Fatalf("reconciled %d weeks, coverage %v", r.Weeks, r.Coverage)
		}
	})
}
