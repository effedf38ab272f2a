package validation_test

import (
	"fmt"

	"sluice/validation"
)

// The small worked example of testdata/forecast_accuracy.json (Hyndman &
// Koehler 2006 definitions): four forecasts of a short series, MASE scaled
// by the in-sample naive forecast (lag 1).
func ExampleMeasure() {
	train := []float64{10, 12, 14, 13, 15, 17, 16, 18}
	actual := []float64{19, 21, 20, 22}
	forecast := []float64{18, 19, 21, 21}
	m := validation.Measure(actual, forecast, train, 1)
	fmt.Printf("ME %.2f  MAE %.2f  RMSE %.4f  wMAPE %.4f (5/82)  MASE %.4f (35/48)\n", m.ME, m.MAE, m.RMSE, m.WMAPE, m.MASE)
	// Output: ME 0.75  MAE 1.25  RMSE 1.3229  wMAPE 0.0610 (5/82)  MASE 0.7292 (35/48)
}

// Thresholds come with documented defaults and can be overridden by key,
// as `sluice validate --limits` does.
func ExampleThresholds_Set() {
	th := validation.DefaultThresholds()
	fmt.Println(th.HoldoutWMAPE, th.LiftZ)
	if err := th.Set("holdout_wmape", 0.08, 0.15); err != nil {
		fmt.Println(err)
	}
	fmt.Println(th.HoldoutWMAPE)
	fmt.Println(th.Set("holdout_wmape", 0.2, 0.1))
	// Output:
	// {0.1 0.2} {1.5 2}
	// {0.08 0.15}
	// threshold holdout_wmape: warn 0.2 must come before fail 0.1
}
