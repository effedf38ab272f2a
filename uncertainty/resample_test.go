package uncertainty

import (
	"math"
	"math/rand/v2"
	"slices"
	"sync"
	"testing"
)

// ar1 returns n values of y_t = phi·y_{t−1} + ε_t, ε_t ~ N(0, 1), after a
// burn-in of 100 values.
func ar1(rng *rand.Rand, n int, phi float64) []float64 {
	x := make([]float64, n)
	var y float64
	for t := -100; t < n; t++ {
		y = phi*y + rng.NormFloat64()
		if t >= 0 {
			x[t] = y
		}
	}
	return x
}

func meanOf(x []float64) float64 {
	var s float64
	for _, v := range x {
		s += v
	}
	return s / float64(len(x))
}

// sampleVar is the variance with divisor len(x)−1.
func sampleVar(x []float64) float64 {
	m := meanOf(x)
	var s float64
	for _, v := range x {
		s += (v - m) * (v - m)
	}
	return s / float64(len(x)-1)
}

var methods = []Method{MovingBlock, Stationary, Wild}

func TestParseMethod(t *testing.T) {
	for _, c := range []struct {
		in   string
		want Method
		ok   bool
	}{
		{"block", MovingBlock, true},
		{"stationary", Stationary, true},
		{"wild", Wild, true},
		{"", MovingBlock, true},
		{"Block", "", false},
		{" wild", "", false},
		{"moving-block", "", false},
		{"circular", "", false},
	} {
		got, err := ParseMethod(c.in)
		if (err == nil) != c.ok || got != c.want {
			t.Errorf("ParseMethod(%q) = %q, %v; want %q, ok=%v", c.in, got, err, c.want, c.ok)
		}
	}
}

// Bootstrap standard error of the mean of iid normal data. The ideal
// bootstrap SE of a mean is σ̂/√n with σ̂² = Σ(x−x̄)²/n, the plug-in
// variance, and it estimates the textbook σ/√n (Efron & Tibshirani 1993,
// An Introduction to the Bootstrap, ch. 2 and 5; formula from memory). With
// block length 1 the moving-block and stationary bootstraps are Efron's iid
// bootstrap; the wild bootstrap's Var*(Σ w_t e_t / n) = Σe_t²/n² is the same
// ideal value (Liu 1988; common practice, no source for the identity).
//
// Tolerance: an SE from B replicates of a near-normal statistic has
// coefficient of variation ≈ 1/√(2(B−1)) = 0.0158 at B = 2000 (Efron &
// Tibshirani 1993, ch. 6, from memory); against σ/√n add σ̂'s own
// 1/√(2n) = 0.0158 at n = 2000. Both are checked at 4 Monte Carlo s.d.
func TestBootstrapSEOfMeanIID(t *testing.T) {
	const n, B, sigma = 2000, 2000, 2.0
	rng := Stream(1993, 0)
	x := make([]float64, n)
	for i := range x {
		x[i] = sigma * rng.NormFloat64()
	}
	xbar := meanOf(x)
	e := make([]float64, n)
	var ss float64
	for i, v := range x {
		e[i] = v - xbar
		ss += e[i] * e[i]
	}
	ideal := math.Sqrt(ss/n) / math.Sqrt(n)
	textbook := sigma / math.Sqrt(n)
	cvB := 1 / math.Sqrt(2*(B-1))
	cvN := 1 / math.Sqrt(2*n)

	dst := make([]float64, n)
	means := make([]float64, B)
	for _, m := range methods {
		r := Resampler{Method: m, BlockLength: 1}
		for b := range B {
			means[b] = meanOf(r.Residuals(dst, e, Stream(5, b)))
		}
		se := math.Sqrt(sampleVar(means))
		if d := math.Abs(se/ideal - 1); d > 4*cvB {
			t.Errorf("%s: SE %.5g vs ideal σ̂/√n %.5g: rel diff %.4f > %.4f", m, se, ideal, d, 4*cvB)
		}
		tol := 4 * math.Hypot(cvB, cvN)
		if d := math.Abs(se/textbook - 1); d > tol {
			t.Errorf("%s: SE %.5g vs σ/√n %.5g: rel diff %.4f > %.4f", m, se, textbook, d, tol)
		}
		t.Logf("%s: bootstrap SE %.5f, ideal %.5f, σ/√n %.5f", m, se, ideal, textbook)
	}
}

// Block bootstraps of the mean of an AR(1) series, φ = 0.5, σ = 1, n = 2000.
// n·Var(x̄) tends to the long-run variance σ²/(1−φ)² = 4 (Hamilton 1994,
// Time Series Analysis, ch. 7, from memory); an iid bootstrap would see
// only γ(0) = σ²/(1−φ²) = 4/3, a third of it.
//
// Expected value at block length L (leading terms; derived here from the
// known forms, from memory): moving-block n·Var* ≈ Σ_{|k|<L}(1−|k|/L)γ(k)
// (Künsch 1989) − L·4/n; stationary n·Var* ≈ Σ_k q^|k| γ(k) (Politis &
// Romano 1994, q = 1 − 1/L) − ((1+q)/(1−q))·4/n; the −·/n terms come from
// centring autocovariances on x̄. At L = 40 they put the ratio to 4 near
// 0.947 and 0.926.
//
// Tolerance: one series' estimate has relative variance D·L/(n g²) with
// D_CB = (4/3)g², D_SB = 2g² (Politis & White 2004; Patton, Politis & White
// 2009), i.e. 0.027 and 0.040; B replicates add 2/(B−1). Averaging R
// independent series divides by R; the check is at 4 s.d.
func TestBlockBootstrapVarianceOfAR1Mean(t *testing.T) {
	const n, L, phi = 2000, 40, 0.5
	R, B := 100, 200
	if testing.Short() {
		R = 20
	}
	longRun := 1 / ((1 - phi) * (1 - phi))
	gamma := func(k int) float64 { return math.Pow(phi, math.Abs(float64(k))) / (1 - phi*phi) }
	var bartlett float64
	for k := -(L - 1); k <= L-1; k++ {
		bartlett += (1 - math.Abs(float64(k))/L) * gamma(k)
	}
	q := 1 - 1.0/L
	geometricSum := (1 + q*phi) / (1 - q*phi) / (1 - phi*phi)
	cases := []struct {
		m      Method
		expect float64 // expected n·Var*/longRun
		relVar float64 // per-series relative variance D·L/(n g²)
	}{
		{MovingBlock, (bartlett - L*longRun/n) / longRun, 4.0 / 3 * L / n},
		{Stationary, (geometricSum - (1+q)/(1-q)*longRun/n) / longRun, 2.0 * L / n},
	}
	dst := make([]float64, n)
	means := make([]float64, B)
	for _, c := range cases {
		r := Resampler{Method: c.m, BlockLength: L}
		var avg float64
		for s := range R {
			x := ar1(Stream(1994, s), n, phi)
			for b := range B {
				means[b] = meanOf(r.Residuals(dst, x, Stream(1995+uint64(s), b)))
			}
			avg += n * sampleVar(means) / longRun / float64(R)
		}
		sd := math.Sqrt((c.relVar + 2/float64(B-1)) / float64(R))
		if d := math.Abs(avg - c.expect); d > 4*sd {
			t.Errorf("%s: n·Var*(x̄*)/(σ²/(1−φ)²) = %.4f, expected %.4f ± %.4f (4 s.d.)", c.m, avg, c.expect, 4*sd)
		}
		t.Logf("%s: n·Var*/long-run variance = %.4f (expected %.4f, s.d. %.4f, R = %d series, B = %d)", c.m, avg, c.expect, sd, R, B)
	}
}

// Law school data, Efron & Tibshirani (1993), Table 3.1 (testdata/
// efron_tibshirani_law_school.json): the iid bootstrap SE of the correlation
// of LSAT and GPA at B = 3200 must lie in 0.1335 ± 0.008 (ideal SE 0.13352
// from B = 10^6 with numpy; band about 4 Monte Carlo s.d.), the sample
// correlation 0.776374491289407 within rel 1e-12 (R and numpy agree).
// Replicate i draws from Stream(seed, i); block length 1 is the iid
// bootstrap of pairs, through both index generators.
func TestLawSchoolBootstrapSE(t *testing.T) {
	var ref struct {
		Source map[string]any `json:"source"`
		Data   struct {
			LSAT, GPA []float64
		} `json:"data"`
		Computed struct {
			Correlation float64 `json:"correlation"`
		} `json:"computed"`
	}
	readJSON(t, "testdata/efron_tibshirani_law_school.json", &ref)
	lsat, gpa := ref.Data.LSAT, ref.Data.GPA
	if len(ref.Source) == 0 || len(lsat) != 15 || len(gpa) != 15 {
		t.Fatal("law school testdata incomplete")
	}
	all := make([]int, 15)
	for i := range all {
		all[i] = i
	}
	checkRel(t, "correlation", correlation(lsat, gpa, all), ref.Computed.Correlation, 1e-12)

	const B, center, band = 3200, 0.1335, 0.008
	gens := map[string]func(dst []int, rng *rand.Rand) []int{
		"moving-block, block 1": func(dst []int, rng *rand.Rand) []int { return MovingBlockIndex(dst, 15, 1, rng) },
		"stationary, mean 1":    func(dst []int, rng *rand.Rand) []int { return StationaryIndex(dst, 15, 1, rng) },
	}
	for name, gen := range gens {
		for _, seed := range []uint64{1993, 2, 3} {
			r := make([]float64, B)
			var idx []int
			for i := range B {
				idx = gen(idx, Stream(seed, i))
				r[i] = correlation(lsat, gpa, idx)
			}
			se := math.Sqrt(sampleVar(r))
			if math.Abs(se-center) > band {
				t.Errorf("%s, seed %d: bootstrap SE %.5f outside %.4f ± %.3f", name, seed, se, center, band)
			}
			t.Logf("%s, seed %d: bootstrap SE %.5f (B = %d)", name, seed, se, B)
		}
	}
}

// correlation is Pearson's r of the pairs (x[i], y[i]) for i in idx.
func correlation(x, y []float64, idx []int) float64 {
	var mx, my float64
	for _, i := range idx {
		mx += x[i]
		my += y[i]
	}
	k := float64(len(idx))
	mx /= k
	my /= k
	var sxy, sxx, syy float64
	for _, i := range idx {
		dx, dy := x[i]-mx, y[i]-my
		sxy += dx * dy
		sxx += dx * dx
		syy += dy * dy
	}
	return sxy / math.Sqrt(sxx*syy)
}

// Residuals draws exactly what the index generators draw, and centres as
// documented: moving-block by Lahiri's position-wise bootstrap mean
// μ_j = mean(x_j..x_{n−L+j}) (Lahiri 2003, Resampling Methods for Dependent
// Data, ch. 2), computed here by brute force; stationary by x̄; wild by
// nothing (|e*_t| = |e_t|).
func TestResidualsMatchIndexGenerators(t *testing.T) {
	x := ar1(Stream(11, 0), 157, 0.6)
	for i := range x {
		x[i] += 0.3 // a residual mean off zero makes the centering visible
	}
	n := len(x)
	dst := make([]float64, n)
	for _, L := range []int{1, 5, 13, 156, 157} {
		mu := make([]float64, L)
		for j := range L {
			mu[j] = meanOf(x[j : n-L+j+1])
		}
		Resampler{Method: MovingBlock, BlockLength: float64(L) - 0.5}.Residuals(dst, x, Stream(3, L))
		idx := MovingBlockIndex(nil, n, L, Stream(3, L))
		for t0, i := range idx {
			if want := x[i] - mu[t0%L]; math.Abs(dst[t0]-want) > 1e-12 {
				t.Fatalf("moving-block L=%d t=%d: %v, want %v", L, t0, dst[t0], want)
			}
		}
	}
	xbar := meanOf(x)
	for _, L := range []float64{1, 4.5, 30, math.Inf(1)} {
		Resampler{Method: Stationary, BlockLength: L}.Residuals(dst, x, Stream(4, int(min(L, 99))))
		idx := StationaryIndex(nil, n, L, Stream(4, int(min(L, 99))))
		for t0, i := range idx {
			if want := x[i] - xbar; math.Abs(dst[t0]-want) > 1e-12 {
				t.Fatalf("stationary L=%v t=%d: %v, want %v", L, t0, dst[t0], want)
			}
		}
	}
	Resampler{Method: Wild}.Residuals(dst, x, Stream(5, 0))
	for t0 := range x {
		if math.Abs(dst[t0]) != math.Abs(x[t0]) {
			t.Fatalf("wild t=%d: |%v| != |%v|", t0, dst[t0], x[t0])
		}
	}
}

// The point of centering: E*[e*_t] = 0 at every week, even at the series'
// ends where uncentered moving blocks are biased (an end value is covered
// by fewer blocks; Lahiri 2003, ch. 2). Checked by Monte Carlo on a series
// with a trend, whose uncentered first-position mean would be far from zero;
// each position's average over B replicates must be within 5 s.e.
// (sd of x over √B) of zero.
func TestResidualsBootstrapMeanZero(t *testing.T) {
	const n, B = 60, 20000
	x := make([]float64, n)
	for i := range x {
		x[i] = float64(i) - (n-1)/2.0
	}
	se := math.Sqrt(sampleVar(x) / B)
	dst := make([]float64, n)
	sum := make([]float64, n)
	for _, m := range methods {
		clear(sum)
		for b := range B {
			Resampler{Method: m, BlockLength: 10}.Residuals(dst, x, Stream(8, b))
			for i, v := range dst {
				sum[i] += v
			}
		}
		for i, s := range sum {
			if math.Abs(s/B) > 5*se {
				t.Errorf("%s: E*[e*_%d] ≈ %.3f, want 0 ± %.3f", m, i, s/B, 5*se)
			}
		}
	}
	// The uncentered moving-block mean at position 0 is mean(x[0..50]) = −5.
	if uncentered := meanOf(x[:n-10+1]); math.Abs(uncentered) < 20*se {
		t.Fatalf("test series does not expose the edge bias (%v)", uncentered)
	}
}

// Wild weights are Rademacher: ±1 with probability ½ each, independent
// (Liu 1988; Mammen 1993). With N signs the count of +1 is Binomial(N, ½):
// mean N/2, s.d. √N/2; each check allows 5 s.d. (two-sided normal tail
// 5.7e-7 per check, 2 + 64 checks). Also checked per bit position of the
// 64-bit draws and for agreement of neighbours (independence).
func TestWildRademacher(t *testing.T) {
	const n, B = 312, 2000
	x := make([]float64, n)
	for i := range x {
		x[i] = 1
	}
	dst := make([]float64, n)
	var plus, agree, total, pairs int
	var byBit, bitTotal [64]int
	for b := range B {
		Resampler{Method: Wild}.Residuals(dst, x, Stream(9, b))
		for i, v := range dst {
			if v != 1 && v != -1 {
				t.Fatalf("weight %v is not ±1", v)
			}
			total++
			bitTotal[i%64]++
			if v == 1 {
				plus++
				byBit[i%64]++
			}
			if i > 0 {
				pairs++
				if v == dst[i-1] {
					agree++
				}
			}
		}
	}
	within := func(what string, k, N int) {
		t.Helper()
		if d := math.Abs(float64(k) - float64(N)/2); d > 5*math.Sqrt(float64(N))/2 {
			t.Errorf("%s: %d of %d, |k − N/2| = %.0f > 5 s.d. = %.0f", what, k, N, d, 5*math.Sqrt(float64(N))/2)
		}
	}
	within("+1 weights", plus, total)
	within("equal neighbours", agree, pairs)
	for j := range 64 {
		within("+1 at bit "+string(rune('0'+j/10))+string(rune('0'+j%10)), byBit[j], bitTotal[j])
	}
	t.Logf("+1 share %.5f of %d, equal-neighbour share %.5f", float64(plus)/float64(total), total, float64(agree)/float64(pairs))
}

// Moving blocks (Künsch 1989): runs of block consecutive indices, the last
// one possibly cut, starts uniform on [0, n−block]; each of the 16 starts'
// counts within 5 binomial s.d. of its expectation.
func TestMovingBlockIndex(t *testing.T) {
	const n, block, draws = 23, 8, 20000
	counts := make([]int, n-block+1)
	var idx []int
	var blocks int
	for d := range draws {
		idx = MovingBlockIndex(idx, n, block, Stream(12, d))
		if len(idx) != n {
			t.Fatalf("len %d", len(idx))
		}
		for t0 := 0; t0 < n; t0 += block {
			s := idx[t0]
			if s < 0 || s > n-block {
				t.Fatalf("block start %d outside [0, %d]", s, n-block)
			}
			counts[s]++
			blocks++
			for j := 1; j < block && t0+j < n; j++ {
				if idx[t0+j] != s+j {
					t.Fatalf("block at %d not consecutive: %v", t0, idx[t0:min(t0+block, n)])
				}
			}
		}
	}
	p := 1 / float64(len(counts))
	sd := math.Sqrt(float64(blocks) * p * (1 - p))
	for s, c := range counts {
		if math.Abs(float64(c)-float64(blocks)*p) > 5*sd {
			t.Errorf("start %d drawn %d times, expected %.0f ± %.0f", s, c, float64(blocks)*p, 5*sd)
		}
	}
	if got := MovingBlockIndex(make([]int, 0, 50), 5, 99, Stream(1, 1)); !slices.Equal(got, []int{0, 1, 2, 3, 4}) {
		t.Errorf("block longer than series: %v", got)
	}
}

// Stationary bootstrap (Politis & Romano 1994): block lengths are geometric,
// P(L = k) = (1−p)^(k−1) p with p = 1/meanBlock, blocks wrap circularly.
// Over ~12,500 blocks the mean length and the share of length-1 blocks must
// lie within 5 s.d. (geometric variance (1−p)/p², binomial for the share).
func TestStationaryIndexGeometric(t *testing.T) {
	const n, meanBlock = 100000, 8.0
	idx := StationaryIndex(nil, n, meanBlock, Stream(13, 0))
	var lengths []int
	run := 1
	for t0 := 1; t0 < n; t0++ {
		if idx[t0] < 0 || idx[t0] >= n {
			t.Fatalf("index %d out of range", idx[t0])
		}
		if idx[t0] == (idx[t0-1]+1)%n {
			run++
			continue
		}
		lengths = append(lengths, run)
		run = 1
	}
	// The last block is cut at n: not a full draw, left out.
	p := 1 / meanBlock
	k := float64(len(lengths))
	var sum, ones float64
	for _, l := range lengths {
		sum += float64(l)
		if l == 1 {
			ones++
		}
	}
	if m, sd := sum/k, math.Sqrt((1-p)/(p*p)/k); math.Abs(m-meanBlock) > 5*sd {
		t.Errorf("mean block length %.4f, want %v ± %.4f", m, meanBlock, 5*sd)
	}
	if share, sd := ones/k, math.Sqrt(p*(1-p)/k); math.Abs(share-p) > 5*sd {
		t.Errorf("share of length-1 blocks %.4f, want %v ± %.4f", share, p, 5*sd)
	}
	// On a short series most blocks run past the end and wrap to 0.
	wraps := 0
	for d := range 100 {
		short := StationaryIndex(nil, 10, meanBlock, Stream(13, 2+d))
		for t0 := 1; t0 < len(short); t0++ {
			if short[t0-1] == 9 && short[t0] == 0 {
				wraps++
			}
		}
	}
	if wraps < 10 {
		t.Errorf("%d wraps in 100 draws of a 10-long series with mean block 8", wraps)
	}
	// A mean block length below 1 means 1, as documented.
	if a, b := StationaryIndex(nil, 50, 0.3, Stream(13, 1)), StationaryIndex(nil, 50, 1, Stream(13, 1)); !slices.Equal(a, b) {
		t.Errorf("mean block 0.3 differs from mean block 1")
	}
}

func TestResidualsDeterministic(t *testing.T) {
	x := ar1(Stream(21, 0), 156, 0.5)
	for _, m := range methods {
		r := Resampler{Method: m, BlockLength: 6}
		a := r.Residuals(make([]float64, len(x)), x, Stream(42, 7))
		b := r.Residuals(make([]float64, len(x)), x, Stream(42, 7))
		if !slices.Equal(a, b) {
			t.Errorf("%s: same (seed, i) gave different series", m)
		}
		for _, other := range []struct {
			seed uint64
			i    int
		}{{42, 8}, {43, 7}, {41, 8}} {
			c := r.Residuals(make([]float64, len(x)), x, Stream(other.seed, other.i))
			if slices.Equal(a, c) {
				t.Errorf("%s: (42, 7) and (%d, %d) gave the same series", m, other.seed, other.i)
			}
		}
	}
}

// Replicates computed forwards, backwards, in a shuffled order and by
// concurrent shards are identical, replicate by replicate.
func TestResidualsOrderIndependent(t *testing.T) {
	const B = 64
	x := ar1(Stream(22, 0), 156, 0.5)
	for _, m := range methods {
		r := Resampler{Method: m, BlockLength: 5}
		run := func(order []int) [][]float64 {
			out := make([][]float64, B)
			for _, i := range order {
				out[i] = r.Residuals(make([]float64, len(x)), x, Stream(77, i))
			}
			return out
		}
		forward := make([]int, B)
		for i := range forward {
			forward[i] = i
		}
		backward := slices.Clone(forward)
		slices.Reverse(backward)
		shuffled := rand.New(rand.NewPCG(1, 2)).Perm(B)
		want := run(forward)
		for name, got := range map[string][][]float64{"backward": run(backward), "shuffled": run(shuffled)} {
			for i := range B {
				if !slices.Equal(got[i], want[i]) {
					t.Errorf("%s %s: replicate %d differs", m, name, i)
				}
			}
		}
		const shards = 3
		got := make([][]float64, B)
		var wg sync.WaitGroup
		for k := 1; k <= shards; k++ {
			wg.Go(func() {
				sh := Shard{K: k, N: shards}
				dst := make([]float64, len(x)) // reused buffer, as a worker would
				for i := B - 1; i >= 0; i-- {
					if sh.Has(i) {
						got[i] = slices.Clone(r.Residuals(dst, x, Stream(77, i)))
					}
				}
			})
		}
		wg.Wait()
		for i := range B {
			if !slices.Equal(got[i], want[i]) {
				t.Errorf("%s sharded: replicate %d differs", m, i)
			}
		}
	}
}

// The bootstrap loop reuses its buffers: Residuals must not allocate.
func TestResidualsNoAllocation(t *testing.T) {
	x := ar1(Stream(23, 0), 312, 0.5)
	dst := make([]float64, len(x))
	rng := Stream(1, 1)
	for _, m := range methods {
		r := Resampler{Method: m, BlockLength: 7.3}
		if a := testing.AllocsPerRun(50, func() { r.Residuals(dst, x, rng) }); a != 0 {
			t.Errorf("%s: %v allocations per call", m, a)
		}
	}
	idx := make([]int, len(x))
	if a := testing.AllocsPerRun(50, func() { idx = MovingBlockIndex(idx, len(x), 7, rng) }); a != 0 {
		t.Errorf("MovingBlockIndex: %v allocations per call with capacity", a)
	}
}

func TestResidualsPanics(t *testing.T) {
	x := make([]float64, 10)
	for name, f := range map[string]func(){
		"length":  func() { Resampler{}.Residuals(make([]float64, 9), x, Stream(1, 1)) },
		"overlap": func() { Resampler{}.Residuals(x, x, Stream(1, 1)) },
		"method":  func() { Resampler{Method: "circular"}.Residuals(make([]float64, 10), x, Stream(1, 1)) },
		"NaN":     func() { Resampler{BlockLength: math.NaN()}.Residuals(make([]float64, 10), x, Stream(1, 1)) },
		"block 0": func() { MovingBlockIndex(nil, 10, 0, Stream(1, 1)) },
	} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: no panic", name)
				}
			}()
			f()
		}()
	}
}
