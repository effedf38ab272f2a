package model

import (
	"math"

	"gonum.org/v1/gonum/mat"

	"sluice/internal/varpro"
)

// Subset is a design whose fit sees only some of its weeks. The transforms
// still run over every week, so the carryover of spend in a dropped week
// reaches the kept weeks after it, and the scaling (mean spend, trend, season
// phase) stays that of the full design: parameters fitted on a subset
// predict the full design directly. Leave-one-block-out refits and
// split-half fits are subsets.
type Subset struct {
	Design *Design
	Keep   []bool // per week of Design, whether it enters the objective
	rows   []int
}

// Rows returns the subset of d's weeks where keep is true.
func (d *Design) Rows(keep []bool) *Subset {
	if len(keep) != d.N {
		panic("model: Rows: keep and the design differ in length")
	}
	s := &Subset{Design: d, Keep: append([]bool(nil), keep...)}
	for t, k := range keep {
		if k {
			s.rows = append(s.rows, t)
		}
	}
	return s
}

// NumRows is the number of kept weeks.
func (s *Subset) NumRows() int { return len(s.rows) }

// Fit fits y (of the full design's length; dropped weeks are ignored) on
// the kept weeks. FitResult.SSE is the sum over the kept weeks; Fitted and
// Residuals cover every week of the full design. The error is non-nil when
// the fixed columns are linearly dependent on the kept weeks (a control that
// is constant there) or no start gives a finite fit.
func (s *Subset) Fit(y []float64, set FitSettings) (*FitResult, error) {
	return fitExtended(s.Design, y, s.rows, s.Design.Lifts, set)
}

// liftRow is an extra residual row w·(measured − Σ_{t∈[from,to]} β_k
// (M_k(t) − M⁰_k(t))), where M⁰ is channel k's media column with its spend
// zeroed over [from, to] (see LiftEffect and FitCalibrated).
type liftRow struct {
	channel, from, to int
	measured, weight  float64
}

// roiRow is the prior row of channel k's ROI: w·(mean − β_k Σ_t M_k(t) /
// Σ_t x_k(t)) over all weeks of the design, w = σ/sd. It is linear in β_k,
// so the linear part of the fit stays exact (a ridge-type augmentation).
type roiRow struct {
	channel          int
	mean, weight     float64
	spend            float64 // Σ_t x_k(t)
	thetaLo, thetaHi int     // the channel's nonlinear parameters θ[thetaLo:thetaHi]
}

// extended is one worker's variable-projection problem over the kept rows
// of a design plus lift rows and ROI prior rows.
type extended struct {
	d     *Design
	rows  []int
	lifts []liftRow
	rois  []roiRow
	full  *workspace   // columns over all weeks
	zero  []*workspace // per lift row: the design with its spend zeroed
	cols  [][]float64  // [channel][week], all weeks
	zcols [][]float64
	dcol  [][]float64 // [θ][week], all weeks
	zdcol [][]float64
}

func newExtended(d *Design, y []float64, rows []int, lifts []liftRow, rois []roiRow, priors []varpro.Prior) (*extended, *varpro.Problem) {
	e := &extended{d: d, rows: rows, lifts: lifts, rois: rois, full: newWorkspace(d, y)}
	K := len(d.Spec.Channels)
	lo, hi := d.bounds()
	e.cols, e.zcols = allocRows(K, d.N), allocRows(K, d.N)
	e.dcol, e.zdcol = allocRows(len(lo), d.N), allocRows(len(lo), d.N)
	for _, l := range lifts {
		e.zero = append(e.zero, newWorkspace(d.withSpendZeroed(l.channel, l.from, l.to), y))
	}
	nr := len(rows) + len(lifts) + len(rois)
	yy := make([]float64, nr)
	nf := d.Spec.NumFixed()
	fixed := mat.NewDense(nr, nf, nil)
	for r, t := range rows {
		yy[r] = y[t]
		for j := range nf {
			fixed.Set(r, j, d.Fixed.At(t, j))
		}
	}
	for i, l := range lifts {
		yy[len(rows)+i] = l.weight * l.measured // the fixed columns are zero there
	}
	for i, r := range rois {
		yy[len(rows)+len(lifts)+i] = r.weight * r.mean
	}
	prob := &varpro.Problem{Y: yy, Fixed: fixed, NumVarying: K, NonNeg: true, Lower: lo, Upper: hi,
		Columns: e.columns, Deriv: e.deriv, Priors: priors}
	return e, prob
}

func allocRows(k, n int) [][]float64 {
	out := make([][]float64, k)
	for i := range out {
		out[i] = make([]float64, n)
	}
	return out
}

// withSpendZeroed returns a shallow copy of d whose channel k has no spend
// in weeks [from, to]; mean spend (the unit of κ) is unchanged.
func (d *Design) withSpendZeroed(k, from, to int) *Design {
	z := *d
	z.Spend = append([][]float64(nil), d.Spend...)
	x := append([]float64(nil), d.Spend[k]...)
	for t := from; t <= to; t++ {
		x[t] = 0
	}
	z.Spend[k] = x
	return &z
}

func (e *extended) columns(theta []float64, cols [][]float64) {
	e.full.columns(theta, e.cols)
	nr := len(e.rows)
	for l := range cols {
		for r, t := range e.rows {
			cols[l][r] = e.cols[l][t]
		}
	}
	for i, lr := range e.lifts {
		e.zero[i].columns(theta, e.zcols)
		for l := range cols {
			var s float64
			for t := lr.from; t <= lr.to; t++ {
				s += e.cols[l][t] - e.zcols[l][t]
			}
			cols[l][nr+i] = lr.weight * s
		}
	}
	base := nr + len(e.lifts)
	for i, rr := range e.rois {
		for l := range cols {
			cols[l][base+i] = 0
		}
		var s float64
		for _, v := range e.cols[rr.channel] {
			s += v
		}
		cols[rr.channel][base+i] = rr.weight * s / rr.spend
	}
}

func (e *extended) deriv(theta, coef []float64, dst [][]float64) {
	e.full.deriv(theta, coef, e.dcol)
	nr := len(e.rows)
	for j := range dst {
		for r, t := range e.rows {
			dst[j][r] = e.dcol[j][t]
		}
	}
	for i, lr := range e.lifts {
		// deriv reads the workspace state of the last columns call, which
		// columns above made for every zeroed workspace at this theta.
		e.zero[i].deriv(theta, coef, e.zdcol)
		for j := range dst {
			var s float64
			for t := lr.from; t <= lr.to; t++ {
				s += e.dcol[j][t] - e.zdcol[j][t]
			}
			dst[j][nr+i] = lr.weight * s
		}
	}
	base := nr + len(e.lifts)
	for i, rr := range e.rois {
		for j := range dst {
			dst[j][base+i] = 0
		}
		for j := rr.thetaLo; j < rr.thetaHi; j++ {
			var s float64
			for _, v := range e.dcol[j] {
				s += v
			}
			dst[j][base+i] = rr.weight * s / rr.spend
		}
	}
}

// fitExtended runs the multi-start fit of Design.Fit on the extended
// problem: the kept rows, the lift rows and the priors (FitSettings).
func fitExtended(d *Design, y []float64, rows []int, lifts []Lift, set FitSettings) (*FitResult, error) {
	if len(y) != d.N {
		panic("model: KPI length differs from the design")
	}
	var pri Priors
	if !set.NoPriors {
		pri = set.Priors
		if pri == nil {
			pri = d.ResolvePriors(y)
		}
		if len(pri) != len(d.Spec.Channels) {
			panic("model: priors and channels differ in number")
		}
	}
	sigma, estimate := set.NoiseSD, false
	if sigma == 0 && (pri != nil || len(lifts) > 0) {
		sigma, estimate = d.roughNoise(y, rows), true
	}
	fr, err := d.fitWith(y, rows, lifts, pri, sigma, set)
	if err != nil || !estimate {
		return fr, err
	}
	// Second pass: the fit's own residual SD, if the rough one was off.
	var sse float64
	for _, t := range rows {
		sse += fr.Residuals[t] * fr.Residuals[t]
	}
	s1 := math.Sqrt(sse / float64(max(1, len(rows)-d.Spec.NumParams())))
	if !(s1 > 0) || math.Abs(s1/sigma-1) <= 0.05 {
		return fr, nil
	}
	warm := fr.Params.Clone()
	set2 := set
	set2.Warm, set2.Starts, set2.Workers = &warm, 1, 1
	fr2, err := d.fitWith(y, rows, lifts, pri, s1, set2)
	if err != nil {
		return fr, nil
	}
	fr2.StartsTried += fr.StartsTried
	fr2.Converged += fr.Converged
	fr2.Evaluations += fr.Evaluations
	return fr2, nil
}

// fitWith runs the multi-start with the priors and lift rows weighed by sigma.
func (d *Design) fitWith(y []float64, rows []int, lifts []Lift, pri Priors, sigma float64, set FitSettings) (*FitResult, error) {
	var lr []liftRow
	for _, l := range lifts {
		lr = append(lr, liftRow{channel: l.Channel, from: l.From, to: l.To, measured: l.Incremental, weight: sigma / l.StdError})
	}
	var rois []roiRow
	var tp []varpro.Prior
	if pri != nil {
		tp = d.thetaPriors(pri, sigma)
		j := 0
		for k, c := range d.Spec.Channels {
			n := c.numNonlinear()
			var spend float64
			for _, v := range d.Spend[k] {
				spend += v
			}
			if pri[k].ROI.SD > 0 && spend > 0 {
				rois = append(rois, roiRow{channel: k, mean: pri[k].ROI.Mean, weight: sigma / pri[k].ROI.SD,
					spend: spend, thetaLo: j, thetaHi: j + n})
			}
			j += n
		}
	}
	starts := d.starts(set)
	workers := min(max(set.Workers, 1), len(starts))
	solvers := make([]*varpro.Solver, workers)
	for i := range solvers {
		_, prob := newExtended(d, y, rows, lr, rois, tp)
		s, err := varpro.NewSolver(prob)
		if err != nil {
			return nil, err
		}
		solvers[i] = s
	}
	fr, err := d.multiStart(y, starts, solvers, set)
	if err != nil {
		return nil, err
	}
	// SSE: the kept weeks and the lift rows; the priors are the penalty.
	var sse float64
	for _, t := range rows {
		sse += fr.Residuals[t] * fr.Residuals[t]
	}
	for _, l := range lr {
		r := l.weight * (l.measured - d.LiftEffect(l.channel, fr.Params.Channels[l.channel], l.from, l.to))
		sse += r * r
	}
	fr.Penalty = math.Max(0, fr.SSE-sse)
	fr.SSE = sse
	fr.Priors = pri
	if pri != nil || len(lifts) > 0 {
		fr.NoiseSD = sigma
	}
	return fr, nil
}

// roughNoise is a first σ for weighing priors and lift rows: the residual
// SD of y on the base columns and the raw spend (linear), over the rows.
func (d *Design) roughNoise(y []float64, rows []int) float64 {
	nf, K := d.Spec.NumFixed(), len(d.Spend)
	a := mat.NewDense(len(rows), nf+K, nil)
	b := mat.NewVecDense(len(rows), nil)
	for r, t := range rows {
		for j := range nf {
			a.Set(r, j, d.Fixed.At(t, j))
		}
		for k := range K {
			a.Set(r, nf+k, d.Spend[k][t])
		}
		b.SetVec(r, y[t])
	}
	var sd float64
	var qr mat.QR
	qr.Factorize(a)
	var x mat.VecDense
	dof := len(rows) - nf - K
	if dof > 0 && qr.SolveVecTo(&x, false, b) == nil {
		var e mat.VecDense
		e.MulVec(a, &x)
		e.SubVec(b, &e)
		sd = math.Sqrt(mat.Dot(&e, &e) / float64(dof))
	}
	if !(sd > 0) || math.IsInf(sd, 0) {
		// Fall back to the SD of y itself: wide, so the priors are weak.
		var m, ss float64
		for _, t := range rows {
			m += y[t]
		}
		m /= float64(len(rows))
		for _, t := range rows {
			ss += (y[t] - m) * (y[t] - m)
		}
		sd = math.Sqrt(ss / float64(max(1, len(rows)-1)))
	}
	if !(sd > 0) {
		sd = 1
	}
	return sd
}
