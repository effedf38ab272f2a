package rehearsal

import (
	"strings"
	"testing"
)

// TestFailuresCountedByStage: every world that failed is counted under its
// stage with its reason, none is dropped, and the loud share is measured
// over all worlds (issue: a rehearsal used to drop failed worlds silently).
func TestFailuresCountedByStage(t *testing.T) {
	ok := Outcome{Index: 0, Kind: WellSpecified, Policies: []Score{{}}}
	r := &Result{Worlds: []Outcome{
		ok,
		{Index: 1, Kind: Drift, Err: "fit: no start converged", Stage: "fit"},
		{Index: 2, Kind: WellSpecified, Err: "gate: bad support", Stage: "gate"},
		{Index: 3, Kind: Season, Err: "fit: singular", Stage: "fit"},
	}}
	r.summarize([]string{"standard"})
	if r.Decided != 1 || r.Errors != 3 {
		t.Fatalf("decided %d, failed %d; want 1 and 3", r.Decided, r.Errors)
	}
	if len(r.Failures) != 2 || r.Failures[0].Stage != "fit" || r.Failures[0].Worlds != 2 || r.Failures[1].Stage != "gate" || r.Failures[1].Worlds != 1 {
		t.Fatalf("failures %+v; want fit: 2 then gate: 1", r.Failures)
	}
	if !strings.Contains(r.Failures[0].Reasons[1], "world 3 (season): fit: singular") {
		t.Errorf("reason %q does not name world 3 and its error", r.Failures[0].Reasons[1])
	}
	if got := r.FailedShareOfWorlds(); got != 0.75 || !r.Loud() {
		t.Errorf("failed share %v, loud %v; want 0.75 and loud", got, r.Loud())
	}
	if r.Raw.Worlds != 1 {
		t.Errorf("the raw summary covers %d worlds, want the 1 decided", r.Raw.Worlds)
	}
	// One failure in 20 is not loud; 3 in 20 is.
	r = &Result{}
	for i := range 20 {
		o := ok
		o.Index = i
		if i < 2 {
			o = Outcome{Index: i, Err: "x", Stage: "fit"}
		}
		r.Worlds = append(r.Worlds, o)
	}
	r.summarize([]string{"standard"})
	if r.Loud() {
		t.Errorf("2 of 20 failed (10%%): not more than a tenth, must not be loud")
	}
	r.Worlds[2] = Outcome{Index: 2, Err: "x", Stage: "fit"}
	r.summarize([]string{"standard"})
	if !r.Loud() {
		t.Errorf("3 of 20 failed (15%%): must be loud")
	}
}

// TestCheckRatesCountNotJudgedApart: a check that failed without a p-value
// (a channel fitted to zero) is not a test's false alarm; a tested failure
// is; power counts the affected channel only.
func TestCheckRatesCountNotJudgedApart(t *testing.T) {
	ws := []Outcome{
		{Kind: WellSpecified, FailedChecks: []string{"stability/drift/tv"}, Untested: []string{"stability/drift/tv"},
			Stated: map[string]float64{"stability/drift": 0.02}, Policies: []Score{{}}},
		{Kind: WellSpecified, FailedChecks: []string{"stability/drift/search"}, Stated: map[string]float64{"stability/drift": 0.02}, Policies: []Score{{}}},
		{Kind: WellSpecified, Stated: map[string]float64{"stability/drift": 0.02}, Policies: []Score{{}}},
		{Kind: WellSpecified, Stated: map[string]float64{"stability/drift": 0.02}, Policies: []Score{{}}},
		{Kind: Drift, Channel: "tv", FailedChecks: []string{"stability/drift/search"}, Policies: []Score{{}}},
		{Kind: Drift, Channel: "tv", FailedChecks: []string{"stability/drift/tv"}, Policies: []Score{{}}},
	}
	got := checkRates(ws)
	if len(got) != 1 {
		t.Fatalf("rates %+v", got)
	}
	c := got[0]
	if c.Worlds != 4 || c.FalseAlarm != 0.25 || c.Untested != 0.25 || c.Stated != 0.02 || c.Power[Drift] != 0.5 {
		t.Errorf("got %+v; want 4 worlds, realised 25%%, not judged 25%%, stated 2%%, drift power 50%%", c)
	}
}
