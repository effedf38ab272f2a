package uncertainty

import (
	"slices"
	"strings"
	"testing"
)

func TestParseShard(t *testing.T) {
	for _, c := range []struct {
		in      string
		want    Shard
		errPart string // part of the error message, "" for success
	}{
		{"2/8", Shard{2, 8}, ""},
		{"1/1", Shard{1, 1}, ""},
		{"8/8", Shard{8, 8}, ""},
		{" 3/4\n", Shard{3, 4}, ""},
		{"0/8", Shard{}, "between 1 and 8"},
		{"9/8", Shard{}, "between 1 and 8"},
		{"x", Shard{}, "want K/N"},
		{"", Shard{}, "want K/N"},
		{"2/0", Shard{}, "at least 1"},
		{"/8", Shard{}, "K is empty"},
		{"2/", Shard{}, "N is empty"},
		{"-1/8", Shard{}, "not a whole number"},
		{"+2/8", Shard{}, "not a whole number"},
		{"2 /8", Shard{}, "not a whole number"},
		{"2/8/3", Shard{}, "not a whole number"},
		{"2.0/8", Shard{}, "not a whole number"},
		{"1/99999999999999999999", Shard{}, "too large"},
	} {
		got, err := ParseShard(c.in)
		switch {
		case c.errPart == "" && (err != nil || got != c.want):
			t.Errorf("ParseShard(%q) = %v, %v; want %v", c.in, got, err, c.want)
		case c.errPart != "" && (err == nil || !strings.Contains(err.Error(), c.errPart)):
			t.Errorf("ParseShard(%q) error %v, want one containing %q", c.in, err, c.errPart)
		case err != nil && !strings.Contains(err.Error(), "uncertainty: shard "):
			t.Errorf("ParseShard(%q) error %q does not name the shard", c.in, err)
		}
	}
}

// N shards K = 1..N together hold every replicate exactly once; the zero
// value holds all.
func TestShardPartition(t *testing.T) {
	for n := 1; n <= 9; n++ {
		for i := range 200 {
			owners := 0
			for k := 1; k <= n; k++ {
				if (Shard{K: k, N: n}).Has(i) {
					owners++
				}
			}
			if owners != 1 {
				t.Fatalf("replicate %d has %d owners among %d shards", i, owners, n)
			}
			if !(Shard{}).Has(i) {
				t.Fatalf("zero shard lacks replicate %d", i)
			}
		}
	}
	if s := (Shard{}).String(); s != "1/1" {
		t.Errorf("zero shard prints %q", s)
	}
}

func FuzzParseShard(f *testing.F) {
	for _, s := range []string{"2/8", "1/1", "0/8", "9/8", "x", "", "/", "3/", "-1/2", "007/010"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		sh, err := ParseShard(s)
		if err != nil {
			if !strings.HasPrefix(err.Error(), "uncertainty: shard ") {
				t.Fatalf("error %q lacks its prefix", err)
			}
			return
		}
		if sh.K < 1 || sh.K > sh.N {
			t.Fatalf("ParseShard(%q) = %+v accepted", s, sh)
		}
		back, err := ParseShard(sh.String())
		if err != nil || back != sh {
			t.Fatalf("round trip of %q: %v, %v", s, back, err)
		}
		if !sh.Has(sh.K-1) || (sh.N > 1 && sh.Has(sh.K%sh.N)) {
			t.Fatalf("%v: membership wrong", sh)
		}
	})
}

func FuzzParseMethod(f *testing.F) {
	for _, s := range []string{"block", "stationary", "wild", "", "Block", "circular"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		m, err := ParseMethod(s)
		if err != nil {
			if m != "" || !strings.HasPrefix(err.Error(), "uncertainty: unknown resampling method") {
				t.Fatalf("ParseMethod(%q) = %q, %v", s, m, err)
			}
			return
		}
		if m != MovingBlock && m != Stationary && m != Wild {
			t.Fatalf("ParseMethod(%q) = %q", s, m)
		}
		if s != "" && string(m) != s {
			t.Fatalf("ParseMethod(%q) = %q", s, m)
		}
		if again, err := ParseMethod(string(m)); err != nil || again != m {
			t.Fatalf("ParseMethod(%q) again = %q, %v", m, again, err)
		}
	})
}

// nextInShard and shardSize agree with counting Has over the indices.
func TestShardArithmetic(t *testing.T) {
	for _, s := range []Shard{{}, {1, 1}, {1, 2}, {2, 2}, {3, 7}, {7, 7}, {5, 9}} {
		for draws := range 30 {
			var want []int
			for i := range draws {
				if s.Has(i) {
					want = append(want, i)
				}
			}
			var got []int
			for i := nextInShard(s, 0); i < draws; i = nextInShard(s, i+1) {
				got = append(got, i)
			}
			if !slices.Equal(got, want) || shardSize(s, draws) != len(want) {
				t.Errorf("%v, %d draws: walk %v size %d, want %v", s, draws, got, shardSize(s, draws), want)
			}
		}
	}
}

// NameMissing against shards worked out by hand from the definition (index
// i is in shard i%N + 1): with N = 4 and 10 replicates, shard 3/4 holds
// 2, 6; shard 4/4 holds 3, 7.
func TestNameMissing(t *testing.T) {
	for _, c := range []struct {
		missing []int
		n       int
		want    string
	}{
		{[]int{2, 6}, 4, "shard 3/4 is missing"},
		{[]int{7, 3, 2, 6}, 4, "shards 3/4, 4/4 are missing"},
		{[]int{0}, 2, "shard 1/2 is missing"},
		{[]int{11, 4}, 8, "shards 4/8, 5/8 are missing"},
		{[]int{1}, 1, "a shard is missing"},
		{[]int{1}, 0, "a shard is missing"},
		{nil, 4, "a shard is missing"},
	} {
		if got := NameMissing(c.missing, c.n); got != c.want {
			t.Errorf("NameMissing(%v, %d) = %q, want %q", c.missing, c.n, got, c.want)
		}
	}
}
