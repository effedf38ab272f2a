package model

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"sync"

	"gonum.org/v1/gonum/mat"

	"sluice/internal/varpro"
)

// ChannelParams are the fitted parameters of one channel.
type ChannelParams struct {
	Decay   float64 `json:"decay"`           // λ
	Peak    float64 `json:"peak,omitempty"`  // θ, delayed adstock only
	HalfSat float64 `json:"half_saturation"` // κ, multiple of the steady-state adstock of mean spend (Design.HalfSatLevel)
	Shape   float64 `json:"shape,omitempty"` // s, Hill only
	Beta    float64 `json:"beta"`            // KPI at full saturation per week, ≥ 0
}

// Params are all fitted parameters of the model.
type Params struct {
	Channels []ChannelParams `json:"channels"`
	// Fixed holds the coefficients of the fixed columns in the order of
	// Spec.FixedNames: intercept, trend, sin/cos per harmonic, controls.
	Fixed []float64 `json:"fixed"`
}

// Clone returns a deep copy of p.
func (p Params) Clone() Params {
	return Params{Channels: append([]ChannelParams(nil), p.Channels...), Fixed: append([]float64(nil), p.Fixed...)}
}

// FixedNames names the fixed columns in order.
func (s *Spec) FixedNames() []string {
	names := []string{"intercept"}
	if s.Trend {
		names = append(names, "trend")
	}
	for h := 1; h <= s.Harm; h++ {
		names = append(names, fmt.Sprintf("sin%d", h), fmt.Sprintf("cos%d", h))
	}
	return append(names, s.Controls...)
}

// Design is the part of the model fixed by the data: the spend history, the
// fixed columns and each channel's mean weekly spend (the unit of κ). The
// bootstrap keeps it and refits new KPI series against it.
type Design struct {
	Spec      Spec
	Spend     [][]float64 // [channel][week]
	Fixed     *mat.Dense  // n×p fixed columns
	MeanSpend []float64
	N         int
	// TrendScale is the divisor of the week index in the trend column
	// (weeks of the full data minus one), kept by Head and Forecast so the
	// trend means the same everywhere.
	TrendScale float64
	// Lifts are lift tests every fit of the design is calibrated with
	// (the lift rows of FitCalibrated, weighed by the fit's noise SD); set
	// them with WithLifts.
	Lifts []Lift
}

// WithLifts returns a shallow copy of d whose fits are calibrated with the
// lift tests (nil: none). It returns an error naming the first test whose
// channel or window is outside the design or whose standard error is not
// positive.
func (d *Design) WithLifts(lifts []Lift) (*Design, error) {
	for i, l := range lifts {
		if l.Channel < 0 || l.Channel >= len(d.Spec.Channels) || l.From < 0 || l.To >= d.N || l.From > l.To {
			return nil, fmt.Errorf("model: lift test %d: channel %d, weeks %d..%d are outside the design (%d channels, %d weeks)",
				i+1, l.Channel, l.From, l.To, len(d.Spec.Channels), d.N)
		}
		if !(l.StdError > 0) || math.IsInf(l.StdError, 0) || math.IsNaN(l.Incremental) || math.IsInf(l.Incremental, 0) {
			return nil, fmt.Errorf("model: lift test %d: standard error %g must be positive and the lift finite", i+1, l.StdError)
		}
	}
	c := *d
	c.Lifts = append([]Lift(nil), lifts...)
	return &c, nil
}

// NewDesign checks the panel against the spec and builds the fixed columns.
func NewDesign(p *Panel, spec Spec) (*Design, error) {
	if err := spec.Validate("spec"); err != nil {
		return nil, err
	}
	if len(spec.Channels) != len(p.Channels) {
		panic("model: spec and panel channel counts differ")
	}
	need := spec.NumParams() + 10
	if err := p.RequireWeeks(need, fmt.Sprintf("the model has %d parameters", spec.NumParams())); err != nil {
		return nil, err
	}
	d := buildDesign(p, spec)
	if err := d.CheckBase(); err != nil {
		return nil, fmt.Errorf("%s: %w", p.Source, err)
	}
	return d, nil
}

// ErrBaseDependent reports base columns (intercept, trend, season, controls)
// that are linearly dependent, such as a control that never changes.
var ErrBaseDependent = errors.New("model: base columns are linearly dependent")

// CheckBase returns an error naming the first base column that is constant
// or a combination of the ones before it over the design's weeks; the fit
// cannot separate such columns.
func (d *Design) CheckBase() error {
	names := d.Spec.FixedNames()
	_, p := d.Fixed.Dims()
	var qr mat.QR
	qr.Factorize(d.Fixed)
	var r mat.Dense
	qr.RTo(&r)
	for j := range p {
		norm := mat.Norm(d.Fixed.ColView(j), 2)
		if norm == 0 || math.Abs(r.At(j, j)) <= 1e-9*norm {
			what := "is a combination of the base columns before it"
			if j > 0 && isConstant(d.Fixed, j) {
				what = "is constant, so it cannot be told apart from the intercept"
			}
			return fmt.Errorf("%w: %q %s over these %d weeks", ErrBaseDependent, names[j], what, d.N)
		}
	}
	return nil
}

func isConstant(f *mat.Dense, j int) bool {
	n, _ := f.Dims()
	for t := 1; t < n; t++ {
		if f.At(t, j) != f.At(0, j) {
			return false
		}
	}
	return true
}

// buildDesign computes mean spend and the fixed columns without checks.
func buildDesign(p *Panel, spec Spec) *Design {
	n := p.NumWeeks()
	d := &Design{Spec: spec, N: n, Spend: p.Spend, MeanSpend: make([]float64, len(p.Channels)), TrendScale: float64(max(n-1, 1))}
	for k, x := range p.Spend {
		d.MeanSpend[k] = meanOf(x)
	}
	d.Fixed = fixedColumns(p, spec)
	return d
}

// fixedColumns builds intercept, trend (t/(n−1), from 0 to 1), Fourier terms
// sin/cos(2π h t / period) and the controls.
func fixedColumns(p *Panel, spec Spec) *mat.Dense {
	n := p.NumWeeks()
	f := mat.NewDense(n, spec.NumFixed(), nil)
	for t := range n {
		c := 0
		f.Set(t, c, 1)
		c++
		if spec.Trend {
			f.Set(t, c, float64(t)/float64(max(n-1, 1)))
			c++
		}
		for h := 1; h <= spec.Harm; h++ {
			w := 2 * math.Pi * float64(h) * float64(t) / spec.Period
			f.Set(t, c, math.Sin(w))
			f.Set(t, c+1, math.Cos(w))
			c += 2
		}
		for j := range spec.Controls {
			f.Set(t, c, p.Control[j][t])
			c++
		}
	}
	return f
}

// FitSettings controls a fit. The zero value is usable.
type FitSettings struct {
	Seed           uint64  // seeds the random starts
	Starts         int     // multi-start count; 0 means Spec.Starts
	MaxEvaluations int     // per start; 0 means 400
	Workers        int     // starts run in parallel; 0 means 1
	Warm           *Params // if set, the first start; with Starts == 0 only it is tried
	// Priors are the priors of the maximum a posteriori fit; nil means the
	// spec's, with defaults for what it leaves unset (ResolvePriors of y).
	// A bootstrap refit passes the full fit's, so every replicate has the
	// same priors.
	Priors Priors
	// NoiseSD is σ, the weight of the priors and of the lift rows; zero
	// means estimated: a first multi-start with a rough σ (the residual SD
	// of a linear regression on the base and the raw spend), then, if the
	// fit's residual SD differs by more than 5%, one warm refit with it.
	NoiseSD float64
	// NoPriors makes the fit a plain least-squares fit (no prior
	// penalties; lift rows, if any, still count).
	NoPriors bool
	// ProbeEvaluations, if positive, is the evaluation budget of every
	// start but the first: cheap probes of other basins beside a warm
	// start (with Warm set, the probes are all seeded random points, no
	// centre of the box). A probe that ends best without converging is returned with
	// its status, for the caller to continue.
	ProbeEvaluations int
}

// FitResult is a fitted model with the fit's diagnostics.
type FitResult struct {
	Params      Params
	SSE         float64
	Status      varpro.Status // of the best start
	StartsTried int
	Converged   int // starts that converged
	Evaluations int // over all starts
	Fitted      []float64
	Residuals   []float64
	// Priors are the priors the fit used (nil with NoPriors), NoiseSD the
	// σ that weighed them and the lift rows, Penalty the priors' part of
	// the minimized objective (prior rows of θ and of the ROIs); SSE
	// excludes it.
	Priors  Priors  `json:"priors,omitempty"`
	NoiseSD float64 `json:"noise_sd,omitempty"`
	Penalty float64 `json:"penalty,omitempty"`
}

// FlatTol is the fit's varpro.Settings.FlatTol: a search creeping along a
// flat valley stops once 10 steps gained less than 1e-6 of the objective,
// 1e-6·n in units of −2 log-likelihood — far below what the data can tell
// apart (common practice, no source).
const FlatTol = 1e-6

// ErrNoFit is returned when no start produced a finite fit.
var ErrNoFit = errors.New("model: no start produced a usable fit")

// Fit fits y (the KPI, or a resampled KPI) on the design.
func (d *Design) Fit(y []float64, set FitSettings) (*FitResult, error) {
	if len(y) != d.N {
		panic("model: KPI length differs from the design")
	}
	if err := d.CheckBase(); err != nil {
		return nil, err
	}
	rows := make([]int, d.N)
	for t := range rows {
		rows[t] = t
	}
	return fitExtended(d, y, rows, d.Lifts, set)
}

// multiStart runs the starts on the solvers (one goroutine each) and keeps
// the best; ties go to the earlier start, so the result does not depend on
// scheduling.
func (d *Design) multiStart(y []float64, starts [][]float64, solvers []*varpro.Solver, set FitSettings) (*FitResult, error) {
	type outcome struct {
		res varpro.Result
		err error
	}
	out := make([]outcome, len(starts))
	var wg sync.WaitGroup
	next := make(chan int)
	for _, s := range solvers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				budget := set.MaxEvaluations
				if i > 0 && set.ProbeEvaluations > 0 {
					budget = set.ProbeEvaluations
				}
				r, err := s.Solve(starts[i], varpro.Settings{MaxEvaluations: budget, FlatTol: FlatTol})
				out[i] = outcome{r, err}
			}
		}()
	}
	for i := range starts {
		next <- i
	}
	close(next)
	wg.Wait()
	best := -1
	fr := &FitResult{StartsTried: len(starts)}
	for i, o := range out {
		if o.err != nil {
			continue
		}
		fr.Evaluations += o.res.Evaluations
		if o.res.Status == varpro.Converged {
			fr.Converged++
		}
		if best < 0 || o.res.RSS < out[best].res.RSS {
			best = i
		}
	}
	if best < 0 || math.IsInf(out[best].res.RSS, 0) {
		return nil, ErrNoFit
	}
	r := out[best].res
	fr.SSE = r.RSS
	fr.Status = r.Status
	fr.Params = d.unpack(r.Theta, r.Coef, r.FixedCoef)
	fr.Fitted = d.Predict(fr.Params)
	fr.Residuals = make([]float64, d.N)
	for t := range y {
		fr.Residuals[t] = y[t] - fr.Fitted[t]
	}
	return fr, nil
}

// bounds returns the box of the nonlinear parameters in their layout:
// per channel decay, (peak), half saturation, (shape).
func (d *Design) bounds() (lo, hi []float64) {
	for _, c := range d.Spec.Channels {
		lo, hi = append(lo, c.Decay[0]), append(hi, c.Decay[1])
		if c.Adstock == AdstockDelayed {
			lo, hi = append(lo, c.Peak[0]), append(hi, c.Peak[1])
		}
		lo, hi = append(lo, c.HalfSaturation[0]), append(hi, c.HalfSaturation[1])
		if c.Saturation == SaturationHill {
			lo, hi = append(lo, c.Shape[0]), append(hi, c.Shape[1])
		}
	}
	return lo, hi
}

// starts lays out the deterministic multi-start: the warm start if given,
// the centre of the box (geometric centre for κ), then seeded random points
// (log-uniform for κ).
func (d *Design) starts(set FitSettings) [][]float64 {
	lo, hi := d.bounds()
	n := set.Starts
	if n == 0 {
		n = d.Spec.Starts
		if set.Warm != nil {
			n = 1
		}
	}
	var out [][]float64
	if set.Warm != nil {
		th := d.pack(*set.Warm)
		for j := range th {
			th[j] = math.Min(hi[j], math.Max(lo[j], th[j]))
		}
		out = append(out, th)
	}
	logScale := d.logScaled()
	// Probes beside a warm start are all seeded random points: the centre
	// of the box is the same for every call, so it probes nothing new.
	probes := set.Warm != nil && set.ProbeEvaluations > 0
	for i := 0; len(out) < n; i++ {
		th := make([]float64, len(lo))
		rng := rand.New(rand.NewPCG(set.Seed, uint64(i)))
		for j := range th {
			u := 0.5
			if i > 0 || probes {
				u = rng.Float64()
			}
			if logScale[j] {
				th[j] = math.Exp(math.Log(lo[j]) + u*(math.Log(hi[j])-math.Log(lo[j])))
			} else {
				th[j] = lo[j] + u*(hi[j]-lo[j])
			}
		}
		out = append(out, th)
	}
	return out
}

func (d *Design) logScaled() []bool {
	var out []bool
	for _, c := range d.Spec.Channels {
		out = append(out, false)
		if c.Adstock == AdstockDelayed {
			out = append(out, false)
		}
		out = append(out, true)
		if c.Saturation == SaturationHill {
			out = append(out, false)
		}
	}
	return out
}

func (d *Design) pack(p Params) []float64 {
	var th []float64
	for k, c := range d.Spec.Channels {
		cp := p.Channels[k]
		th = append(th, cp.Decay)
		if c.Adstock == AdstockDelayed {
			th = append(th, cp.Peak)
		}
		th = append(th, cp.HalfSat)
		if c.Saturation == SaturationHill {
			th = append(th, cp.Shape)
		}
	}
	return th
}

func (d *Design) unpack(theta, coef, fixed []float64) Params {
	p := Params{Channels: make([]ChannelParams, len(d.Spec.Channels)), Fixed: append([]float64(nil), fixed...)}
	j := 0
	for k := range d.Spec.Channels {
		p.Channels[k], j = d.channelParams(theta, j, k)
		p.Channels[k].Beta = coef[k]
	}
	return p
}

// channelParams reads channel k's nonlinear parameters from theta at
// offset j (layout: decay, peak if delayed, half saturation, shape if Hill)
// and returns them with the offset of the next channel.
func (d *Design) channelParams(theta []float64, j, k int) (ChannelParams, int) {
	c := d.Spec.Channels[k]
	cp := ChannelParams{Decay: theta[j]}
	j++
	if c.Adstock == AdstockDelayed {
		cp.Peak = theta[j]
		j++
	}
	cp.HalfSat = theta[j]
	j++
	if c.Saturation == SaturationHill {
		cp.Shape = theta[j]
		j++
	}
	return cp, j
}

// Media writes channel k's media column sat(adstock(x_k)) under cp into dst.
func (d *Design) Media(dst []float64, k int, cp ChannelParams) []float64 {
	c := d.Spec.Channels[k]
	a := d.adstock(make([]float64, d.N), nil, nil, k, cp)
	K := d.HalfSatLevel(k, cp)
	for t, v := range a {
		dst[t] = saturate(c.Saturation, v, K, cp.Shape)
	}
	return dst
}

func (d *Design) adstock(dst, dl, dp []float64, k int, cp ChannelParams) []float64 {
	c := d.Spec.Channels[k]
	if c.Adstock == AdstockDelayed {
		return Delayed(dst, dl, dp, d.Spend[k], cp.Decay, cp.Peak, c.MaxLag)
	}
	Geometric(dst, d.Spend[k], cp.Decay)
	if dl != nil {
		GeometricDecayDeriv(dl, dst, cp.Decay)
	}
	return dst
}

func saturate(kind string, a, K, s float64) float64 {
	if kind == SaturationExponential {
		return Exponential(a, K)
	}
	return Hill(a, K, s)
}

// Predict returns the modelled KPI for every week of the design.
func (d *Design) Predict(p Params) []float64 {
	y := make([]float64, d.N)
	for t := range d.N {
		var v float64
		for j, g := range p.Fixed {
			v += g * d.Fixed.At(t, j)
		}
		y[t] = v
	}
	m := make([]float64, d.N)
	for k, cp := range p.Channels {
		if cp.Beta == 0 {
			continue
		}
		d.Media(m, k, cp)
		for t, v := range m {
			y[t] += cp.Beta * v
		}
	}
	return y
}

// workspace is one goroutine's variable-projection problem and solver.
type workspace struct {
	d      *Design
	solver *varpro.Solver
	a      [][]float64 // adstock per channel
	dl, dp [][]float64 // ∂a/∂λ, ∂a/∂θ
	lr     [][]float64 // Hill: log(K/a); exponential: exp(−a/K)
	h      [][]float64 // saturation values
}

func newWorkspace(d *Design, y []float64) *workspace {
	K := len(d.Spec.Channels)
	w := &workspace{d: d}
	mk := func() [][]float64 {
		out := make([][]float64, K)
		for i := range out {
			out[i] = make([]float64, d.N)
		}
		return out
	}
	w.a, w.dl, w.dp, w.lr, w.h = mk(), mk(), mk(), mk(), mk()
	lo, hi := d.bounds()
	prob := &varpro.Problem{Y: y, Fixed: d.Fixed, NumVarying: K, NonNeg: true, Lower: lo, Upper: hi,
		Columns: w.columns, Deriv: w.deriv}
	s, err := varpro.NewSolver(prob)
	if err != nil {
		// The fixed columns are built from the panel; dependence means a
		// constant or duplicated control, which the loader refuses.
		panic("model: " + err.Error())
	}
	w.solver = s
	return w
}

func (w *workspace) columns(theta []float64, cols [][]float64) {
	d := w.d
	j := 0
	for k, c := range d.Spec.Channels {
		var cp ChannelParams
		cp, j = d.channelParams(theta, j, k)
		d.adstock(w.a[k], w.dl[k], w.dp[k], k, cp)
		K := d.HalfSatLevel(k, cp)
		a, lr, h, col := w.a[k], w.lr[k], w.h[k], cols[k]
		if c.Saturation == SaturationHill {
			s := cp.Shape
			for t, v := range a {
				if v <= 0 {
					lr[t], h[t], col[t] = 0, 0, 0
					continue
				}
				l := math.Log(K / v)
				hv := 1 / (1 + math.Exp(s*l))
				lr[t], h[t], col[t] = l, hv, hv
			}
		} else {
			for t, v := range a {
				e := math.Exp(-v / K)
				lr[t], h[t], col[t] = e, 1-e, 1-e
			}
		}
	}
}

func (w *workspace) deriv(theta, coef []float64, dst [][]float64) {
	d := w.d
	j := 0
	for k, c := range d.Spec.Channels {
		beta := coef[k]
		m := d.MeanSpend[k]
		a, lr, h := w.a[k], w.lr[k], w.h[k]
		cp := ChannelParams{Decay: theta[j]}
		jl := j
		j++
		jp := -1
		if c.Adstock == AdstockDelayed {
			jp = j
			cp.Peak = theta[j]
			j++
		}
		cp.HalfSat = theta[j]
		jk := j
		j++
		js := -1
		if c.Saturation == SaturationHill {
			js = j
			cp.Shape = theta[j]
			j++
		}
		// K = κ m G(λ, θ), so decay and peak move K as well as the adstock.
		g, gl, gp := kernelSum(c, cp)
		K := cp.HalfSat * m * g
		kl, kp, kk := cp.HalfSat*m*gl, cp.HalfSat*m*gp, m*g
		s := cp.Shape
		for t, v := range a {
			var sa, sK, ss float64 // ∂sat/∂a, ∂sat/∂K, ∂sat/∂s
			if c.Saturation == SaturationHill {
				if v > 0 {
					hh := h[t] * (1 - h[t])
					sa = s * hh / v
					sK = -s * hh / K
					ss = -hh * lr[t]
				}
			} else {
				e := lr[t]
				sa = e / K
				sK = -v / (K * K) * e
			}
			dst[jl][t] = beta * (sa*w.dl[k][t] + sK*kl)
			if jp >= 0 {
				dst[jp][t] = beta * (sa*w.dp[k][t] + sK*kp)
			}
			dst[jk][t] = beta * sK * kk
			if js >= 0 {
				dst[js][t] = beta * ss
			}
		}
	}
}

// Head returns the design of the first n weeks, for fitting on a training
// window. It keeps this design's mean spend and trend scale, so parameters
// fitted on the head predict the full design's weeks directly (the holdout
// forecast with the spend actually made).
func (d *Design) Head(n int) *Design {
	if n < 1 || n > d.N {
		panic("model: head length out of range")
	}
	h := &Design{Spec: d.Spec, N: n, MeanSpend: d.MeanSpend, TrendScale: d.TrendScale, Spend: make([][]float64, len(d.Spend))}
	// Lift tests whose window ends inside the head stay; the others are
	// evidence about weeks the head does not have.
	for _, l := range d.Lifts {
		if l.To < n {
			h.Lifts = append(h.Lifts, l)
		}
	}
	for k, x := range d.Spend {
		h.Spend[k] = x[:n:n]
	}
	h.Fixed = mat.DenseCopyOf(d.Fixed.Slice(0, n, 0, d.Spec.NumFixed()))
	return h
}
