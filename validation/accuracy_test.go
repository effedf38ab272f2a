package validation

import (
	"encoding/json"
	"math"
	"os"
	"testing"

	"sluice/internal/refcheck"
	"sluice/model"
)

type accuracyCase struct {
	Train    []float64          `json:"train"`
	Actual   []float64          `json:"actual"`
	Forecast []float64          `json:"forecast"`
	M        int                `json:"m"`
	Values   map[string]float64 `json:"values"`
}

type accuracyFile struct {
	Source   map[string]any          `json:"source"`
	Examples map[string]accuracyCase `json:"examples"`
	Series   struct {
		Values []float64 `json:"values"`
		TrainN int       `json:"train_n"`
		TestN  int       `json:"test_n"`
	} `json:"airpassengers_series"`
}

func loadAccuracy(t *testing.T) accuracyFile {
	t.Helper()
	b, err := os.ReadFile("testdata/forecast_accuracy.json")
	if err != nil {
		t.Fatal(err)
	}
	var f accuracyFile
	if err := json.Unmarshal(b, &f); err != nil {
		t.Fatal(err)
	}
	return f
}

func relClose(got, want, tol float64) bool {
	return math.Abs(got-want) <= tol*math.Abs(want)
}

// The worked examples of Hyndman & Koehler (2006) definitions as computed by
// R forecast 8.20 accuracy() and numpy (testdata/forecast_accuracy.json,
// copied from the project's reference set): the small example with naive
// (m = 1) and seasonal (m = 4) scaling, and AirPassengers (Box, Jenkins &
// Reinsel, Series G) with the seasonal-naive, naive and mean forecasts,
// train 1949–1958, test 1959–1960, m = 12. Tolerance rel 1e-12 as the file
// states.
func TestMeasureReference(t *testing.T) {
	f := loadAccuracy(t)
	air := f.Series.Values
	train, test := air[:f.Series.TrainN], air[f.Series.TrainN:f.Series.TrainN+f.Series.TestN]
	for name, c := range f.Examples {
		t.Run(name, func(t *testing.T) {
			if c.Train == nil { // the AirPassengers cases keep only their forecast
				c.Train, c.Actual, c.M = train, test, 12
			}
			got := Measure(c.Actual, c.Forecast, c.Train, c.M)
			fields := map[string]float64{"ME": got.ME, "RMSE": got.RMSE, "MAE": got.MAE, "MPE": got.MPE,
				"MAPE": got.MAPE, "wMAPE": got.WMAPE, "MASE": got.MASE, "MASE_scale_in_sample_MAE": got.MASEScale}
			for k, want := range c.Values {
				if !relClose(fields[k], want, 1e-12) {
					t.Errorf("%s: got %.17g, want %.17g", k, fields[k], want)
				}
			}
			if len(c.Values) < 7 {
				t.Fatalf("only %d reference values", len(c.Values))
			}
		})
	}
}

// Hand checks of the small example (testdata/forecast_accuracy.json
// "hand_check": MAE 5/4, RMSE √(7/4), wMAPE 5/82), and the undefined cases:
// MAPE with a zero actual and MASE with a training series no longer than m
// are NaN, not a number that looks valid.
func TestMeasureEdges(t *testing.T) {
	m := Measure([]float64{19, 21, 20, 22}, []float64{18, 19, 21, 21}, nil, 1)
	if m.MAE != 5.0/4 || !relClose(m.RMSE, math.Sqrt(7.0/4), 1e-15) || !relClose(m.WMAPE, 5.0/82, 1e-15) {
		t.Errorf("MAE %v RMSE %v wMAPE %v", m.MAE, m.RMSE, m.WMAPE)
	}
	if !math.IsNaN(m.MASE) {
		t.Errorf("MASE without training data = %v, want NaN", m.MASE)
	}
	z := Measure([]float64{0, 2}, []float64{1, 1}, []float64{1, 2, 3}, 1)
	if !math.IsNaN(z.MAPE) || !math.IsNaN(z.MPE) {
		t.Errorf("MAPE with a zero actual = %v, want NaN", z.MAPE)
	}
	if z.WMAPE != 1 || z.MASE != 1 {
		t.Errorf("wMAPE %v (want 2/2), MASE %v (want 1/1)", z.WMAPE, z.MASE)
	}
	// Hyndman & Koehler (2006): seasonal naive scaling needs a full season of
	// history, so sluice uses lag 52 only with two years of weeks.
	for n, want := range map[int]int{103: 1, 104: 52, 156: 52, 60: 1} {
		if got := SeasonLag(n); got != want {
			t.Errorf("SeasonLag(%d) = %d, want %d", n, got, want)
		}
	}
}

// Live cross-check against statsmodels.tools.eval_measures.rmse/meanabs
// (Debian python3-statsmodels 0.13.5) on AirPassengers' seasonal-naive
// forecast and on the holdout forecast of a fitted model on simulated data.
func TestMeasureStatsmodels(t *testing.T) {
	f := loadAccuracy(t)
	air := f.Series.Values
	cases := []map[string][]float64{{"actual": air[120:144], "forecast": f.Examples["airpassengers_snaive"].Forecast}}
	sim := simulate(t, "testdata/truth_clean.yaml", 0)
	d := design(t, sim)
	fit, err := d.Head(143).Fit(sim.Panel.KPI[:143], model.FitSettings{Seed: 1, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	pred := d.Predict(fit.Params)
	cases = append(cases, map[string][]float64{"actual": sim.Panel.KPI[143:], "forecast": pred[143:]})
	in, _ := json.Marshal(map[string]any{"cases": cases})
	out := refcheck.Python(t, []string{"statsmodels"}, "testdata/accuracy_check.py", in)
	var ref struct {
		Cases []struct{ RMSE, Meanabs float64 } `json:"cases"`
	}
	if err := json.Unmarshal(out, &ref); err != nil {
		t.Fatalf("%v: %s", err, out)
	}
	for i, c := range cases {
		got := Measure(c["actual"], c["forecast"], nil, 1)
		if !relClose(got.RMSE, ref.Cases[i].RMSE, 1e-12) || !relClose(got.MAE, ref.Cases[i].Meanabs, 1e-12) {
			t.Errorf("case %d: RMSE %.17g vs statsmodels %.17g, MAE %.17g vs %.17g", i, got.RMSE, ref.Cases[i].RMSE, got.MAE, ref.Cases[i].Meanabs)
		}
	}
}
