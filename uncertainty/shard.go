package uncertainty

import (
	"fmt"
	"slices"
	"strconv"
	"strings"
)

// Shard selects the replicates one job of a split run computes: replicate i
// belongs to shard K of N (1-based K) when i % N == K-1, so N jobs with
// K = 1..N together compute every replicate exactly once, and each
// replicate's result does not depend on which job computed it (see Stream).
// The zero value is the whole run (1/1).
type Shard struct{ K, N int }

// ParseShard parses "K/N" with whole numbers 1 <= K <= N, e.g. "2/8".
func ParseShard(s string) (Shard, error) {
	ks, ns, ok := strings.Cut(strings.TrimSpace(s), "/")
	if !ok {
		return Shard{}, fmt.Errorf("uncertainty: shard %q: want K/N, e.g. 2/8", s)
	}
	k, err := shardNumber(ks)
	if err != nil {
		return Shard{}, fmt.Errorf("uncertainty: shard %q: K %v", s, err)
	}
	n, err := shardNumber(ns)
	if err != nil {
		return Shard{}, fmt.Errorf("uncertainty: shard %q: N %v", s, err)
	}
	if n < 1 {
		return Shard{}, fmt.Errorf("uncertainty: shard %q: N must be at least 1", s)
	}
	if k < 1 || k > n {
		return Shard{}, fmt.Errorf("uncertainty: shard %q: K must be between 1 and %d", s, n)
	}
	return Shard{K: k, N: n}, nil
}

// shardNumber accepts plain decimal digits only (no sign, no spaces), so
// "+2" or "2 " is not silently taken for 2.
func shardNumber(s string) (int, error) {
	if s == "" {
		return 0, fmt.Errorf("is empty, want a whole number")
	}
	for _, c := range s {
		if c < '0' || c > '9' {
			return 0, fmt.Errorf("%q is not a whole number", s)
		}
	}
	v, err := strconv.Atoi(s)
	if err != nil {
		return 0, fmt.Errorf("%q is too large", s)
	}
	return v, nil
}

// Has reports whether replicate i (>= 0) belongs to the shard.
func (s Shard) Has(i int) bool {
	if s.N == 0 {
		return true
	}
	return i%s.N == s.K-1
}

// String returns "K/N"; the zero value prints as "1/1".
func (s Shard) String() string {
	if s.N == 0 {
		return "1/1"
	}
	return strconv.Itoa(s.K) + "/" + strconv.Itoa(s.N)
}

// NameMissing names the shards of a split into n that hold the missing
// indexes (replicate or world i is in shard i%n + 1), for a merge's error:
// "shard 3/4 is missing", "shards 2/8, 5/8 are missing". With n < 2 (the
// parts were split differently, or not at all) it says "a shard is missing".
func NameMissing(missing []int, n int) string {
	if n < 2 || len(missing) == 0 {
		return "a shard is missing"
	}
	var ks []int
	for _, i := range missing {
		ks = append(ks, i%n+1)
	}
	slices.Sort(ks)
	ks = slices.Compact(ks)
	names := make([]string, len(ks))
	for j, k := range ks {
		names[j] = Shard{K: k, N: n}.String()
	}
	if len(names) == 1 {
		return "shard " + names[0] + " is missing"
	}
	return "shards " + strings.Join(names, ", ") + " are missing"
}
