package sample

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// Expected values: Hyndman, R. J. and Fan, Y. (1996), Sample Quantiles in
// Statistical Packages, The American Statistician 50(4), definitions evaluated
// in exact rational arithmetic and agreeing with R 4.2.2 quantile(type = 1..9)
// within 1e-12 (testdata/quantiles_hyndman_fan.json).
func TestQuantileHyndmanFan(t *testing.T) {
	var ref struct {
		Samples map[string]struct {
			Sorted    []float64 `json:"sorted"`
			Probs     []float64 `json:"probs"`
			Quantiles map[string]struct {
				Value []float64 `json:"value"`
			} `json:"quantiles"`
		} `json:"samples"`
	}
	readJSON(t, "testdata/quantiles_hyndman_fan.json", &ref)
	if len(ref.Samples) < 3 {
		t.Fatalf("reference has %d samples", len(ref.Samples))
	}
	checked := 0
	for name, s := range ref.Samples {
		for typ := Type(1); typ <= 9; typ++ {
			want := s.Quantiles["type"+string(rune('0'+typ))].Value
			if len(want) != len(s.Probs) {
				t.Fatalf("sample %s type %d: reference missing", name, typ)
			}
			for i, p := range s.Probs {
				got := Quantile(s.Sorted, p, typ)
				if math.Abs(got-want[i]) > 1e-12 {
					t.Errorf("sample %s type %d p=%v: got %v want %v", name, typ, p, got, want[i])
				}
				checked++
			}
		}
	}
	t.Logf("%d quantiles checked", checked)
}

// Expected values: Rockafellar & Uryasev (2000, 2002), Acerbi & Tasche
// (2002); exact fractions cross-checked with SciPy linprog and R
// (testdata/cvar_expected_shortfall.json). Tolerance abs 1e-12.
func TestCVaRReference(t *testing.T) {
	type lossCase struct {
		Beta float64 `json:"beta"`
		VaR  float64 `json:"VaR"`
		CVaR float64 `json:"CVaR"`
	}
	var ref struct {
		Loss30 struct {
			Loss  []float64  `json:"loss"`
			Cases []lossCase `json:"cases"`
		} `json:"loss30"`
		Loss5 struct {
			Loss  []float64  `json:"loss"`
			Prob  []float64  `json:"probability"`
			Cases []lossCase `json:"cases"`
		} `json:"loss5"`
		Outcome30 struct {
			Outcome []float64 `json:"outcome"`
			Cases   []struct {
				Alpha float64 `json:"alpha"`
				CVaR  float64 `json:"lower_tail_CVaR"`
			} `json:"cases"`
		} `json:"outcome30"`
	}
	readJSON(t, "testdata/cvar_expected_shortfall.json", &ref)
	check := func(name string, loss, prob []float64, cases []lossCase) {
		if len(cases) == 0 {
			t.Fatalf("%s: no reference cases", name)
		}
		for _, c := range cases {
			v, cv := LossVaRCVaR(loss, prob, c.Beta)
			if math.Abs(v-c.VaR) > 1e-12 || math.Abs(cv-c.CVaR) > 1e-12 {
				t.Errorf("%s beta=%v: VaR %v CVaR %v, want %v %v", name, c.Beta, v, cv, c.VaR, c.CVaR)
			}
		}
	}
	check("loss30", ref.Loss30.Loss, nil, ref.Loss30.Cases)
	check("loss5", ref.Loss5.Loss, ref.Loss5.Prob, ref.Loss5.Cases)
	for _, c := range ref.Outcome30.Cases {
		if got := LowerCVaR(ref.Outcome30.Outcome, c.Alpha); math.Abs(got-c.CVaR) > 1e-12 {
			t.Errorf("outcome30 alpha=%v: lower CVaR %v, want %v", c.Alpha, got, c.CVaR)
		}
	}
}

func readJSON(t *testing.T, path string, v any) {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatal(err)
	}
}
