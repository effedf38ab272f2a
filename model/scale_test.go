package model

import (
	"math"
	"testing"
)

// A design built under another design's scale reproduces it on the same
// weeks and continues it on later ones: on a panel extended by 13 weeks,
// the first weeks predict exactly as the original design does.
func TestNewDesignScaled(t *testing.T) {
	tr, err := LoadTruth("testdata/truth_recovery.yaml")
	if err != nil {
		t.Fatal(err)
	}
	tr.Weeks = 169
	sim, err := Simulate(tr)
	if err != nil {
		t.Fatal(err)
	}
	n := 156
	head := *sim.Panel
	head.Weeks, head.KPI = sim.Panel.Weeks[:n], sim.Panel.KPI[:n]
	head.Spend, head.Control = nil, nil
	for _, x := range sim.Panel.Spend {
		head.Spend = append(head.Spend, x[:n])
	}
	for _, x := range sim.Panel.Control {
		head.Control = append(head.Control, x[:n])
	}
	spec := tr.Spec()
	d, err := NewDesign(&head, spec)
	if err != nil {
		t.Fatal(err)
	}
	sc := d.ScaleOf(head.Weeks[0])
	same, err := NewDesignScaled(&head, spec, sc)
	if err != nil {
		t.Fatal(err)
	}
	for i := range n {
		for j := range spec.NumFixed() {
			if math.Abs(same.Fixed.At(i, j)-d.Fixed.At(i, j)) > 1e-12 {
				t.Fatalf("week %d column %d: %v vs %v", i, j, same.Fixed.At(i, j), d.Fixed.At(i, j))
			}
		}
	}
	ext, err := NewDesignScaled(sim.Panel, spec, sc)
	if err != nil {
		t.Fatal(err)
	}
	a, b := d.Predict(sim.Params), ext.Predict(sim.Params)
	for i := range n {
		if math.Abs(a[i]-b[i]) > 1e-9*math.Abs(a[i]) {
			t.Fatalf("week %d: %v vs %v", i, a[i], b[i])
		}
	}
	// The trend continues past 1 at the same slope: week n is n/(n−1).
	if got := ext.Fixed.At(n, 1); math.Abs(got-float64(n)/float64(n-1)) > 1e-12 {
		t.Errorf("trend at week %d = %v", n, got)
	}
	// A panel starting later is placed by its dates.
	late := *sim.Panel
	late.Weeks = sim.Panel.Weeks[10:]
	late.Spend, late.Control = nil, nil
	for _, x := range sim.Panel.Spend {
		late.Spend = append(late.Spend, x[10:])
	}
	for _, x := range sim.Panel.Control {
		late.Control = append(late.Control, x[10:])
	}
	dl, err := NewDesignScaled(&late, spec, sc)
	if err != nil {
		t.Fatal(err)
	}
	for j := range spec.NumFixed() {
		if math.Abs(dl.Fixed.At(0, j)-ext.Fixed.At(10, j)) > 1e-12 {
			t.Errorf("column %d of the later panel's first week: %v, want %v", j, dl.Fixed.At(0, j), ext.Fixed.At(10, j))
		}
	}
	if _, err := NewDesignScaled(sim.Panel, spec, Scale{Origin: sc.Origin, Weeks: n, MeanSpend: make([]float64, 4)}); err == nil {
		t.Error("zero mean spend accepted")
	}
}
