package uncertainty

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"math"
	"strings"
	"sync"
	"testing"

	"sluice/model"
)

// world is a simulated panel of the invented coverage truth with its design.
type world struct {
	sim *model.Simulated
	d   *model.Design
}

var worlds sync.Map // seed → *world

func testWorld(t testing.TB, seed uint64) *world {
	t.Helper()
	if w, ok := worlds.Load(seed); ok {
		return w.(*world)
	}
	tr, err := model.LoadTruth("testdata/coverage_truth.yaml")
	if err != nil {
		t.Fatal(err)
	}
	tr.Seed = seed
	sim, err := model.Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	d, err := model.NewDesign(sim.Panel, tr.Spec())
	if err != nil {
		t.Fatal(err)
	}
	w := &world{sim: sim, d: d}
	worlds.Store(seed, w)
	return w
}

func runBytes(t testing.TB, b *Bootstrap) ([]byte, *Draws) {
	t.Helper()
	d, err := b.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	d.Header.ToolVersion = "test"
	d.Header.Inputs = Inputs{DataSHA256: strings.Repeat("ab", 32)}
	var buf bytes.Buffer
	if _, err := d.WriteTo(&buf); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes(), d
}

// Same seed, same bytes, whatever the worker count; another seed, other
// bytes. The full fit is made inside Run, so its multi-start is covered too.
func TestBootstrapDeterministic(t *testing.T) {
	w := testWorld(t, 114)
	var first []byte
	for _, workers := range []int{1, 2, 3} {
		b := &Bootstrap{Design: w.d, Y: w.sim.Panel.KPI, Draws: 6, Seed: 7, Workers: workers}
		got, _ := runBytes(t, b)
		if first == nil {
			first = got
			continue
		}
		if !bytes.Equal(got, first) {
			t.Errorf("workers %d: bytes differ from workers 1", workers)
		}
	}
	other, _ := runBytes(t, &Bootstrap{Design: w.d, Y: w.sim.Panel.KPI, Draws: 6, Seed: 8, Workers: 2})
	if bytes.Equal(other, first) {
		t.Error("seeds 7 and 8 gave the same draws")
	}
}

// Shards 1/n..n/n, each run on its own, merge into exactly the bytes of the
// unsharded run, for n = 1, 2, 3, 7 and any order of the parts; replicate i
// is in shard (i mod n)+1 (the Indexed Job contract of examples/
// k8s-bootstrap-job.yml).
func TestShardsMergeToUnsharded(t *testing.T) {
	w := testWorld(t, 114)
	full, err := w.d.Fit(w.sim.Panel.KPI, model.FitSettings{Seed: 3, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	const draws = 9
	base := Bootstrap{Design: w.d, Y: w.sim.Panel.KPI, Draws: draws, Seed: 3, Full: full, Workers: 2}
	want, _ := runBytes(t, &base)
	if n := bytes.Count(want, []byte("\n")); n != draws+1 {
		t.Fatalf("unsharded file has %d lines, want %d", n, draws+1)
	}
	for _, n := range []int{1, 2, 3, 7} {
		var parts []*Draws
		for k := n; k >= 1; k-- { // reverse order: merge must not care
			b := base
			b.Shard = Shard{K: k, N: n}
			b.Workers = 1 + k%2
			raw, _ := runBytes(t, &b)
			d, err := ParseDraws(bytes.NewReader(raw), fmt.Sprintf("part%d.jsonl", k))
			if err != nil {
				t.Fatalf("shard %d/%d: %v", k, n, err)
			}
			for _, r := range d.Replicates {
				if r.Index%n != k-1 {
					t.Errorf("shard %d/%d holds replicate %d", k, n, r.Index)
				}
			}
			parts = append(parts, d)
		}
		m, err := Merge(parts)
		if err != nil {
			t.Fatalf("n=%d: %v", n, err)
		}
		var got bytes.Buffer
		if _, err := m.WriteTo(&got); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got.Bytes(), want) {
			t.Errorf("n=%d: merged shards differ from the unsharded run", n)
		}
	}
}

// Failed refits are kept, counted and left out of the summaries. A budget
// of one evaluation per start stops every attempt before convergence; a
// budget of a few evaluations lets some replicates converge and not others.
func TestFailedRefitsCounted(t *testing.T) {
	w := testWorld(t, 114)
	full, err := w.d.Fit(w.sim.Panel.KPI, model.FitSettings{Seed: 1, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		evals   int
		allFail bool
	}{{1, true}, {6, false}} {
		b := &Bootstrap{Design: w.d, Y: w.sim.Panel.KPI, Draws: 12, Seed: 5, Full: full, Workers: 2, RefitEvaluations: c.evals}
		raw, d := runBytes(t, b)
		lines := bytes.Count(raw, []byte(`"failed":true`))
		if d.Failed() != lines || len(d.Params())+d.Failed() != 12 || len(d.Replicates) != 12 {
			t.Errorf("evals %d: Failed() %d, failed lines %d, successful %d, replicates %d",
				c.evals, d.Failed(), lines, len(d.Params()), len(d.Replicates))
		}
		t.Logf("evaluation budget %d: %d of 12 failed, converged at attempt 1/2/3: %v", c.evals, d.Failed(), d.Attempts())
		if c.allFail && d.Failed() != 12 {
			t.Errorf("budget 1: %d of 12 failed, want all", d.Failed())
		}
		if !c.allFail && (d.Failed() == 0 || d.Failed() == 12) {
			t.Errorf("budget %d: %d of 12 failed, want some but not all", c.evals, d.Failed())
		}
		for _, r := range d.Replicates {
			if r.Failed && (r.Params != nil || !strings.Contains(r.Reason, "evaluation limit reached")) {
				t.Errorf("replicate %d: failed with params %v, reason %q", r.Index, r.Params != nil, r.Reason)
			}
		}
		back, err := ParseDraws(bytes.NewReader(raw), "failed.jsonl")
		if err != nil {
			t.Fatal(err)
		}
		if back.Failed() != d.Failed() {
			t.Errorf("read back %d failed, wrote %d", back.Failed(), d.Failed())
		}
	}
}

// Cancelling stops the run with the context's error and no draws; progress
// reports come in order, one per replicate done.
func TestBootstrapCancelAndProgress(t *testing.T) {
	w := testWorld(t, 114)
	full, err := w.d.Fit(w.sim.Panel.KPI, model.FitSettings{Seed: 1, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	var seen []int
	b := &Bootstrap{Design: w.d, Y: w.sim.Panel.KPI, Draws: 200, Seed: 5, Full: full, Workers: 2,
		Progress: func(done, total int) {
			seen = append(seen, done)
			if total != 200 {
				t.Errorf("total %d, want 200", total)
			}
			if done == 3 {
				cancel()
			}
		}}
	d, err := b.Run(ctx)
	if !errors.Is(err, context.Canceled) || d != nil {
		t.Fatalf("Run after cancel = %v, %v; want nil, context.Canceled", d, err)
	}
	if len(seen) < 3 || len(seen) > 6 {
		t.Errorf("progress after cancel at 3: %v", seen)
	}
	for i, v := range seen {
		if v != i+1 {
			t.Fatalf("progress %v not 1, 2, 3, ...", seen)
		}
	}
	seen = nil
	b.Draws, b.Shard = 5, Shard{K: 2, N: 2}
	b.Progress = func(done, total int) { seen = append(seen, done*10+total) }
	if _, err := b.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	if fmt.Sprint(seen) != "[12 22]" {
		t.Errorf("shard 2/2 of 5 progress (done*10+total) %v, want [12 22]", seen)
	}
}

func TestBootstrapSettingsErrors(t *testing.T) {
	w := testWorld(t, 114)
	for _, c := range []struct {
		b    Bootstrap
		want string
	}{
		{Bootstrap{Method: "circular"}, "unknown resampling method"},
		{Bootstrap{Draws: -1}, "draws -1 must be between 1 and"},
		{Bootstrap{Shard: Shard{K: 3, N: 2}}, "shard 3/2"},
		{Bootstrap{BlockLength: -2}, "block length -2"},
	} {
		b := c.b
		b.Design, b.Y = w.d, w.sim.Panel.KPI
		if _, err := b.Run(context.Background()); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want %q", c.b, err, c.want)
		}
	}
}

// The header records the inflation √(n/(n−p)) — for testdata/coverage_truth.yaml
// n = 156 and p = 23 counted by hand (intercept, trend, 4 season terms, 2
// controls; 3 Hill channels × 4 parameters; 1 exponential channel × 3), so
// √(156/133) — the refit starts, the block rule and the full fit's priors;
// and replicate i's KPI is ŷ + c·e*, e* the moving-block resample of the
// full fit's residuals from Stream(seed, i), rebuilt here from the parts.
func TestInflationAndHeader(t *testing.T) {
	w := testWorld(t, 3)
	b := &Bootstrap{Design: w.d, Y: w.sim.Panel.KPI, Draws: 2, Seed: 5, Workers: 1}
	d, err := b.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	h := d.Header
	want := math.Sqrt(156.0 / 133.0)
	if math.Abs(h.Inflation-want) > 1e-15 || h.RefitStarts != DefaultRefitStarts {
		t.Errorf("inflation %v (want %v), refit starts %d", h.Inflation, want, h.RefitStarts)
	}
	if !h.PriorDraws {
		t.Error("prior_draws not recorded")
	}
	if h.BlockRule == nil || h.BlockRule.Length != h.BlockLength || !h.BlockLengthAuto {
		t.Errorf("block rule %+v, block length %v", h.BlockRule, h.BlockLength)
	}
	if len(h.FullFit.Priors) != 4 || !h.FullFit.Priors[0].ROIDefault || !(h.FullFit.NoiseSD > 0) || !(h.FullFit.Penalty > 0) {
		t.Errorf("full fit priors %+v, noise SD %v, penalty %v", h.FullFit.Priors, h.FullFit.NoiseSD, h.FullFit.Penalty)
	}
	full, err := w.d.Fit(w.sim.Panel.KPI, model.FitSettings{Seed: 5, Starts: w.d.Spec.Starts, Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	rf := refitter{full: full, res: Resampler{Method: MovingBlock, BlockLength: h.BlockLength}, seed: 5, inflation: h.Inflation}
	ystar, eb := make([]float64, w.d.N), make([]float64, w.d.N)
	rf.kpi(1, ystar, eb)
	e := Resampler{Method: MovingBlock, BlockLength: h.BlockLength}.Residuals(make([]float64, w.d.N), full.Residuals, Stream(5, 1))
	var ss float64
	for t2 := range ystar {
		if d := ystar[t2] - full.Fitted[t2] - want*e[t2]; math.Abs(d) > 1e-9*math.Abs(ystar[t2]) {
			t.Fatalf("week %d: y* %v, ŷ + c·e* %v", t2, ystar[t2], full.Fitted[t2]+want*e[t2])
		}
		ss += e[t2] * e[t2]
	}
	if ss == 0 {
		t.Fatal("resampled residuals are all zero")
	}
}

// Redrawn prior centres follow the priors: over 20000 draws the decay
// centre's mean and SD match N(0.3, 0.3²) and log κ's match N(log 2, 0.5²)
// to within 4 standard errors (SE of a mean sd/√n, of an SD about
// sd/√(2n), normal theory); a nil prior stays nil.
func TestPerturbPriors(t *testing.T) {
	shape := model.Normal{Mean: 1.5, SD: 0.75}
	p := model.Priors{{Decay: model.Normal{Mean: 0.3, SD: 0.3}, HalfSaturation: model.LogNormal{Median: 2, LogSD: 0.5},
		Shape: &shape, ROI: model.Normal{Mean: 0, SD: 4}}}
	const n = 20000
	rng := Stream(9, 0)
	var sd, sd2, sk, sk2 float64
	for range n {
		q := perturbPriors(p, rng)
		d, k := q[0].Decay.Mean, math.Log(q[0].HalfSaturation.Median)
		sd, sd2, sk, sk2 = sd+d, sd2+d*d, sk+k, sk2+k*k
		if q[0].Decay.SD != 0.3 || q[0].Shape == p[0].Shape {
			t.Fatal("an SD changed, or the shape prior is shared with the input")
		}
	}
	check := func(name string, s, s2, mean, sdev float64) {
		m := s / n
		v := math.Sqrt(s2/n - m*m)
		if math.Abs(m-mean) > 4*sdev/math.Sqrt(n) || math.Abs(v-sdev) > 4*sdev/math.Sqrt(2*n) {
			t.Errorf("%s: mean %.4f SD %.4f, want %.4f and %.4f", name, m, v, mean, sdev)
		}
	}
	check("decay", sd, sd2, 0.3, 0.3)
	check("log half saturation", sk, sk2, math.Log(2), 0.5)
	if p[0].Decay.Mean != 0.3 || shape.Mean != 1.5 {
		t.Error("the input priors were changed")
	}
	if perturbPriors(nil, rng) != nil {
		t.Error("nil priors became non-nil")
	}
}

// Redrawn centres outside a parameter's box are moved onto it, an ROI
// centre below zero to zero; centres inside stay.
func TestClampPriors(t *testing.T) {
	spec := model.NewSpec([]string{"a", "b"}, nil)
	sh := model.Normal{Mean: 9, SD: 1}
	sh2 := model.Normal{Mean: 2, SD: 1}
	p := model.Priors{
		{Decay: model.Normal{Mean: -0.2, SD: 0.3}, HalfSaturation: model.LogNormal{Median: 100, LogSD: 1}, Shape: &sh, ROI: model.Normal{Mean: -3, SD: 1}},
		{Decay: model.Normal{Mean: 0.4, SD: 0.3}, HalfSaturation: model.LogNormal{Median: 0.5, LogSD: 1}, Shape: &sh2, ROI: model.Normal{Mean: 2, SD: 1}},
	}
	q := clampPriors(p, spec)
	if a := q[0]; a.Decay.Mean != 0 || a.HalfSaturation.Median != 10 || a.Shape.Mean != 3 || a.ROI.Mean != 0 {
		t.Errorf("outside the box: %+v, shape %v; want decay 0, half saturation 10, shape 3, ROI 0", a, a.Shape.Mean)
	}
	if b := q[1]; b.Decay.Mean != 0.4 || b.HalfSaturation.Median != 0.5 || b.Shape.Mean != 2 || b.ROI.Mean != 2 {
		t.Errorf("inside the box changed: %+v", b)
	}
}
