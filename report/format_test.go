package report

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Thousands separated by commas, whole units, minus sign in front: the
// common practice of English-language financial statements, no source.
func TestMoney(t *testing.T) {
	for _, tt := range []struct {
		x    float64
		want string
	}{
		{0, "0"}, {-0.4, "0"}, {0.5, "1"}, {999, "999"}, {1000, "1,000"}, {38000, "38,000"},
		{-61000.4, "-61,000"}, {1234567.5, "1,234,568"}, {-1e9, "-1,000,000,000"},
		{math.NaN(), "n/a"}, {math.Inf(1), "unbounded"},
	} {
		if got := money(tt.x); got != tt.want {
			t.Errorf("money(%v) = %q, want %q", tt.x, got, tt.want)
		}
	}
	for _, tt := range []struct {
		x    float64
		want string
	}{{90000, "+90,000"}, {-4800, "-4,800"}, {0.2, "0"}} {
		if got := signedMoney(tt.x); got != tt.want {
			t.Errorf("signedMoney(%v) = %q, want %q", tt.x, got, tt.want)
		}
	}
}

// Rounding to three significant digits (common practice, no source).
func TestApprox(t *testing.T) {
	for _, tt := range []struct {
		x    float64
		want string
	}{{241596, "242,000"}, {-4849, "-4,850"}, {57.27, "57"}, {999.6, "1,000"}, {0, "0"}} {
		if got := approx(tt.x); got != tt.want {
			t.Errorf("approx(%v) = %q, want %q", tt.x, got, tt.want)
		}
	}
}

func TestCompactAndPercent(t *testing.T) {
	for _, tt := range []struct {
		x    float64
		want string
	}{{0, "0"}, {950, "950"}, {20000, "20k"}, {1.5e6, "1.5M"}, {-250000, "-250k"}, {2e9, "2B"}, {12500, "12.5k"}} {
		if got := compact(tt.x); got != tt.want {
			t.Errorf("compact(%v) = %q, want %q", tt.x, got, tt.want)
		}
	}
	for _, tt := range []struct {
		p    float64
		want string
	}{{0.072, "7.2%"}, {0.23, "23%"}, {1, "100%"}, {0, "0%"}, {-0.0001, "0%"}} {
		if got := pct(tt.p); got != tt.want {
			t.Errorf("pct(%v) = %q, want %q", tt.p, got, tt.want)
		}
	}
	// English ordinal suffixes (common practice, no source).
	for _, tt := range []struct {
		l    float64
		want string
	}{{0.05, "5th percentile"}, {0.01, "1st percentile"}, {0.02, "2nd percentile"}, {0.03, "3rd percentile"}, {0.11, "11th percentile"}, {0.025, "2.5th percentile"}} {
		if got := percentileName(tt.l); got != tt.want {
			t.Errorf("percentileName(%v) = %q, want %q", tt.l, got, tt.want)
		}
	}
}

// TestGainBins: the bins cover every gain once, zero is an edge (no bar
// mixes losses and gains), and their number follows the Rice rule
// k = 2·n^(1/3) (Lane, Online Statistics Education, "Histograms"), up to
// the rounding of the width up to 1, 2, 2.5, 5 or 10 times a power of ten,
// which at most doubles it.
func TestGainBins(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, n := range []int{8, 125, 1000, 8000} {
		g := make([]float64, n)
		for i := range g {
			g[i] = 50000 + 80000*rng.NormFloat64()
		}
		edges, counts := gainBins(g)
		if len(edges) != len(counts)+1 {
			t.Fatalf("n=%d: %d edges for %d bins", n, len(edges), len(counts))
		}
		var total float64
		for _, c := range counts {
			total += c
		}
		if int(total) != n {
			t.Errorf("n=%d: bins hold %v gains", n, total)
		}
		for _, x := range g {
			if x < edges[0] || x > edges[len(edges)-1] {
				t.Errorf("n=%d: gain %v outside [%v, %v]", n, x, edges[0], edges[len(edges)-1])
			}
		}
		hasZero := false
		for _, e := range edges {
			hasZero = hasZero || math.Abs(e) < 1e-9
		}
		if !hasZero {
			t.Errorf("n=%d: zero is not a bin edge: %v", n, edges)
		}
		rice := min(40, max(10, math.Ceil(2*math.Cbrt(float64(n)))))
		// The width rounds up by at most a factor of 2 (2.5 → 5), and the
		// aligned start adds at most one bin.
		if k := float64(len(counts)); k < rice/2-1 || k > rice+1 {
			t.Errorf("n=%d: %v bins, the Rice rule gives %v", n, k, rice)
		}
	}
	// All gains equal (a refused plan moves nothing): one bar.
	edges, counts := gainBins([]float64{0, 0, 0})
	if len(counts) != 1 || counts[0] != 3 || edges[0] >= 0 || edges[1] <= 0 {
		t.Errorf("equal gains: edges %v counts %v", edges, counts)
	}
}

// TestAt: linear interpolation on the grid, the ends outside it.
func TestAt(t *testing.T) {
	xs, ys := []float64{0, 10, 20}, []float64{0, 100, 120}
	for _, tt := range []struct {
		x, want float64
		beyond  bool
	}{{5, 50, false}, {15, 110, false}, {20, 120, false}, {25, 120, true}, {-1, 0, true}, {0, 0, false}} {
		got, beyond := at(xs, ys, tt.x)
		if got != tt.want || beyond != tt.beyond {
			t.Errorf("at(%v) = %v, %v; want %v, %v", tt.x, got, beyond, tt.want, tt.beyond)
		}
	}
}
