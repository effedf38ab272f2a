package uncertainty

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"strconv"
	"testing"

	"sluice/internal/refcheck"
)

type pwValues struct {
	MHat int     `json:"m_hat"`
	M    int     `json:"M"`
	BSB  float64 `json:"b_SB"`
	BCB  float64 `json:"b_CB"`
}

type pwReference struct {
	Source json.RawMessage `json:"source"`
	Arch   struct {
		Published struct {
			BSB  float64 `json:"b_SB"`
			BCB  float64 `json:"b_CB"`
			RTol float64 `json:"rtol"`
		} `json:"published_arch"`
		Reference pwValues `json:"this_script_reference_code_convention"`
		Paper     pwValues `json:"this_script_paper_text_convention"`
	} `json:"arch_dataset"`
	Small struct {
		X         []float64 `json:"x"`
		Reference pwValues  `json:"this_script_reference_code_convention"`
		Paper     pwValues  `json:"this_script_paper_text_convention"`
	} `json:"small_dataset"`
}

func readPW(t *testing.T) pwReference {
	t.Helper()
	var ref pwReference
	readJSON(t, "testdata/politis_white_block_length.json", &ref)
	if len(ref.Source) == 0 || len(ref.Small.X) != 200 {
		t.Fatalf("testdata/politis_white_block_length.json: source or small series missing")
	}
	return ref
}

// archSeries reads the AR(1) series of arch's published block-length test.
func archSeries(t testing.TB) []float64 {
	t.Helper()
	b, err := os.ReadFile("testdata/politis_white_ar1_arch.csv")
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	x := make([]float64, 0, len(rows)-1)
	for _, row := range rows[1:] {
		v, err := strconv.ParseFloat(row[1], 64)
		if err != nil {
			t.Fatal(err)
		}
		x = append(x, v)
	}
	if len(x) != 10000 {
		t.Fatalf("arch series has %d values, want 10000", len(x))
	}
	return x
}

func readJSON(t testing.TB, path string, v any) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
}

// lre is the log relative error (digits of agreement), capped at 15.
func lre(got, want float64) float64 {
	if got == want {
		return 15
	}
	return min(15, -math.Log10(math.Abs(got-want)/math.Abs(want)))
}

func checkRel(t *testing.T, what string, got, want, rel float64) {
	t.Helper()
	if !(math.Abs(got-want) <= rel*math.Abs(want)) {
		t.Errorf("%s = %.12g, want %.12g (rel %.1e)", what, got, want, rel)
		return
	}
	t.Logf("%s = %.12g, want %.12g: %.1f digits", what, got, want, lre(got, want))
}

// Expected values: Politis & White (2004) with the Patton, Politis & White
// (2009) correction, "reference code" convention for m̂, computed by the
// reference collection's numpy implementation (testdata/
// politis_white_block_length.json); tolerance rel 1e-9 as the file states.
// The paper-text convention's values (m̂ one smaller, different b) are
// checked to differ, so the test tells the two conventions apart.
func TestAutoBlockLengthReferenceValues(t *testing.T) {
	ref := readPW(t)
	for _, c := range []struct {
		name        string
		x           []float64
		want, paper pwValues
	}{
		{"small AR(1) n=200", ref.Small.X, ref.Small.Reference, ref.Small.Paper},
		{"arch AR(1) n=10000", archSeries(t), ref.Arch.Reference, ref.Arch.Paper},
	} {
		t.Run(c.name, func(t *testing.T) {
			got := AutoBlockLength(c.x)
			if got.MHat != c.want.MHat || got.M != c.want.M {
				t.Errorf("m̂, M = %d, %d, want %d, %d", got.MHat, got.M, c.want.MHat, c.want.M)
			}
			checkRel(t, "b_SB", got.Stationary, c.want.BSB, 1e-9)
			checkRel(t, "b_CB", got.Circular, c.want.BCB, 1e-9)
			if math.Abs(got.Stationary/c.paper.BSB-1) < 1e-3 {
				t.Errorf("b_SB %v matches the paper-text convention %v", got.Stationary, c.paper.BSB)
			}
		})
	}
}

// Expected values: arch (K. Sheppard et al.),
// arch/tests/bootstrap/test_block_length.py, https://github.com/bashtage/arch:
// stationary 13.635665, circular 15.60894 with rtol 1e-4, on the series
// stored in testdata/politis_white_ar1_arch.csv.
func TestAutoBlockLengthArchPublished(t *testing.T) {
	ref := readPW(t)
	pub := ref.Arch.Published
	if pub.BSB != 13.635665 || pub.BCB != 15.60894 || pub.RTol != 1e-4 {
		t.Fatalf("testdata published values changed: %+v", pub)
	}
	got := AutoBlockLength(archSeries(t))
	checkRel(t, "b_SB vs arch", got.Stationary, pub.BSB, pub.RTol)
	checkRel(t, "b_CB vs arch", got.Circular, pub.BCB, pub.RTol)
}

// The ratio b_CB/b_SB = (D_SB/D_CB)^(1/3) = 1.5^(1/3) for every series
// (Patton, Politis & White 2009) — unless b_max
// caps one of them.
func TestAutoBlockLengthRatio(t *testing.T) {
	for _, phi := range []float64{-0.4, 0, 0.3, 0.6, 0.9} {
		x := ar1(Stream(7, int(10*(phi+1))), 312, phi)
		got := AutoBlockLength(x)
		bMax := math.Ceil(min(3*math.Sqrt(312), 312.0/3))
		if got.Circular >= bMax {
			continue
		}
		if r := got.Circular / got.Stationary; math.Abs(r-math.Cbrt(1.5)) > 1e-12 {
			t.Errorf("phi %v: b_CB/b_SB = %v, want 1.5^(1/3)", phi, r)
		}
	}
}

// Degenerate input: no dependence can be measured.
func TestAutoBlockLengthDegenerate(t *testing.T) {
	for _, x := range [][]float64{nil, {3}, {2, 2, 2, 2, 2, 2, 2, 2}} {
		got := AutoBlockLength(x)
		if got != (BlockLengthResult{Stationary: 1, Circular: 1}) {
			t.Errorf("AutoBlockLength(%v) = %+v", x, got)
		}
	}
}

// Live cross-check: the same formulas in numpy (testdata/block_length_ref.py,
// Debian python3-numpy) on seeded AR(1) series of the sizes sluice sees
// (3 and 6 years of weeks), on series so short that lags reach n, on a near
// unit root (no run of K_N insignificant lags: m̂ falls back to m_max) and
// on a period-10 cycle (the fallback picks the last significant lag).
// Tolerance rel 1e-9 (summation order only).
func TestAutoBlockLengthNumpy(t *testing.T) {
	type cs struct {
		n     int
		phi   float64
		cycle bool // add sin(2πt/10)
	}
	cases := []cs{{156, 0.5, false}, {312, 0.3, false}, {312, -0.5, false}, {312, 0, false}, {520, 0.8, false},
		{312, 0.995, false}, {312, 0, true}, {12, 0.5, false}, {30, 0.7, false}, {8, 0.5, false}, {6, 0.9, false}}
	series := make([][]float64, len(cases))
	for i, c := range cases {
		series[i] = ar1(Stream(2004, i), c.n, c.phi)
		if c.cycle {
			for k := range series[i] {
				series[i][k] += 1.5 * math.Sin(2*math.Pi*float64(k)/10)
			}
		}
	}
	in, err := json.Marshal(series)
	if err != nil {
		t.Fatal(err)
	}
	out := refcheck.Python(t, []string{"numpy"}, "testdata/block_length_ref.py", in)
	var want []pwValues
	if err := json.Unmarshal(out, &want); err != nil {
		t.Fatalf("reference output %q: %v", out, err)
	}
	if len(want) != len(cases) {
		t.Fatalf("reference returned %d results for %d series", len(want), len(cases))
	}
	for i, c := range cases {
		got := AutoBlockLength(series[i])
		name := fmt.Sprintf("n=%d phi=%v cycle=%v", c.n, c.phi, c.cycle)
		if got.MHat != want[i].MHat || got.M != want[i].M {
			t.Errorf("%s: m̂, M = %d, %d, numpy %d, %d", name, got.MHat, got.M, want[i].MHat, want[i].M)
		}
		t.Logf("%s: m̂ %d, M %d", name, got.MHat, got.M)
		checkRel(t, name+" b_SB", got.Stationary, want[i].BSB, 1e-9)
		checkRel(t, name+" b_CB", got.Circular, want[i].BCB, 1e-9)
	}
}

// The plug-in rule on AR(1) series of known coefficient ρ: the MSE-optimal
// block length for the variance of a mean is (3n/2)^(1/3) (2ρ/(1−ρ²))^(2/3)
// (Politis & White 2004, the AR(1) case of b = (2G²/D)^(1/3) n^(1/3) with
// G/g(0) = 2ρ/(1−ρ²), D = (4/3) g(0)², derived by hand from the AR(1)
// autocovariances γ(k) = γ(0) ρ^|k|). The estimate ρ̂ has SD about
// √((1−ρ²)/n); the tolerance allows 4 SD of ρ̂ propagated through the rule.
func TestRegressionBlockLengthAR1(t *testing.T) {
	const n = 4000
	for _, rho := range []float64{0.1, 0.3, 0.5, 0.6} {
		rng := rand.New(rand.NewPCG(11, uint64(rho*100)))
		e := make([]float64, n)
		for i := range e {
			e[i] = rng.NormFloat64()
			if i > 0 {
				e[i] += rho * e[i-1]
			}
		}
		got := RegressionBlockLength(e)
		want := func(r float64) float64 { return math.Cbrt(1.5*n) * math.Pow(2*r/(1-r*r), 2.0/3) }
		sd := math.Sqrt((1 - rho*rho) / n)
		lo, hi := want(rho-4*sd), want(rho+4*sd)
		if got.Rule < lo || got.Rule > hi {
			t.Errorf("rho %.1f: rule %.3f, closed form %.3f (allowed %.3f..%.3f)", rho, got.Rule, want(rho), lo, hi)
		}
		if math.Abs(got.Lag1-rho) > 4*sd {
			t.Errorf("rho %.1f: lag-1 estimate %.4f", rho, got.Lag1)
		}
		// n = 4000: cap ⌈2·4000^(1/3)⌉ = 32 (computed by hand), above every rule value here.
		if got.Cap != 32 || got.Capped || got.Length != math.Ceil(got.Rule) {
			t.Errorf("rho %.1f: %+v", rho, got)
		}
	}
	// White noise: |ρ̂| within 2/√156 = 0.16 gives a rule of at most
	// (234)^(1/3)·(0.32/0.974)^(2/3) = 2.93 (by hand), so a length ≤ 3. A strongly dependent series at n = 156
	// binds the cap ⌈2·156^(1/3)⌉ = 11 (computed by hand) and says so.
	rng := rand.New(rand.NewPCG(3, 4))
	e := make([]float64, 156)
	for i := range e {
		e[i] = rng.NormFloat64()
	}
	if b := RegressionBlockLength(e); b.Length > 3 || b.Capped {
		t.Errorf("white noise: %+v", b)
	}
	for i := 1; i < len(e); i++ {
		e[i] += 0.95 * e[i-1]
	}
	if b := RegressionBlockLength(e); !b.Capped || b.Length != 11 || b.Rule <= 11 {
		t.Errorf("AR(0.95), n=156: %+v, want capped at 11", b)
	}
}
