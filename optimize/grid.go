package optimize

import (
	"math"
	"sync"
	"sync/atomic"
)

// gridUnits is the number of budget units the grid start divides the
// free budget into.
const gridUnits = 100

// gridStart returns the plan that maximizes the expected value over draws
// with the budget and the boxes alone (group shares are left to the
// projection that follows), on a grid: every free channel gets its lower
// bound plus a whole number of units Δ = (free budget − Σ l)/gridUnits.
// The expected value is a sum of one-channel terms, so dynamic programming
// over the channels finds the grid's best plan exactly, however S-shaped
// the curves (the separable resource allocation problem: Ibaraki & Katoh
// 1988, "Resource Allocation Problems", ch. 3). It returns nil when the
// boxes leave nothing to allocate.
func (sv *solver) gridStart(draws []int) []float64 {
	f := sv.f
	p := sv.p
	m := len(f.free)
	rest := sv.c.Weekly() - f.fixedSum
	var sumL float64
	for _, k := range f.free {
		sumL += f.lower[k]
	}
	R := rest - sumL
	if m == 0 || !(R > 0) {
		return nil
	}
	delta := R / gridUnits
	J := make([]int, m)
	for i, k := range f.free {
		J[i] = gridUnits
		if room := f.upper[k] - f.lower[k]; room < R {
			J[i] = int(math.Floor(room/delta + 1e-9))
		}
	}
	// value[i][j]: mean value of channel i at l + j·Δ.
	value := make([][]float64, m)
	var next atomic.Int64
	work := func() {
		for {
			i := int(next.Add(1)) - 1
			if i >= m {
				return
			}
			k := f.free[i]
			value[i] = make([]float64, J[i]+1)
			for j := range value[i] {
				w := f.lower[k] + float64(j)*delta
				var s float64
				for _, d := range draws {
					v, _ := p.Economics.ChannelValue(p.Response, d, k, w)
					s += v
				}
				value[i][j] = s / float64(len(draws))
			}
		}
	}
	var wg sync.WaitGroup
	for range max(1, min(sv.s.Workers, m)) {
		wg.Go(work)
	}
	wg.Wait()
	cells := 0
	for _, v := range value {
		cells += len(v)
	}
	sv.drawn += cells * len(draws) / len(f.pos) // as whole plans under one draw
	// best[n]: the best total of the channels so far using n units.
	inf := math.Inf(-1)
	best := make([]float64, gridUnits+1)
	for n := range best {
		best[n] = inf
	}
	best[0] = 0
	choice := make([][]int, m)
	for i := range m {
		nb := make([]float64, gridUnits+1)
		choice[i] = make([]int, gridUnits+1)
		for n := range nb {
			nb[n] = inf
			for j := 0; j <= min(n, J[i]); j++ {
				if v := best[n-j] + value[i][j]; v > nb[n] {
					nb[n], choice[i][n] = v, j
				}
			}
		}
		best = nb
	}
	// The budget spends every unit, or at most all of them.
	n := gridUnits
	if sv.c.AtMost {
		for u := range best {
			if best[u] > best[n] {
				n = u
			}
		}
	}
	for math.IsInf(best[n], -1) && n > 0 {
		n-- // the floors left the boxes a unit short: the projection tops up
	}
	w := append([]float64(nil), f.fixed...)
	for i := m - 1; i >= 0; i-- {
		j := choice[i][n]
		w[f.free[i]] = f.lower[f.free[i]] + float64(j)*delta
		n -= j
	}
	return w
}
