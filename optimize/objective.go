package optimize

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"sluice/internal/sample"
)

// ObjectiveKind is what an Objective maximizes.
type ObjectiveKind int

const (
	// Expected is the mean over draws of the plan's value.
	Expected ObjectiveKind = iota
	// Quantile is the Level-quantile of the plan's value over draws (a low
	// Level such as 0.1 asks for a plan that does well in bad draws).
	Quantile
	// CVaR is the mean gain against the status quo minus Weight times the
	// conditional value-at-risk of the loss at tail share Level: the mean
	// loss in the worst Level share of draws (Rockafellar & Uryasev 2000).
	CVaR
)

// Objective says what the allocator maximizes over the draws. With V_d(w) the
// value of plan w under draw d (Economics.Value) and G_d = V_d(w) − V_d(c)
// its gain against the status quo c:
//
//	Expected:  mean_d V_d(w)
//	Quantile:  Q_q(V(w)), the q-quantile of the V_d (Hyndman & Fan type 8)
//	CVaR:      mean_d G_d − λ · CVaR_α(−G), CVaR_α(L) = mean of the worst α share of L
//
// The quantile and the CVaR are not differentiable where draws swap ranks,
// so the solver maximizes smooth versions whose width h shrinks towards zero
// (see smoothed); Result reports the exact value beside the smooth one.
type Objective struct {
	Kind   ObjectiveKind
	Level  float64 // q for Quantile, α for CVaR; in (0, 1)
	Weight float64 // λ for CVaR, >= 0
}

// ParseObjective reads "expected", "quantile:q" or "cvar:alpha:weight".
func ParseObjective(s string) (Objective, error) {
	parts := strings.Split(strings.TrimSpace(s), ":")
	num := func(i int, what string) (float64, error) {
		v, err := strconv.ParseFloat(strings.TrimSpace(parts[i]), 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
			return 0, fmt.Errorf("objective %q: %s %q is not a number", s, what, parts[i])
		}
		return v, nil
	}
	switch {
	case parts[0] == "expected" && len(parts) == 1:
		return Objective{Kind: Expected}, nil
	case parts[0] == "quantile" && len(parts) == 2:
		q, err := num(1, "quantile level")
		if err != nil {
			return Objective{}, err
		}
		if !(q > 0 && q < 1) {
			return Objective{}, fmt.Errorf("objective %q: quantile level %v must lie strictly between 0 and 1", s, q)
		}
		return Objective{Kind: Quantile, Level: q}, nil
	case parts[0] == "cvar" && len(parts) == 3:
		a, err := num(1, "tail share alpha")
		if err != nil {
			return Objective{}, err
		}
		w, err := num(2, "weight")
		if err != nil {
			return Objective{}, err
		}
		if !(a > 0 && a < 1) {
			return Objective{}, fmt.Errorf("objective %q: tail share alpha %v must lie strictly between 0 and 1", s, a)
		}
		if w < 0 {
			return Objective{}, fmt.Errorf("objective %q: weight %v must not be negative", s, w)
		}
		return Objective{Kind: CVaR, Level: a, Weight: w}, nil
	}
	return Objective{}, fmt.Errorf("objective %q: want expected, quantile:q or cvar:alpha:weight", s)
}

func (o Objective) String() string {
	switch o.Kind {
	case Quantile:
		return "quantile:" + share(o.Level)
	case CVaR:
		return "cvar:" + share(o.Level) + ":" + share(o.Weight)
	}
	return "expected"
}

func (o Objective) validate() error {
	_, err := ParseObjective(o.String())
	if err == nil && o.Kind != Expected && o.Kind != Quantile && o.Kind != CVaR {
		err = fmt.Errorf("optimize: unknown objective kind %d", o.Kind)
	}
	return err
}

// exact returns the objective of the per-draw values v (and base values at
// the status quo, for CVaR).
func (o Objective) exact(v, base []float64) float64 {
	switch o.Kind {
	case Quantile:
		return sample.Quantile(sample.Sorted(v), o.Level, sample.Default)
	case CVaR:
		g := make([]float64, len(v))
		for d := range v {
			g[d] = v[d] - base[d]
		}
		// −CVaR_α(loss) is the lower-tail CVaR of the gains.
		return sample.Mean(g) + o.Weight*sample.LowerCVaR(g, o.Level)
	}
	return sample.Mean(v)
}

// smoothed returns the smooth surrogate of width h > 0 at per-draw values v
// and writes into wt the weight of each draw in its gradient, so that the
// gradient with respect to the plan is Σ_d wt_d ∇V_d.
//
// Quantile: the type-8 sample quantile is (1 − g)·x_(j) + g·x_(j+1) for
// order statistics j, j+1 and weight g fixed by n and q (Hyndman & Fan
// 1996); each order statistic x_(i) is replaced by the kernel quantile at
// level (i − ½)/n with a logistic kernel F of scale h (Sheather & Marron
// 1990, "Kernel quantile estimators", JASA 85): ζ solves
// mean_d F((ζ − V_d)/h) = (i − ½)/n, and by the implicit function theorem
// ∇ζ = Σ_d f_d ∇V_d / Σ_d f_d with f_d = F'((ζ − V_d)/h). It tends to the
// type-8 sample quantile as h → 0.
//
// CVaR: the Rockafellar & Uryasev (2000) auxiliary-variable form
// CVaR_α(L) = min_ζ ζ + mean_d (L_d − ζ)⁺/α with the plus function replaced
// by the softplus h·log(1 + e^{x/h}); ζ is minimized out exactly (it solves
// mean_d σ((L_d − ζ)/h) = α, σ the logistic function), so by the envelope
// theorem the gradient is that of the expression at fixed ζ. Since
// x⁺ ≤ h·log(1+e^{x/h}) ≤ x⁺ + h·log 2, the surrogate CVaR exceeds the
// exact one by at most h·log(2)/α.
func (o Objective) smoothed(v, base []float64, h float64, wt []float64) float64 {
	n := float64(len(v))
	switch o.Kind {
	case Quantile:
		s := sample.Sorted(v)
		// Type 8 interpolates x_(j) and x_(j+1) with weight g.
		// (sample.Quantile clamps both ranks into 1..n).
		nf := float64(len(v))
		pos := nf*o.Level + (o.Level+1)/3
		j := math.Floor(pos)
		g := pos - j
		ja, jb := min(max(j, 1), nf), min(max(j+1, 1), nf)
		clear(wt)
		scratch := make([]float64, len(v))
		var z float64
		for _, part := range []struct{ rank, share float64 }{{ja, 1 - g}, {jb, g}} {
			if part.share == 0 {
				continue
			}
			zi := kernelQuantile(v, s, (part.rank-0.5)/nf, h, scratch)
			z += part.share * zi
			for d := range wt {
				wt[d] += part.share * scratch[d]
			}
		}
		return z
	case CVaR:
		loss := make([]float64, len(v))
		var meanG float64
		for d := range v {
			loss[d] = base[d] - v[d]
			meanG -= loss[d]
		}
		meanG /= n
		s := sample.Sorted(loss)
		z0 := sample.Quantile(s, 1-o.Level, sample.Default)
		lo, hi := s[0]-40*h, s[len(s)-1]+40*h
		// φ(ζ) = α − mean σ((L − ζ)/h) is increasing.
		phi := func(z float64) (val, der float64) {
			for _, x := range loss {
				sg := logistic((x - z) / h)
				val -= sg
				der += sg * (1 - sg)
			}
			return o.Level + val/n, der / (n * h)
		}
		z := root(phi, z0, lo, hi, h)
		var tail float64
		for d, x := range loss {
			tail += softplus((x-z)/h) * h
			wt[d] = (1 + o.Weight*logistic((x-z)/h)/o.Level) / n
		}
		cvar := z + tail/(n*o.Level)
		return meanG - o.Weight*cvar
	}
	panic("optimize: smoothed called for the expected objective")
}

// kernelQuantile returns the kernel quantile ζ at level p of the values v
// (s: v sorted), mean_d F((ζ − v_d)/h) = p with F the logistic
// distribution function, and writes into wt its gradient with respect to
// each v_d. At level (i − ½)/n it tends to the order statistic x_(i) as
// h → 0: there F((ζ − x_(i))/h) = ½ and the other draws sit at 0 or 1.
func kernelQuantile(v, s []float64, p, h float64, wt []float64) float64 {
	n := float64(len(v))
	i := int(math.Round(p*n + 0.5))
	z0 := s[min(max(i, 1), len(s))-1]
	lo, hi := s[0]-40*h, s[len(s)-1]+40*h
	phi := func(z float64) (val, der float64) {
		for _, x := range v {
			F := logistic((z - x) / h)
			val += F
			der += F * (1 - F)
		}
		return val/n - p, der / (n * h)
	}
	z := root(phi, z0, lo, hi, h)
	var sf float64
	for d, x := range v {
		F := logistic((z - x) / h)
		wt[d] = F * (1 - F)
		sf += wt[d]
	}
	for d := range wt {
		wt[d] /= sf
	}
	return z
}

// root finds the zero of the increasing function phi in [lo, hi] by Newton's
// method from z, safeguarded by bisection, to a tolerance far below h.
func root(phi func(float64) (float64, float64), z, lo, hi, h float64) float64 {
	for range 200 {
		f, d := phi(z)
		if f > 0 {
			hi = z
		} else {
			lo = z
		}
		next := z - f/d
		if !(d > 0) || next <= lo || next >= hi {
			next = lo + (hi-lo)/2
		}
		if math.Abs(next-z) <= 1e-13*h || hi-lo <= 1e-13*h {
			return next
		}
		z = next
	}
	return z
}

func logistic(x float64) float64 {
	if x >= 0 {
		return 1 / (1 + math.Exp(-x))
	}
	e := math.Exp(x)
	return e / (1 + e)
}

// softplus returns log(1 + e^x) without overflow.
func softplus(x float64) float64 {
	if x > 0 {
		return x + math.Log1p(math.Exp(-x))
	}
	return math.Log1p(math.Exp(x))
}

// widths returns the smoothing widths to solve at, widest first, ending at
// final: one decade apart, starting at most from start.
func widths(start, final float64) []float64 {
	out := []float64{}
	for h := start; h > final*1.0000001; h /= 10 {
		out = append(out, h)
	}
	return append(out, final)
}
