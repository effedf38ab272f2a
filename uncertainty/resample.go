// Package uncertainty refits the response model on resampled histories and
// summarizes the distribution of fitted models (draws).
//
// This file holds the resampling core: the bootstrap residual series of one
// replicate (moving-block, stationary or wild) and the index generators
// behind it. Every random draw comes from the replicate's own stream
// (Stream), so a replicate is the same whatever order, machine or shard
// computes it.
package uncertainty

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
)

// Method is a residual bootstrap scheme.
type Method string

const (
	// MovingBlock resamples blocks of consecutive residuals whose starts are
	// uniform over the series (Künsch 1989), keeping the autocorrelation
	// within a block. The default.
	MovingBlock Method = "block"
	// Stationary resamples blocks of geometric length with a circular wrap
	// (Politis & Romano 1994): the resampled series is itself stationary.
	Stationary Method = "stationary"
	// Wild multiplies each residual in place by an independent Rademacher
	// weight, ±1 with probability ½ (Liu 1988; Mammen 1993): it keeps each
	// week's scale (heteroscedasticity) but not serial dependence.
	Wild Method = "wild"
)

// ParseMethod parses a method name: "block", "stationary" or "wild"; the
// empty string means the default, "block".
func ParseMethod(s string) (Method, error) {
	switch m := Method(s); m {
	case "":
		return MovingBlock, nil
	case MovingBlock, Stationary, Wild:
		return m, nil
	}
	return "", fmt.Errorf("uncertainty: unknown resampling method %q (want block, stationary or wild)", s)
}

// Resampler builds one bootstrap residual series from the fitted residuals.
//
// Every method returns a series with bootstrap expectation exactly zero at
// each week, E*[e*_t] = 0, so the resampled history y*_t = ŷ_t + e*_t is
// centred on the fit:
//   - moving-block: each value is centred by the bootstrap mean of its
//     position j within its block, μ_j = mean(e_j, ..., e_{n−L+j}) (Lahiri's
//     centering; Lahiri 2003, Resampling Methods for Dependent Data, ch. 2,
//     from memory). It is a fixed shift per position: it removes the edge
//     bias of non-circular blocks (an end value is covered by fewer blocks)
//     and leaves Var* intact. Recentring each replicate on its own mean was
//     rejected: it would remove the replicate-to-replicate variation of the
//     mean residual, so the refits would show no uncertainty in the model's
//     level (the intercept), and the bootstrap variance of a mean would be 0;
//   - stationary: every position is marginally uniform over the series, so
//     centring by the residual mean is exact;
//   - wild: E*[w e] = 0 already; the residuals are only sign-flipped.
type Resampler struct {
	// Method is the scheme; the zero value means MovingBlock.
	Method Method
	// BlockLength is the mean block length for Stationary and the block
	// length for MovingBlock (rounded up, and cut to the series length);
	// Wild ignores it. Values below 1 mean 1 (the iid bootstrap). Zero
	// means ⌈n^(1/3)⌉: n^(1/3) is the rate-optimal order for variance
	// estimation (Hall, Horowitz & Jing 1995, from memory), the constant 1
	// is common practice, no source. Prefer AutoBlockLength of the
	// residuals (Circular for MovingBlock, Stationary for Stationary).
	BlockLength float64
}

// Residuals fills dst with one bootstrap residual series built from resid
// with draws from rng, and returns dst. dst and resid must have the same
// length and must not overlap; resid is not changed. It does not allocate.
func (r Resampler) Residuals(dst, resid []float64, rng *rand.Rand) []float64 {
	n := len(resid)
	if len(dst) != n {
		panic("uncertainty: Residuals: dst and resid differ in length")
	}
	if n == 0 {
		return dst
	}
	if &dst[0] == &resid[0] {
		panic("uncertainty: Residuals: dst overlaps resid")
	}
	switch r.Method {
	case "", MovingBlock:
		movingBlockResiduals(dst, resid, int(min(math.Ceil(r.blockLength(n)), float64(n))), rng)
	case Stationary:
		stationaryResiduals(dst, resid, r.blockLength(n), rng)
	case Wild:
		wildResiduals(dst, resid, rng)
	default:
		panic("uncertainty: unknown resampling method " + string(r.Method))
	}
	return dst
}

func (r Resampler) blockLength(n int) float64 {
	b := r.BlockLength
	if math.IsNaN(b) {
		panic("uncertainty: block length is NaN")
	}
	if b == 0 {
		b = math.Ceil(math.Cbrt(float64(n)))
	}
	return max(b, 1)
}

// movingBlockResiduals writes the moving-block resample of x into dst with
// Lahiri's centering. With K = n−L+1 block starts, the bootstrap mean of
// position j in a block is μ_j = (T − head_j − tail_j)/K, T = Σx,
// head_j = Σ_{t<j} x_t, tail_j = Σ_{t>n−L+j} x_t; head and tail are carried
// along each block, so centering costs O(1) per value and no storage. It
// makes the same draws as MovingBlockIndex.
func movingBlockResiduals(dst, x []float64, block int, rng *rand.Rand) {
	n := len(x)
	starts := n - block + 1
	var total, tail0 float64
	for t, v := range x {
		total += v
		if t > n-block {
			tail0 += v
		}
	}
	k := float64(starts)
	for t := 0; t < n; {
		s := rng.IntN(starts)
		head, tail := 0.0, tail0
		for j := 0; j < block && t < n; j++ {
			dst[t] = x[s+j] - (total-head-tail)/k
			head += x[j]
			if j+1 < block {
				tail -= x[n-block+j+1]
			}
			t++
		}
	}
}

// stationaryResiduals writes the stationary-bootstrap resample of x, centred
// on the mean of x, into dst. It makes the same draws as StationaryIndex.
func stationaryResiduals(dst, x []float64, meanBlock float64, rng *rand.Rand) {
	n := len(x)
	var mean float64
	for _, v := range x {
		mean += v
	}
	mean /= float64(n)
	rate := geometricRate(meanBlock)
	for t := 0; t < n; {
		s := rng.IntN(n)
		for l := geometric(rate, n-t, rng); l > 0; l-- {
			dst[t] = x[s] - mean
			t++
			if s++; s == n {
				s = 0
			}
		}
	}
}

// wildResiduals multiplies each x_t by a Rademacher weight taken from one bit
// of a 64-bit draw (a sign flip, so |e*_t| = |e_t| exactly).
func wildResiduals(dst, x []float64, rng *rand.Rand) {
	var bits uint64
	for t, v := range x {
		if t%64 == 0 {
			bits = rng.Uint64()
		}
		dst[t] = math.Float64frombits(math.Float64bits(v) ^ (bits&1)<<63)
		bits >>= 1
	}
}

// geometric draws a block length L ≥ 1 with P(L = k) = q^(k−1)(1−q) as
// L = ⌈E/rate⌉, E ~ Exp(1), rate = −log q: P(L ≤ k) = P(E ≤ k·rate) = 1 − q^k.
// The ziggurat exponential avoids a logarithm per block. L is capped at limit
// (the positions still to fill).
func geometric(rate float64, limit int, rng *rand.Rand) int {
	l := math.Ceil(rng.ExpFloat64() / rate)
	if !(l < float64(limit)) { // also catches +Inf (rate 0: q = 1)
		return limit
	}
	return max(int(l), 1) // rate +Inf (q = 0, mean block 1) gives 0
}

// geometricRate is −log(1 − 1/meanBlock) for meanBlock ≥ 1.
func geometricRate(meanBlock float64) float64 {
	return -math.Log1p(-1 / meanBlock)
}

// MovingBlockIndex returns n indices into a series of length n forming a
// moving-block bootstrap resample (Künsch 1989): blocks of block consecutive
// indices whose starts are uniform on [0, n−block], laid end to end, the last
// one cut at n. block must be >= 1; longer than n means n. dst is reused
// when its capacity allows.
func MovingBlockIndex(dst []int, n, block int, rng *rand.Rand) []int {
	if block < 1 {
		panic("uncertainty: MovingBlockIndex: block length < 1")
	}
	dst = grow(dst, n)
	if n == 0 {
		return dst
	}
	block = min(block, n)
	starts := n - block + 1
	for t := 0; t < n; {
		s := rng.IntN(starts)
		for j := 0; j < block && t < n; j++ {
			dst[t] = s + j
			t++
		}
	}
	return dst
}

// StationaryIndex returns n indices into a series of length n forming a
// stationary-bootstrap resample (Politis & Romano 1994): blocks start at a
// uniform position, have geometric lengths with mean meanBlock (a new block
// starts after each index with probability 1/meanBlock) and wrap around the
// end of the series. meanBlock below 1 means 1. dst is reused when its
// capacity allows.
func StationaryIndex(dst []int, n int, meanBlock float64, rng *rand.Rand) []int {
	if math.IsNaN(meanBlock) {
		panic("uncertainty: StationaryIndex: mean block length is NaN")
	}
	dst = grow(dst, n)
	rate := geometricRate(max(meanBlock, 1))
	for t := 0; t < n; {
		s := rng.IntN(n)
		for l := geometric(rate, n-t, rng); l > 0; l-- {
			dst[t] = s
			t++
			if s++; s == n {
				s = 0
			}
		}
	}
	return dst
}

func grow(dst []int, n int) []int {
	if n < 0 {
		panic("uncertainty: negative series length")
	}
	return slices.Grow(dst[:0], n)[:n]
}
