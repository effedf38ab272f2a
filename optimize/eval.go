package optimize

import (
	"sync"
	"sync/atomic"
)

// chunk is the number of draws one task evaluates. Partial sums are kept per
// chunk and added in chunk order, so results do not depend on how many
// goroutines share the work.
const chunk = 16

// evaluator computes the value of a plan and its gradient over a set of
// draws, spreading the draws over goroutines.
type evaluator struct {
	resp    Response
	econ    Economics
	draws   []int     // the draws averaged over
	base    []float64 // value of the status quo under each draw (risk objectives)
	k       int       // channels
	workers int
	perDraw bool // keep every draw's value and gradient (risk objectives)

	vals  []float64   // value under each draw
	grads []float64   // gradient under each draw, len(draws)·k, when perDraw
	sumV  []float64   // per chunk: sum of values
	sumG  []float64   // per chunk: sum of gradients, k each
	bufs  [][]float64 // per worker gradient scratch
	wt    []float64   // draw weights of a smoothed objective
	evals int         // evaluations done
	drawn int         // plans evaluated under one draw, summed over evaluations
}

func newEvaluator(resp Response, econ Economics, draws []int, workers int, perDraw bool) *evaluator {
	k := resp.NumChannels()
	nc := (len(draws) + chunk - 1) / chunk
	workers = max(1, min(workers, nc))
	ev := &evaluator{resp: resp, econ: econ, draws: draws, k: k, workers: workers, perDraw: perDraw,
		vals: make([]float64, len(draws)), sumV: make([]float64, nc), sumG: make([]float64, nc*k),
		wt: make([]float64, len(draws))}
	if perDraw {
		ev.grads = make([]float64, len(draws)*k)
	}
	ev.bufs = make([][]float64, workers)
	for i := range ev.bufs {
		ev.bufs[i] = make([]float64, k)
	}
	return ev
}

// run evaluates plan w under every draw.
func (ev *evaluator) run(w []float64) {
	ev.evals++
	ev.drawn += len(ev.draws)
	nc := len(ev.sumV)
	var next atomic.Int64
	work := func(buf []float64) {
		for {
			c := int(next.Add(1)) - 1
			if c >= nc {
				return
			}
			sv := 0.0
			sg := ev.sumG[c*ev.k : (c+1)*ev.k]
			clear(sg)
			for i := c * chunk; i < min((c+1)*chunk, len(ev.draws)); i++ {
				g := buf
				if ev.perDraw {
					g = ev.grads[i*ev.k : (i+1)*ev.k]
				}
				v := ev.econ.Value(ev.resp, ev.draws[i], w, g)
				ev.vals[i] = v
				sv += v
				for j, x := range g {
					sg[j] += x
				}
			}
			ev.sumV[c] = sv
		}
	}
	if ev.workers == 1 {
		work(ev.bufs[0])
		return
	}
	var wg sync.WaitGroup
	for i := range ev.workers {
		wg.Go(func() { work(ev.bufs[i]) })
	}
	wg.Wait()
}

// mean returns the mean value of the last run and writes the mean gradient
// into grad (len k).
func (ev *evaluator) mean(grad []float64) float64 {
	clear(grad)
	var v float64
	for c, s := range ev.sumV {
		v += s
		axpy(1, ev.sumG[c*ev.k:(c+1)*ev.k], grad)
	}
	n := float64(len(ev.draws))
	for j := range grad {
		grad[j] /= n
	}
	return v / n
}

// objective returns the (smoothed, width h) objective of the last run and
// writes its gradient with respect to the plan into grad.
func (ev *evaluator) objective(o Objective, h float64, grad []float64) float64 {
	if o.Kind == Expected {
		return ev.mean(grad)
	}
	f := o.smoothed(ev.vals, ev.base, h, ev.wt)
	clear(grad)
	for d, wd := range ev.wt {
		if wd != 0 {
			axpy(wd, ev.grads[d*ev.k:(d+1)*ev.k], grad)
		}
	}
	return f
}
