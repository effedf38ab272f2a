package uncertainty

import "math/rand/v2"

// Stream returns replicate i's own random stream, fully determined by
// (seed, i): a math/rand/v2 PCG whose two seed words come from a SplitMix64
// sequence (Steele, Lea & Flood 2014) started at the seed's first SplitMix64
// output XOR i. Each SplitMix64 output is a bijective avalanche of its state,
// so nearby seeds, or nearby indices under one seed, give unrelated PCG
// states instead of overlapping stretches of one sequence; replicate i can
// therefore be computed anywhere, in any order, by any shard. i must be >= 0.
func Stream(seed uint64, i int) *rand.Rand {
	if i < 0 {
		panic("uncertainty: negative replicate index")
	}
	s := seed
	state := splitmix64(&s) ^ uint64(i)
	hi := splitmix64(&state)
	lo := splitmix64(&state)
	return rand.New(rand.NewPCG(hi, lo))
}

// splitmix64 advances the SplitMix64 state by the golden-ratio increment and
// returns the mixed output (Steele, Lea & Flood 2014, the constants of Vigna's
// reference splitmix64.c).
func splitmix64(state *uint64) uint64 {
	*state += 0x9e3779b97f4a7c15
	z := *state
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	return z ^ (z >> 31)
}
