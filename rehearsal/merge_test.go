package rehearsal

import (
	"strings"
	"testing"
)

// A merge with a shard left out names the shard: with 5 worlds in 2
// shards, shard 2/2 holds worlds 1 and 3 (world i is in shard i%2 + 1).
func TestMergeNamesMissingShard(t *testing.T) {
	shard1 := []Outcome{{Index: 0, Err: "x"}, {Index: 2, Err: "x"}, {Index: 4, Err: "x"}}
	_, err := Merge(1, Sizes{}, nil, 5, 2, [][]Outcome{shard1})
	want := "rehearsal: world 1 is in no shard (2 of 5 worlds missing); shard 2/2 is missing"
	if err == nil || err.Error() != want {
		t.Fatalf("Merge without shard 2/2: %v\nwant %s", err, want)
	}
	_, err = Merge(1, Sizes{}, nil, 5, 0, [][]Outcome{shard1})
	if err == nil || !strings.HasSuffix(err.Error(), "; a shard is missing") {
		t.Errorf("Merge with the split unknown: %v", err)
	}
}
