package uncertainty

import (
	"math"
	"math/bits"
	"testing"
)

// Known answers of SplitMix64 (Steele, Lea & Flood 2014; Vigna's reference
// splitmix64.c): seed 1234567 gives the five outputs listed by Rosetta Code,
// "Pseudo-random numbers/Splitmix64"; seed 0's first output is
// 0xe220a8397b1dcdaf (the same reference implementation).
func TestSplitMix64KnownAnswers(t *testing.T) {
	s := uint64(1234567)
	for k, want := range []uint64{6457827717110365317, 3203168211198807973, 9817491932198370423, 4593380528125082431, 16408922859458223821} {
		if got := splitmix64(&s); got != want {
			t.Errorf("seed 1234567 output %d: %d, want %d", k+1, got, want)
		}
	}
	s = 0
	if got := splitmix64(&s); got != 0xe220a8397b1dcdaf {
		t.Errorf("seed 0: %#x, want 0xe220a8397b1dcdaf", got)
	}
}

// Streams of a grid of nearby seeds and indices do not overlap: the first
// 256 outputs of 16 × 16 streams are 65,536 distinct 64-bit values
// (for unrelated streams a repeat has probability about 65536²/2^65 ≈ 1e-10;
// overlapping stretches of one sequence would repeat many).
func TestStreamNoOverlap(t *testing.T) {
	seen := make(map[uint64][2]int, 1<<16)
	for seed := range 16 {
		for i := range 16 {
			rng := Stream(uint64(seed), i)
			for range 256 {
				v := rng.Uint64()
				if at, dup := seen[v]; dup {
					t.Fatalf("stream (%d, %d) repeats a value of stream %v", seed, i, at)
				}
				seen[v] = [2]int{seed, i}
			}
		}
	}
}

// Neighbouring streams — seed±1, i±1, and the diagonal a naive seed+i
// mixing would confuse — are unrelated: over 64 words (4096 bits) the
// number of equal bits is Binomial(4096, ½), checked within 5 s.d. = 160
// (normal tail 5.7e-7 per pair, 768 pairs).
func TestStreamNeighboursUnrelated(t *testing.T) {
	words := func(seed uint64, i int) []uint64 {
		rng := Stream(seed, i)
		w := make([]uint64, 64)
		for k := range w {
			w[k] = rng.Uint64()
		}
		return w
	}
	for seed := uint64(1); seed <= 16; seed++ {
		for i := 1; i <= 16; i++ {
			a := words(seed, i)
			for _, nb := range [][2]int{{1, 0}, {0, 1}, {1, -1}} {
				b := words(seed+uint64(nb[0]), i+nb[1])
				same := 0
				for k := range a {
					same += 64 - bits.OnesCount64(a[k]^b[k])
				}
				if d := math.Abs(float64(same) - 2048); d > 160 {
					t.Errorf("streams (%d, %d) and (%d, %d): %d of 4096 bits equal", seed, i, seed+uint64(nb[0]), i+nb[1], same)
				}
			}
		}
	}
}

func TestStreamNegativeIndexPanics(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("no panic")
		}
	}()
	Stream(1, -1)
}
