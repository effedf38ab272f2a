package validation

import (
	"fmt"
	"math"
	"sync"
	"sync/atomic"

	"sluice/internal/sample"
)

// Settings says how the checks run. The zero value is usable: every zero
// field means the default it documents.
type Settings struct {
	Seed    uint64 // seeds the fits' random starts and the recovery panels
	Workers int    // parallel refits; 0 means 1

	HoldoutWeeks int // weeks held out at the end; 0 means 13
	Folds        int // backtest origins; 0 means 4
	FoldWeeks    int // weeks per backtest fold; 0 means 13
	Replicates   int // simulated panels of the recovery check; 0 means 20
	BlockWeeks   int // weeks left out per stability refit; 0 means 13

	ValuePerKPI float64 // currency per KPI unit; 0 means 1

	// Rates are the families' false-alarm rates that grade every check
	// with a p-value (Grade); nil means DefaultRates.
	Rates RateFor

	// Progress, if not nil, is told after each unit of work of a stage
	// ("backtest", "recovery", "stability", ...). It may be called from
	// several goroutines at once.
	Progress func(stage string, done, total int)
}

func (s Settings) withDefaults() Settings {
	def := func(v *int, d int) {
		if *v <= 0 {
			*v = d
		}
	}
	def(&s.Workers, 1)
	def(&s.HoldoutWeeks, 13)
	def(&s.Folds, 4)
	def(&s.FoldWeeks, 13)
	def(&s.Replicates, 20)
	def(&s.BlockWeeks, 13)
	if s.Rates == nil {
		s.Rates = DefaultRates
	}
	if s.ValuePerKPI == 0 {
		s.ValuePerKPI = 1
	}
	return s
}

func (s Settings) progress(stage string, done, total int) {
	if s.Progress != nil {
		s.Progress(stage, done, total)
	}
}

// check builds a Check with a formatted detail.
func check(name string, f Family, scope string, st Status, metric, threshold float64, format string, a ...any) Check {
	return Check{Name: name, Family: f, Scope: scope, Status: st, Metric: finite(metric), Threshold: threshold,
		Detail: fmt.Sprintf(format, a...)}
}

// finite keeps a metric encodable as JSON: NaN (undefined) becomes 0 and
// ±Inf the largest float; the status already says Fail for both.
func finite(v float64) float64 {
	switch {
	case math.IsNaN(v):
		return 0
	case math.IsInf(v, 1):
		return math.MaxFloat64
	case math.IsInf(v, -1):
		return -math.MaxFloat64
	}
	return v
}

// parallel runs f(0..n-1) on up to workers goroutines. Results must be
// written by index, so the outcome does not depend on scheduling.
func parallel(n, workers int, f func(i int)) {
	var wg sync.WaitGroup
	next := make(chan int)
	for range min(max(workers, 1), n) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				f(i)
			}
		}()
	}
	for i := range n {
		next <- i
	}
	close(next)
	wg.Wait()
}

func median(x []float64) float64 {
	return sample.Quantile(sample.Sorted(x), 0.5, sample.Default)
}

// counter counts finished units of work across goroutines for Progress.
type counter struct{ n atomic.Int64 }

func (c *counter) inc() int { return int(c.n.Add(1)) }
