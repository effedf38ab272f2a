package rehearsal

import "testing"

// TestDriftingWorldsCounted: the summary counts, per world kind, the
// decided worlds whose decision let a channel drift (the effectiveness
// choice), leaves out failed worlds and constant ones, and is empty when
// no world drifted; invented outcomes, counts by hand.
func TestDriftingWorldsCounted(t *testing.T) {
	r := &Result{Worlds: []Outcome{
		{Index: 0, Kind: Drift, Policies: []Score{{}}, Drifting: []string{"search"}},
		{Index: 1, Kind: Drift, Policies: []Score{{}}},
		{Index: 2, Kind: Drift, Policies: []Score{{}}, Drifting: []string{"tv", "audio"}},
		{Index: 3, Kind: Season, Policies: []Score{{}}, Drifting: []string{"search"}},
		{Index: 4, Kind: WellSpecified, Err: "fit: singular", Stage: "fit", Drifting: []string{"search"}},
	}}
	r.summarize([]string{"standard"})
	if len(r.Drifting) != 2 || r.Drifting[Drift] != 2 || r.Drifting[Season] != 1 {
		t.Errorf("drifting worlds %v, want drift 2, season 1", r.Drifting)
	}
	r.Worlds = r.Worlds[1:2]
	r.summarize([]string{"standard"})
	if r.Drifting != nil {
		t.Errorf("no world drifted, counted %v", r.Drifting)
	}
}
