package model

import (
	"bytes"
	"errors"
	"math"
	"reflect"
	"strconv"
	"strings"
	"testing"
	"time"
)

var fuzzCols = Columns{KPI: "y", Channels: []string{"a", "b"}, Controls: []string{"z"}}

// FuzzReadPanel feeds arbitrary bytes to ReadPanel (seeds in
// testdata/fuzz/FuzzReadPanel). It must never panic; a refusal must be a
// located *DataError; an accepted panel must hold every invariant Panel
// promises and read back identically after being written out again.
func FuzzReadPanel(f *testing.F) {
	f.Fuzz(func(t *testing.T, data []byte) {
		p, err := ReadPanel(bytes.NewReader(data), "f.csv", fuzzCols)
		if err != nil {
			var de *DataError
			switch {
			case !errors.As(err, &de):
				t.Fatalf("error %T %v, want *DataError", err, err)
			case p != nil:
				t.Fatal("panel returned with an error")
			case de.File != "f.csv" || de.Msg == "" || !strings.HasPrefix(err.Error(), "f.csv"):
				t.Fatalf("error does not name the file: %q", err)
			case de.Line < 0 || de.Column < 0 || de.Line == 0 && de.Column != 0:
				t.Fatalf("bad position %d:%d", de.Line, de.Column)
			}
			return
		}
		checkPanel(t, p, fuzzCols)
		q, err := ReadPanel(bytes.NewReader(writePanel(p)), "f.csv", fuzzCols)
		if err != nil {
			t.Fatalf("written panel refused: %v\n%s", err, writePanel(p))
		}
		p.DateName, q.DateName = "", "" // the writer names the date column "week"
		if !reflect.DeepEqual(p, q) {
			t.Fatalf("round trip changed the panel:\n%+v\n%+v", p, q)
		}
	})
}

// checkPanel asserts the invariants of an accepted panel.
func checkPanel(t *testing.T, p *Panel, cols Columns) {
	t.Helper()
	n := len(p.Weeks)
	if n == 0 || len(p.KPI) != n {
		t.Fatalf("%d weeks, %d kpi values", n, len(p.KPI))
	}
	if p.KPIName != cols.KPI || !reflect.DeepEqual(p.Channels, cols.Channels) || len(p.Spend) != len(cols.Channels) {
		t.Fatalf("columns %q %q, %d spend series", p.KPIName, p.Channels, len(p.Spend))
	}
	if !reflect.DeepEqual(p.Controls, cols.Controls) || len(p.Control) != len(cols.Controls) {
		t.Fatalf("controls %q, %d series", p.Controls, len(p.Control))
	}
	nonNegative := func(what string, x []float64) {
		t.Helper()
		if len(x) != n {
			t.Fatalf("%s: %d values for %d weeks", what, len(x), n)
		}
		nonzero := false
		for i, v := range x {
			if math.IsNaN(v) || math.IsInf(v, 0) || v < 0 || math.Signbit(v) {
				t.Fatalf("%s week %d: %v", what, i, v)
			}
			nonzero = nonzero || v != 0
		}
		if !nonzero {
			t.Fatalf("%s is zero in every week", what)
		}
	}
	nonNegative("kpi", p.KPI)
	for k, x := range p.Spend {
		nonNegative(p.Channels[k], x)
	}
	for j, z := range p.Control {
		if len(z) != n {
			t.Fatalf("control %s: %d values for %d weeks", p.Controls[j], len(z), n)
		}
		for i, v := range z {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("control %s week %d: %v", p.Controls[j], i, v)
			}
		}
	}
	for i, w := range p.Weeks {
		if w.Location() != time.UTC || w.Truncate(24*time.Hour) != w {
			t.Fatalf("week %d: %v is not midnight UTC", i, w)
		}
		if i > 0 && w.Sub(p.Weeks[i-1]) != 7*24*time.Hour {
			t.Fatalf("week %d: %v is not 7 days after %v", i, w, p.Weeks[i-1])
		}
	}
}

// writePanel writes p as CSV the way ReadPanel reads it, shortest
// round-tripping numbers.
func writePanel(p *Panel) []byte {
	var b bytes.Buffer
	b.WriteString("week," + p.KPIName)
	for _, c := range p.Channels {
		b.WriteString("," + c)
	}
	for _, c := range p.Controls {
		b.WriteString("," + c)
	}
	b.WriteByte('\n')
	num := func(v float64) { b.WriteString("," + strconv.FormatFloat(v, 'g', -1, 64)) }
	for i, w := range p.Weeks {
		b.WriteString(w.Format("2006-01-02"))
		num(p.KPI[i])
		for _, x := range p.Spend {
			num(x[i])
		}
		for _, z := range p.Control {
			num(z[i])
		}
		b.WriteByte('\n')
	}
	return b.Bytes()
}
