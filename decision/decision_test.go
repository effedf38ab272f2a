package decision

import (
	"testing"

	"sluice/model"
)

// TestSplitIsDisjoint: the allocator's and the gate's draws never share a
// replicate (no optimiser's curse), together they are all the draws, and
// below 4 draws both get all of them (said in the record).
func TestSplitIsDisjoint(t *testing.T) {
	draws := make([]model.Params, 7)
	for i := range draws {
		draws[i].Fixed = []float64{float64(i)}
	}
	a, j := Split(draws)
	if len(a) != 4 || len(j) != 3 {
		t.Fatalf("split 7 into %d and %d, want 4 and 3", len(a), len(j))
	}
	seen := map[float64]int{}
	for _, p := range append(append([]model.Params{}, a...), j...) {
		seen[p.Fixed[0]]++
	}
	for i := range draws {
		if seen[float64(i)] != 1 {
			t.Errorf("draw %d is used %d times", i, seen[float64(i)])
		}
	}
	a, j = Split(draws[:3])
	if len(a) != 3 || len(j) != 3 {
		t.Errorf("3 draws split into %d and %d, want all to both", len(a), len(j))
	}
}

// TestStageOf: a stage error keeps its stage through wrapping.
func TestStageOf(t *testing.T) {
	err := fail(StageGate, errTest("x"))
	if StageOf(err) != StageGate || StageOf(errTest("y")) != "" {
		t.Errorf("stages %q and %q", StageOf(err), StageOf(errTest("y")))
	}
}

type errTest string

func (e errTest) Error() string { return string(e) }
