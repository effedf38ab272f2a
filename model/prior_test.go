package model

import (
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// A spec file's written range is kept as written: decay [0, 0] fixes the
// decay at 0 (never replaced by the default box), and the fit returns it.
func TestSpecFileFixedRangeKept(t *testing.T) {
	sim := simulateFile(t, "testdata/truth_recovery.yaml")
	dir := t.TempDir()
	path := filepath.Join(dir, "spec.yaml")
	body := "channels:\n  search: {decay: [0, 0], half_saturation: [0.5, 0.5]}\n  audio: {saturation: exponential, prior: {roi: {mean: 0.5, sd: 0.1}}}\n"
	if err := os.WriteFile(path, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	f, err := LoadSpecFile(path)
	if err != nil {
		t.Fatal(err)
	}
	spec := sim.Truth.Spec()
	if err := spec.ApplyFile(f, path); err != nil {
		t.Fatal(err)
	}
	c := spec.Channels[0]
	if c.Decay != (Range{0, 0}) || c.HalfSaturation != (Range{0.5, 0.5}) || c.Shape != DefaultShape {
		t.Fatalf("search: decay %v, half saturation %v, shape %v; want [0 0], [0.5 0.5], the default shape", c.Decay, c.HalfSaturation, c.Shape)
	}
	if a := spec.Channels[3]; a.Prior.ROI != (Normal{Mean: 0.5, SD: 0.1}) || a.Decay != DefaultDecay {
		t.Fatalf("audio: %+v", a)
	}
	d, err := NewDesign(sim.Panel, spec)
	if err != nil {
		t.Fatal(err)
	}
	fr, err := d.Fit(sim.Panel.KPI, FitSettings{Seed: 1, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if got := fr.Params.Channels[0]; got.Decay != 0 || got.HalfSat != 0.5 {
		t.Errorf("fitted search decay %g, half saturation %g; want exactly 0 and 0.5", got.Decay, got.HalfSat)
	}
	// Bad priors are refused at their key path.
	for _, bad := range []struct{ body, want string }{
		{"channels:\n  search: {prior: {decay: {mean: 0.3, sd: -1}}}\n", "channels.search.prior.decay: mean 0.3 and sd -1"},
		{"channels:\n  search: {prior: {half_saturation: {median: -1, log_sd: 1}}}\n", "channels.search.prior.half_saturation: median -1 must be positive"},
		{"channels:\n  search: {prior: {roi: {mean: -2, sd: 1}}}\n", "channels.search.prior.roi: mean -2 must not be negative"},
	} {
		if err := os.WriteFile(path, []byte(bad.body), 0o644); err != nil {
			t.Fatal(err)
		}
		f, err := LoadSpecFile(path)
		if err != nil {
			t.Fatal(err)
		}
		s := sim.Truth.Spec()
		if err := s.ApplyFile(f, path); err == nil || !strings.Contains(err.Error(), bad.want) {
			t.Errorf("%q: error %v, want it to contain %q", bad.body, err, bad.want)
		}
	}
}

// An ROI prior is a ridge row on β: a precise prior (sd 0.1% of its mean)
// pins the channel's ROI to its mean within 1%, a vague one (sd 1e6 × the
// mean) stays within 3% of the fit with the default ROI prior N(0, r²),
// which is weak by design (measured: it moves this channel's ROI by 1%). The ROI is computed by
// package groundtruth from the fitted parameters (not by Summarize).
func TestROIPrior(t *testing.T) {
	sim := simulateFile(t, "testdata/truth_recovery.yaml")
	d, err := NewDesign(sim.Panel, sim.Truth.Spec())
	if err != nil {
		t.Fatal(err)
	}
	y := sim.Panel.KPI
	base, err := d.Fit(y, FitSettings{Seed: 1, Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	k := 1
	truthROI := sim.Summary[k].ROI
	fitted := TrueWorld(d, base.Params).ROI(k)
	target := 1.6 * truthROI // far from both the truth and the default fit
	if math.Abs(fitted-target) < 0.3*truthROI {
		t.Fatalf("the target %g is too close to the default fit %g for the check to mean anything", target, fitted)
	}
	for _, c := range []struct {
		sd   float64
		tol  float64
		want float64
	}{{1e-3 * target, 0.01, target}, {1e6 * target, 0.03, fitted}} {
		pri := d.ResolvePriors(y)
		pri[k].ROI = Normal{Mean: target, SD: c.sd}
		pri[k].ROIDefault = false
		fr, err := d.Fit(y, FitSettings{Seed: 1, Workers: 2, Priors: pri, NoiseSD: base.NoiseSD, Warm: &base.Params, Starts: 3})
		if err != nil {
			t.Fatal(err)
		}
		got := TrueWorld(d, fr.Params).ROI(k)
		if math.Abs(got-c.want) > c.tol*c.want {
			t.Errorf("ROI prior N(%g, %g²): fitted ROI %.6g, want %.6g within %g (default fit %.6g, truth %.6g)",
				target, c.sd, got, c.want, c.tol, fitted, truthROI)
		}
	}
}
