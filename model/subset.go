package model

import (
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
	return fitExtended(s.Design, y, s.rows, nil, set)
}

// liftRow is an extra residual row w·(measured − Σ_{t∈[from,to]} β_k
// (M_k(t) − M⁰_k(t))), where M⁰ is channel k's media column with its spend
// zeroed over [from, to] (see LiftEffect and FitCalibrated).
type liftRow struct {
	channel, from, to int
	measured, weight  float64
}

// extended is one worker's variable-projection problem over the kept rows
// of a design plus lift rows.
type extended struct {
	d     *Design
	rows  []int
	lifts []liftRow
	full  *workspace   // columns over all weeks
	zero  []*workspace // per lift row: the design with its spend zeroed
	cols  [][]float64  // [channel][week], all weeks
	zcols [][]float64
	dcol  [][]float64 // [θ][week], all weeks
	zdcol [][]float64
}

func newExtended(d *Design, y []float64, rows []int, lifts []liftRow) (*extended, *varpro.Problem) {
	e := &extended{d: d, rows: rows, lifts: lifts, full: newWorkspace(d, y)}
	K := len(d.Spec.Channels)
	lo, hi := d.bounds()
	e.cols, e.zcols = allocRows(K, d.N), allocRows(K, d.N)
	e.dcol, e.zdcol = allocRows(len(lo), d.N), allocRows(len(lo), d.N)
	for _, l := range lifts {
		e.zero = append(e.zero, newWorkspace(d.withSpendZeroed(l.channel, l.from, l.to), y))
	}
	nr := len(rows) + len(lifts)
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
	prob := &varpro.Problem{Y: yy, Fixed: fixed, NumVarying: K, NonNeg: true, Lower: lo, Upper: hi,
		Columns: e.columns, Deriv: e.deriv}
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
}

// fitExtended runs the multi-start fit of Design.Fit on the extended
// problem: the kept rows and the lift rows.
func fitExtended(d *Design, y []float64, rows []int, lifts []liftRow, set FitSettings) (*FitResult, error) {
	if len(y) != d.N {
		panic("model: KPI length differs from the design")
	}
	starts := d.starts(set)
	workers := min(max(set.Workers, 1), len(starts))
	solvers := make([]*varpro.Solver, workers)
	for i := range solvers {
		_, prob := newExtended(d, y, rows, lifts)
		s, err := varpro.NewSolver(prob)
		if err != nil {
			return nil, err
		}
		solvers[i] = s
	}
	return d.multiStart(y, starts, solvers, set)
}
